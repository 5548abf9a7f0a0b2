#include "harness/workflow/predict.h"

#include <fmt/core.h>

#include <memory>
#include <nlohmann/json.hpp>

#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "harness/ledger/models.h"
#include "storage/staged_file.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// Writes predictions as CSV to a staged file, closed and hashed; it moves
// into place only after the command's transaction has committed.
Result<std::unique_ptr<StagedFile>> WritePredictions(const std::string& path, const AdmittedData& d,
                                                     const Predictions& p, const json& model,
                                                     Digest256* sha256) {
  // Built from this JSON already, so these keys exist; checked anyway, as the blob is the ledger's.
  const auto target = model.find("target");
  if (target == model.end() || !target->is_object() || !target->contains("classes") ||
      !(*target)["classes"].is_array()) {
    return Status::Corruption("model blob: no target classes");
  }
  std::vector<std::string> classes;
  for (const json& c : (*target)["classes"]) {
    if (!c.is_string()) return Status::Corruption("model blob: a target class is not text");
    classes.push_back(c.get<std::string>());
  }
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
  auto out = std::make_unique<StagedFile>(path, "--out");
  UNSEEN_RETURN_IF_ERROR(out->Open());
  UNSEEN_RETURN_IF_ERROR(out->Write(text));
  UNSEEN_RETURN_IF_ERROR(out->Close(sha256));
  return out;
}

}  // namespace

Result<PredictReport> PredictWithModel(const PredictRequest& req) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  UNSEEN_ASSIGN_OR_RETURN(StoredModel model, FindModel(*ledger, req.model));
  const ModelSummary& summary = model.summary;
  DataRefusal refusal;
  auto loaded = AdmitData(*ledger, st, req.data_path, DataPurpose::kNewRows, &refusal);
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
  UNSEEN_ASSIGN_OR_RETURN(std::shared_ptr<FrozenModel> frozen, BuildModel(*ledger, model.json));
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, frozen->Predict(loaded->features));
  PredictReport report;
  report.rows = loaded->rows();
  UNSEEN_ASSIGN_OR_RETURN(
      std::unique_ptr<StagedFile> out,
      WritePredictions(req.out_path, *loaded, p, model.json, &report.out_sha256));
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
  UNSEEN_RETURN_IF_ERROR(out->MoveIntoPlace());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
