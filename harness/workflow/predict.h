// PredictWithModel: the `predict` command. Applies a frozen model to rows
// brought in (never holdout rows) and writes its predictions, logged as an
// `apply` entry. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_PREDICT_H_
#define UNSEEN_HARNESS_WORKFLOW_PREDICT_H_

#include <cstdint>
#include <string>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct PredictRequest {
  std::string ledger_path, model, data_path, out_path, actor;
};
struct PredictReport {
  uint64_t rows = 0;
  Digest256 out_sha256{};
  Digest256 head{};
};
// Applies a frozen model to `data_path` (checked against the holdout's
// digests; holdout rows are refused with a `refusal` entry) and writes
// `id,prediction[,p_CLASS...]`, then appends an `apply` entry.
Result<PredictReport> PredictWithModel(const PredictRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_PREDICT_H_
