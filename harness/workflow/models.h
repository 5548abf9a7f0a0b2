// Frozen models: listing them from the ledger, loading one, and applying it
// to data (the `models` and `predict` commands). Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_MODELS_H_
#define UNSEEN_HARNESS_WORKFLOW_MODELS_H_

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/metrics.h"
#include "harness/pipeline/frame.h"
#include "harness/pipeline/frozen_model.h"
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
  // Scored on the holdout under --accept-contamination: marked for good.
  bool contaminated = false;
  uint64_t holdout_answers = 0;  // eval answers given for this model (repeats included)
};

Result<std::vector<ModelSummary>> ListModels(const Ledger& ledger);
// The frozen model's canonical JSON, checked against its digest. NotFound
// naming the known models if there is none of that name; Corruption if its
// blob is not a JSON object.
Result<nlohmann::json> LoadModel(const Ledger& ledger, const std::string& name, ModelSummary* summary);

// The frozen model stored under `digest` (its blob, checked against the
// digest). NotFound if the ledger has no such blob; Corruption if it is not
// a JSON object.
Result<nlohmann::json> LoadModelByDigest(const Ledger& ledger, const Digest256& digest);

// A frozen model (as LoadModel returns it) made ready to apply
// (harness/pipeline/frozen_model.h): a blend's members are read from
// `ledger` by the digests it recorded, recursively. Corruption if the model
// or a member is malformed or missing.
Result<FrozenModel> LoadFrozenModel(const Ledger& ledger, const nlohmann::json& model);

// Applies a frozen model to the rows of `x`: LoadFrozenModel, then
// FrozenModel::Predict. This is the one way a frozen model becomes
// predictions (predict and blends use it; holdout evaluation should too):
// an ordinary pipeline predicts through FittedPipeline, a blend combines its
// members' scores. InvalidArgument if `x` lacks a column the model needs;
// Corruption as LoadFrozenModel.
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
