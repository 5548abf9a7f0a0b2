// Frozen models as the ledger holds them: listed from the `fit` entries (and
// the holdout answers given for them), and loaded by name, ready to apply.
// FindModel and BuildModel (LoadModel is both) are the one way code above the
// ledger gets a frozen model: eval, predict, blends and `models --show` all
// use them. Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_MODELS_H_
#define UNSEEN_HARNESS_LEDGER_MODELS_H_

#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/frozen_model.h"
#include "storage/digest.h"
#include "storage/ledger.h"
#include "storage/status.h"

namespace unseen {

// What the ledger says about one frozen model.
struct ModelSummary {
  std::string name;
  Digest256 digest{};  // of the model blob
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

// Every frozen model, in the order of their fit entries. Corruption naming
// the entry for a malformed fit or eval body.
Result<std::vector<ModelSummary>> ListModels(const Ledger& ledger);

// A frozen model as stored: its summary and its JSON, not yet built.
struct StoredModel {
  ModelSummary summary;
  nlohmann::json json;  // the model blob, checked against its digest
};

// A frozen model, loaded whole.
struct LoadedModel {
  ModelSummary summary;
  nlohmann::json json;                 // the model blob, checked against its digest
  std::shared_ptr<FrozenModel> model;  // ready to apply; a blend's members read from the ledger
};

// The frozen model named `name`, as stored. NotFound ("--model: no frozen
// model named ...", listing the known models) if there is none; NotFound or
// Corruption if its blob is missing or not a JSON object.
Result<StoredModel> FindModel(const Ledger& ledger, const std::string& name);

// A stored model made ready to apply: a blend's members are read from the
// ledger by the digests it recorded, recursively. Corruption or
// InvalidArgument (as FrozenModel::FromJson) if it or a member is malformed,
// NotFound if a member's blob is missing.
Result<std::shared_ptr<FrozenModel>> BuildModel(const Ledger& ledger, const nlohmann::json& model);

// FindModel, then BuildModel: the model whole. Commands that must check
// something between the two (lineage, the data brought in) call them in turn.
Result<LoadedModel> LoadModel(const Ledger& ledger, const std::string& name);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_MODELS_H_
