// Recording a failure on the holdout. A command that applied a model to the
// holdout, or sent its features to an external predictor, and then failed
// rolls its own transaction back; what was exposed is still written, as an
// `exposure` entry in a transaction of its own, so that the ledger never
// stays silent about a run that saw holdout rows. Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_EXPOSURE_H_
#define UNSEEN_HARNESS_LEDGER_EXPOSURE_H_

#include <string>

#include "harness/ledger/entries.h"
#include "storage/status.h"

namespace unseen {

// Appends `body` (its summary filled in here) in its own transaction on
// the ledger at `ledger_path`. Returns the new entry's seq; the ledger's
// errors otherwise. REQUIRES: no transaction of this process is open on it.
Result<int64_t> RecordExposure(const std::string& ledger_path, const std::string& actor,
                               ExposureBody body);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_EXPOSURE_H_
