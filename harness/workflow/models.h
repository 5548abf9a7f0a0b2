// Frozen models: listing them from the ledger, loading one, and applying it
// to data (the `models` and `predict` commands). Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_MODELS_H_
#define UNSEEN_HARNESS_WORKFLOW_MODELS_H_

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/evaluate/metrics.h"
#include "harness/pipeline/frame.h"
#include "harness/pipeline/learner.h"
#include "storage/digest.h"
#include "storage/ledger.h"
#include "storage/status.h"

namespace unseen {

struct ModelSummary {
  std::string name;
  Digest256 digest{};
  int64_t fit_entry = 0;
  std::string learner;
  uint64_t rows = 0;
  uint64_t candidates = 0;
  std::vector<int64_t> parents;
  bool tainted = false;
};

Result<std::vector<ModelSummary>> ListModels(const Ledger& ledger);
// The frozen model's canonical JSON, checked against its digest. NotFound
// naming the known models if there is none of that name.
Result<nlohmann::json> LoadModel(const Ledger& ledger, const std::string& name, ModelSummary* summary);

// The frozen model stored under `digest` (its blob, checked against the
// digest). NotFound if the ledger has no such blob; Corruption if it is not
// a JSON object.
Result<nlohmann::json> LoadModelByDigest(const Ledger& ledger, const Digest256& digest);

// The task of a frozen model: an ordinary pipeline's, or a blend's.
// Corruption if the model JSON has neither.
Result<LearnTask> FrozenModelTask(const nlohmann::json& model);

// Applies a frozen model (as LoadModel returns it) to the rows of `x`, which
// must hold the input columns the model was fitted on (by name; extra
// columns are ignored). An ordinary pipeline predicts through
// FittedPipeline; a blend loads each member from `ledger` by the digest it
// recorded, applies it the same way (members may be blends themselves) and
// combines the members' scores with its weights (harness/pipeline/blend.h).
// This is the one place that turns a frozen model into predictions: predict,
// blends and holdout evaluation all go through it. InvalidArgument if `x`
// lacks a column the model needs; Corruption if the model or a member is
// malformed, missing or nested more than 16 blends deep.
Result<Predictions> ApplyFrozenModel(const Ledger& ledger, const nlohmann::json& model,
                                     const Frame& x);

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

#endif  // UNSEEN_HARNESS_WORKFLOW_MODELS_H_
