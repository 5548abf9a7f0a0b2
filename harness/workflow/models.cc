#include "harness/workflow/models.h"

#include <fmt/core.h>

#include <cstdio>

#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "storage/staged_file.h"

namespace unseen {

using json = nlohmann::json;

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

Result<json> LoadModel(const Ledger& ledger, const std::string& name, ModelSummary* summary) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<ModelSummary> models, ListModels(ledger));
  std::string known;
  for (const ModelSummary& m : models) {
    if (m.name == name) {
      if (summary) *summary = m;
      return LoadModelByDigest(ledger, m.digest);
    }
    known += (known.empty() ? "" : ", ") + m.name;
  }
  return Status::NotFound("--model: no frozen model named '" + name +
                          "' (models: " + (known.empty() ? std::string("none yet") : known) + ")");
}

Result<json> LoadModelByDigest(const Ledger& ledger, const Digest256& digest) {
  UNSEEN_ASSIGN_OR_RETURN(std::string text, ledger.GetBlob(digest));
  json model = json::parse(text, nullptr, /*allow_exceptions=*/false);
  if (!model.is_object()) {
    return Status::Corruption("model blob " + ToHex(digest) + " is not a JSON object");
  }
  return model;
}

namespace {

// Writes predictions as CSV; returns the file's SHA-256.
Result<Digest256> WritePredictions(const std::string& path, const LoadedData& d,
                                   const Predictions& p, const json& model) {
  std::vector<std::string> classes =
      model.at("target").at("classes").get<std::vector<std::string>>();
  UNSEEN_ASSIGN_OR_RETURN(LearnTask task, FrozenModel::TaskOf(model));
  bool classification = task == LearnTask::kClassification;
  std::string text = "id,prediction";
  if (classification && p.proba.size() > 0) {
    for (const std::string& c : classes) text += ",p_" + c;
  }
  text += "\n";
  for (size_t i = 0; i < d.rows(); ++i) {
    auto r = static_cast<Eigen::Index>(i);
    text += d.IdOf(i) + ",";
    text +=
        classification ? classes[static_cast<size_t>(p.value(r))] : fmt::format("{}", p.value(r));
    if (classification && p.proba.size() > 0) {
      for (Eigen::Index c = 0; c < p.proba.cols(); ++c) text += fmt::format(",{}", p.proba(r, c));
    }
    text += "\n";
  }
  StagedFile out(path, "--out");
  UNSEEN_RETURN_IF_ERROR(out.Open());
  UNSEEN_RETURN_IF_ERROR(out.Write(text));
  Digest256 digest{};
  UNSEEN_RETURN_IF_ERROR(out.Close(&digest));
  UNSEEN_RETURN_IF_ERROR(out.MoveIntoPlace());
  return digest;
}

}  // namespace

Result<FrozenModel> LoadFrozenModel(const Ledger& ledger, const json& model) {
  return FrozenModel::FromJson(
      model, [&ledger](const Digest256& digest) { return LoadModelByDigest(ledger, digest); });
}

Result<Predictions> ApplyFrozenModel(const Ledger& ledger, const json& model, const Frame& x) {
  UNSEEN_ASSIGN_OR_RETURN(FrozenModel loaded, LoadFrozenModel(ledger, model));
  return loaded.Predict(x);
}

Result<PredictReport> PredictWithModel(const PredictRequest& req) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  ModelSummary summary;
  UNSEEN_ASSIGN_OR_RETURN(json model, LoadModel(*ledger, req.model, &summary));
  DataRefusal refusal;
  auto loaded = LoadData(*ledger, st, req.data_path, DataPurpose::kNewRows, &refusal);
  if (!loaded.ok()) {
    if (!loaded.status().IsRefused()) return loaded.status();
    ledger->Rollback();
    json details = {{"data", req.data_path},
                    {"holdout_rows", refusal.holdout_rows},
                    {"first_lines", refusal.first_lines},
                    {"model", req.model}};
    UNSEEN_RETURN_IF_ERROR(
        RecordRefusal(req.ledger_path, req.actor, "predict", loaded.status(), details.dump()));
    return loaded.status();
  }
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, ApplyFrozenModel(*ledger, model, loaded->features));
  PredictReport report;
  report.rows = loaded->ids.size();
  UNSEEN_ASSIGN_OR_RETURN(report.out_sha256, WritePredictions(req.out_path, *loaded, p, model));
  ApplyBody body;
  body.model = req.model;
  body.model_digest = summary.digest;
  body.data = {req.data_path, loaded->file_sha256};
  body.rows = report.rows;
  body.output = {req.out_path, report.out_sha256};
  body.parents = {summary.fit_entry};
  body.summary = "applied " + req.model + " to " + std::to_string(report.rows) + " rows";
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), req.actor, body));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
