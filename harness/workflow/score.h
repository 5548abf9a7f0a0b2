// ScorePredictions: the `score` command. Scores predictions made outside
// the tool on exported development rows and records a `score` entry.
// Predictions for rows never exported, unknown ids, or holdout rows are
// refused (holdout rows with a `refusal` entry). Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_SCORE_H_
#define UNSEEN_HARNESS_WORKFLOW_SCORE_H_

#include <string>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct ScoreRequest {
  std::string ledger_path, predictions_path, name, metric, actor;
};

struct ScoreReport {
  uint64_t rows = 0;
  std::string metric;
  double value = 0;
  Digest256 head{};
};

// The predictions file has a header with `id` and `prediction` columns, and
// optionally `p_LABEL` probability columns; ids are the source's id values
// (or `unseen_row` numbers when the source has no id column).
Result<ScoreReport> ScorePredictions(const ScoreRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_SCORE_H_
