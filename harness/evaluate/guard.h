// The evaluation guard: the only object that ever holds decrypted holdout
// rows. It opens the sealed holdout in memory (never on disk), checks every
// row against the digests committed at seal time, and answers questions
// about models only with metric samples: neither rows nor predictions leave
// it. Thread-compatible; its methods are const and may be called in turn.
#ifndef UNSEEN_HARNESS_EVALUATE_GUARD_H_
#define UNSEEN_HARNESS_EVALUATE_GUARD_H_

#include <Eigen/Dense>
#include <chrono>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/bounds/metric_bound.h"
#include "harness/evaluate/confine.h"
#include "harness/pipeline/frame.h"
#include "harness/pipeline/frozen_model.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"

namespace unseen {

// A predictor outside the tool: a command run through /bin/sh -c that reads
// the holdout's feature columns as CSV on stdin (first column `unseen_token`,
// opaque tokens, rows shuffled; no target, no id) and writes
// `token,prediction` lines (a header line is allowed) on stdout. It runs
// confined (confine.h): a private directory, no network, and, where the
// kernel allows, no file outside the system directories, its attached files
// and the files its command names.
struct ExternalPredictor {
  std::string name;
  std::string command;
  std::vector<std::string> attached;  // readable by the predictor
  std::vector<std::string> keep_out;  // never readable: the key file (the guard adds the
                                      // ledger, its journals and the source)
  std::chrono::milliseconds timeout{60000};
  uint64_t shuffle_seed = 0;  // fresh per run, from the ledger's random source
};

// What a run of an external predictor did, whether or not it answered.
struct ExternalRun {
  std::vector<Protection> protections;  // empty: it was never started
  uint64_t rows_sent = 0;  // holdout rows whose features it received (all of them, or none)
};

class HoldoutGuard {
 public:
  // Decrypts and checks the sealed holdout of `state` with `key` (already
  // checked against the seal's key check value). Corruption when the blob
  // fails authentication with the right key or a row differs from its row
  // digest; FailedPrecondition before seal.
  static Result<std::unique_ptr<HoldoutGuard>> Open(const Ledger& ledger, const LedgerState& state,
                                                    const Key& key);

  uint64_t rows() const { return static_cast<uint64_t>(target_.size()); }

  // Applies a frozen model (a pipeline or a blend, loaded beforehand so
  // that the guard never reads the ledger while it holds rows) to the
  // holdout and reduces its predictions to `metric`'s sample.
  // InvalidArgument when the model cannot be applied (a missing column, an
  // unknown category, a missing value), predicts a value that is not finite,
  // or the metric does not fit its predictions. Every error message is
  // value-free: it names a source column when one is known and the kind of
  // problem, never a cell value, a prediction or a row number.
  Result<MetricSample> EvaluateModel(const FrozenModel& model, Metric metric,
                                     const RangeOptions& range) const;

  // Runs an external predictor, confined, on the holdout features and
  // samples its predictions; *run says what it received and which
  // protections held. InvalidArgument for a command that fails, times out,
  // or answers with a wrong row count, an unknown or repeated token, or a
  // prediction that is not a number / not a class; the message says which,
  // never echoing the predictor's output, stderr or exit status (each would
  // carry what it read).
  Result<MetricSample> EvaluateExternal(const ExternalPredictor& predictor, Metric metric,
                                        const RangeOptions& range, ExternalRun* run) const;

 private:
  HoldoutGuard() = default;
  std::string ledger_path_;
  std::vector<std::string> source_files_;
  SourceInfo source_;
  Frame features_;
  Eigen::VectorXd target_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_EVALUATE_GUARD_H_
