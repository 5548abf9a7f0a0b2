#include "harness/ledger/models.h"

#include "harness/ledger/entries.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// The model blob stored under `digest`, as a JSON object.
Result<json> ModelJson(const Ledger& ledger, const Digest256& digest) {
  UNSEEN_ASSIGN_OR_RETURN(std::string text, ledger.GetBlob(digest));
  json model = json::parse(text, nullptr, /*allow_exceptions=*/false);
  if (!model.is_object()) {
    return Status::Corruption("model blob " + ToHex(digest) + " is not a JSON object");
  }
  return model;
}

}  // namespace

Result<std::vector<ModelSummary>> ListModels(const Ledger& ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<FitBody>> fits, ReadEntries<FitBody>(ledger));
  std::vector<ModelSummary> out;
  for (Decoded<FitBody>& f : fits) {
    ModelSummary m;
    m.name = std::move(f.body.model);
    m.digest = f.body.model_digest;
    m.fit_entry = f.entry.seq;
    m.learner = std::move(f.body.learner);
    m.rows = f.body.rows;
    m.candidates = f.body.candidates_compared;
    m.parents = std::move(f.body.parents);
    m.tainted = f.body.tainted;
    out.push_back(std::move(m));
  }
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<EvalBody>> evals, ReadEntries<EvalBody>(ledger));
  for (const Decoded<EvalBody>& e : evals) {
    for (const EvalAnswerRecord& a : e.body.answers) {
      for (ModelSummary& m : out) {
        if (a.model_digest != m.digest) continue;
        ++m.holdout_answers;
        if (a.contaminated) m.contaminated = true;
      }
    }
  }
  return out;
}

Result<StoredModel> FindModel(const Ledger& ledger, const std::string& name) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<ModelSummary> models, ListModels(ledger));
  std::string known;
  for (ModelSummary& m : models) {
    if (m.name != name) {
      known += (known.empty() ? "" : ", ") + m.name;
      continue;
    }
    StoredModel out;
    out.summary = std::move(m);
    UNSEEN_ASSIGN_OR_RETURN(out.json, ModelJson(ledger, out.summary.digest));
    return out;
  }
  return Status::NotFound("--model: no frozen model named '" + name +
                          "' (models: " + (known.empty() ? std::string("none yet") : known) + ")");
}

Result<std::shared_ptr<FrozenModel>> BuildModel(const Ledger& ledger, const json& model) {
  auto members = [&ledger](const Digest256& digest) { return ModelJson(ledger, digest); };
  UNSEEN_ASSIGN_OR_RETURN(FrozenModel frozen, FrozenModel::FromJson(model, members));
  return std::make_shared<FrozenModel>(std::move(frozen));
}

Result<LoadedModel> LoadModel(const Ledger& ledger, const std::string& name) {
  UNSEEN_ASSIGN_OR_RETURN(StoredModel stored, FindModel(ledger, name));
  LoadedModel out;
  UNSEEN_ASSIGN_OR_RETURN(out.model, BuildModel(ledger, stored.json));
  out.summary = std::move(stored.summary);
  out.json = std::move(stored.json);
  return out;
}

}  // namespace unseen
