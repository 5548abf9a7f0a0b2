// Value-free errors: what the guard says when a model fails on the holdout.
// The pipeline's own messages are written for development rows and may
// quote a cell, a prediction or a row number; none of them leaves the
// guard. Instead the guard says which source column (when the message
// names one) and which kind of problem, from a fixed list. Thread-safe.
#ifndef UNSEEN_HARNESS_EVALUATE_GUARD_MESSAGES_H_
#define UNSEEN_HARNESS_EVALUATE_GUARD_MESSAGES_H_

#include "harness/data/source.h"
#include "storage/status.h"

namespace unseen {

// InvalidArgument("cannot be applied to the holdout: column 'C' KIND ...")
// built only from `source`'s column names and fixed words: nothing of
// `error`'s text is copied, so no value, prediction or row number is.
// Internal errors stay Internal, with the same value-free text.
Status ValueFreeError(const Status& error, const SourceInfo& source);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_EVALUATE_GUARD_MESSAGES_H_
