// The `fit` command as named steps (workflow/fit_steps.h): open the run,
// check the spec, load the rows, choose among the candidates
// (fit_select.cc), freeze the chosen one and record its entries. A blend
// spec takes its own steps (blend_fit.cc); the steps both share are here.
#include "harness/workflow/fit.h"

#include <cctype>
#include <fstream>
#include <sstream>

#include "harness/pipeline/blend.h"
#include "harness/pipeline/pipeline.h"
#include "harness/workflow/fit_steps.h"

namespace unseen {

namespace internal {

using json = nlohmann::json;

namespace {

Status NameIsFree(const Ledger& ledger, const std::string& name) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<FitBody>> fits, ReadEntries<FitBody>(ledger));
  for (const Decoded<FitBody>& f : fits) {
    if (f.body.model == name) {
      return Status::InvalidArgument("--name: a model named '" + name + "' already exists (entry " +
                                     std::to_string(f.entry.seq) +
                                     "); frozen models are never replaced");
    }
  }
  return Status::OK();
}

// The spec file's bytes, stored as the fit's `spec` blob.
Result<std::string> ReadSpecBytes(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) return Status::NotFound(path + ": cannot read the spec file");
  std::ostringstream ss;
  ss << f.rdbuf();
  return ss.str();
}

// Drops the rows of the data that lie in the partition named by
// --exclude; fills the report's excluded fields.
Status ExcludePartition(const NamedPartition& p, AdmittedData* d, FitReport* report) {
  std::vector<size_t> keep;
  for (size_t i = 0; i < d->source_rows.size(); ++i) {
    if (!p.rows.Contains(d->source_rows[i])) keep.push_back(i);
  }
  report->excluded = p.name;
  report->excluded_rows = d->source_rows.size() - keep.size();
  if (keep.empty()) {
    return Status::InvalidArgument("--exclude: every row of " + d->path + " lies in partition '" +
                                   p.name + "'; nothing is left to fit on");
  }
  *d = SelectRows(*d, keep);
  return Status::OK();
}

// The spec against the source's feature columns, the task, and the metric
// candidates are compared by ([select] metric, else the task's default).
Status CheckPipelineSpec(FitRun* run) {
  const PipelineSpec& spec = run->spec;
  std::vector<std::string> features;
  for (const ColumnInfo& c : run->st.source.columns) {
    if (c.role == ColumnRole::kFeature) features.push_back(c.name);
  }
  UNSEEN_RETURN_IF_ERROR(ValidateSpec(spec, features));
  const SourceInfo& src = run->st.source;
  if (src.task == TaskKind::kClassification) {
    run->task = LearnTask::kClassification;
    run->classes = static_cast<int>(src.target.classes.size());
  } else {
    run->task = LearnTask::kRegression;
    run->classes = 0;
  }
  run->metric = DefaultMetric(run->task);
  if (spec.select && !spec.select->metric.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(run->metric, ParseMetric(spec.select->metric));
  }
  Status metric_ok = CheckMetric(run->metric, run->task, run->classes);
  if (!metric_ok.ok()) {
    return Status::InvalidArgument(spec.path + ":" +
                                   std::to_string(spec.select ? spec.select->line : 1) + ": " +
                                   metric_ok.message());
  }
  return Status::OK();
}

// The data, matched against the sealed holdout before any use, less the
// rows of an excluded partition; the fit's parents so far are the seal and
// that partition.
Status LoadPipelineData(FitRun* run) {
  const FitRequest& req = *run->req;
  if (!req.exclude.empty()) {
    Result<NamedPartition> p = FindPartition(*run->ledger, req.exclude);
    if (!p.ok()) return Status::NotFound("--exclude: " + p.status().message());
    run->excluded = std::move(*p);
  }
  UNSEEN_ASSIGN_OR_RETURN(run->data, AdmitFitData(run));
  if (run->excluded) {
    UNSEEN_RETURN_IF_ERROR(ExcludePartition(*run->excluded, &run->data, &run->report));
  }
  run->parents = {run->st.seal->entry_seq};
  if (run->excluded) run->parents.push_back(run->excluded->entry_seq);
  return Status::OK();
}

// The chosen candidate, refitted on every row read, frozen and stored.
Result<FitBlobs> FreezeChosen(FitRun* run) {
  const Candidate& chosen = run->candidates[run->report.chosen];
  UNSEEN_ASSIGN_OR_RETURN(
      FittedPipeline final_fit,
      FitPipeline(chosen, run->data.features, run->data.target, run->task, run->classes));
  json model = FrozenModelHeader(run->st, run->req->name);
  model["settings"] = chosen.settings;
  model["pipeline"] = final_fit.ToJson();
  return PutFitBlobs(run, model);
}

// The pipeline's `fit` entry, then the commit.
Status RecordPipelineFit(FitRun* run, const FitBlobs& blobs) {
  const Candidate& chosen = run->candidates[run->report.chosen];
  const std::string& name = run->req->name;
  const size_t compared = run->candidates.size();
  FitBody fit = FitEntryBody(*run, blobs);
  fit.parents = run->parents;
  fit.candidates_compared = compared;
  fit.settings = chosen.settings;
  fit.learner = chosen.learner.kind;
  fit.summary = "froze " + name + " (" + chosen.learner.kind + ", " +
                std::to_string(run->report.rows) + " rows, chosen from " +
                std::to_string(compared) + ")";
  std::vector<BlobRef> fit_blobs = {blobs.model, blobs.spec, blobs.rows_read};
  if (run->excluded) {
    const NamedPartition& ex = *run->excluded;
    fit.excluded = FitBody::Excluded{ex.name, ex.entry_seq, ex.row_set, run->report.excluded_rows};
    // Already stored by the partition entry (a no-op here); named as a blob this entry relies on.
    UNSEEN_ASSIGN_OR_RETURN(BlobRef ex_ref, run->ledger->PutBlob("row-set", ex.rows.Serialize()));
    fit_blobs.push_back(ex_ref);
  }
  return RecordFit(run, fit, fit_blobs);
}

}  // namespace

Result<std::unique_ptr<FitRun>> OpenFit(const FitRequest& req) {
  UNSEEN_RETURN_IF_ERROR(CheckModelName(req.name));
  auto run = std::make_unique<FitRun>();
  run->req = &req;
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  run->ledger = std::move(opened.ledger);
  run->st = std::move(opened.state);
  UNSEEN_RETURN_IF_ERROR(NameIsFree(*run->ledger, req.name));
  UNSEEN_ASSIGN_OR_RETURN(run->spec, ParseSpecFile(req.spec_path));
  return run;
}

Status RefuseFit(FitRun* run, const Status& reason, const json& details) {
  const FitRequest& req = *run->req;
  run->ledger->Rollback();
  UNSEEN_RETURN_IF_ERROR(RecordRefusal(req.ledger_path, req.actor, "fit", reason, details.dump()));
  return reason;
}

Result<AdmittedData> AdmitFitData(FitRun* run) {
  const FitRequest& req = *run->req;
  run->data_path = req.data_path.empty() ? run->st.seal->dev_out_path : req.data_path;
  DataRefusal refusal;
  auto loaded = AdmitData(*run->ledger, run->st, run->data_path, DataPurpose::kDevRows, &refusal);
  if (loaded.ok() || !loaded.status().IsRefused()) return loaded;
  // Without the key a row is a development row or not: whether a refused row is a holdout
  // row is not known here, and must not be (docs/row-digests.md).
  json details = {{"data", run->data_path},
                  {"not_dev_rows", refusal.not_dev_rows},
                  {"first_lines", refusal.first_lines},
                  {"model", req.name}};
  return RefuseFit(run, loaded.status(), details);
}

json FrozenModelHeader(const LedgerState& st, const std::string& name) {
  return {{"format", 1},
          {"name", name},
          {"ledger_id", st.ledger_id},
          {"source_sha256", ToHex(st.source.file_sha256)},
          {"target",
           {{"column", st.source.columns[*st.source.ColumnOf(ColumnRole::kTarget)].name},
            {"classes", ClassLabels(st.source)}}}};
}

Result<FitBlobs> PutFitBlobs(FitRun* run, const json& model) {
  Ledger* ledger = run->ledger.get();
  FitBlobs b;
  UNSEEN_ASSIGN_OR_RETURN(std::string model_text, CanonicalJson(model.dump()));
  UNSEEN_ASSIGN_OR_RETURN(b.model, ledger->PutBlob("model", model_text));
  UNSEEN_ASSIGN_OR_RETURN(std::string spec_text, ReadSpecBytes(run->req->spec_path));
  UNSEEN_ASSIGN_OR_RETURN(b.spec, ledger->PutBlob("spec", spec_text));
  UNSEEN_ASSIGN_OR_RETURN(b.rows_read, ledger->PutBlob("row-set", run->data.rows_read.Serialize()));
  run->report.model_digest = b.model.digest;
  return b;
}

FitBody FitEntryBody(const FitRun& run, const FitBlobs& blobs) {
  FitBody fit;
  fit.model = run.req->name;
  fit.model_digest = blobs.model.digest;
  fit.spec = blobs.spec.digest;
  fit.data = {run.data_path, run.data.file_sha256};
  fit.rows_read = blobs.rows_read.digest;
  fit.rows = run.report.rows;
  return fit;
}

Status RecordFit(FitRun* run, const FitBody& fit, const std::vector<BlobRef>& blobs) {
  UNSEEN_ASSIGN_OR_RETURN(Entry fe, AppendEntry(run->ledger.get(), run->req->actor, fit, blobs));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Commit());
  run->report.head = fe.hash;
  return Status::OK();
}

}  // namespace internal

Status CheckModelName(const std::string& name) {
  bool ok = !name.empty() && name.size() <= 64 && std::isalnum(static_cast<unsigned char>(name[0]));
  for (char ch : name) {
    ok =
        ok && (std::isalnum(static_cast<unsigned char>(ch)) || ch == '.' || ch == '_' || ch == '-');
  }
  if (ok) return Status::OK();
  return Status::InvalidArgument("--name: '" + name +
                                 "' is not a model name; expected 1-64 of "
                                 "A-Z a-z 0-9 . _ -, starting with a letter or digit");
}

Result<FitReport> FitModel(const FitRequest& req) {
  using namespace internal;
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<FitRun> run, OpenFit(req));
  if (run->spec.learner.kind == kBlendKind) {
    UNSEEN_RETURN_IF_ERROR(FitBlend(run.get()));
    return std::move(run->report);
  }
  // 1. The spec, checked against the source's feature columns.
  UNSEEN_RETURN_IF_ERROR(CheckPipelineSpec(run.get()));
  // 2. The data, matched against the sealed holdout before any use, less
  // the rows of an excluded partition.
  UNSEEN_RETURN_IF_ERROR(LoadPipelineData(run.get()));
  // 3. Selection among the candidates.
  UNSEEN_RETURN_IF_ERROR(SelectCandidate(run.get()));
  // 4. The chosen candidate, refitted on every row read, frozen; then the
  // select entry (if candidates were compared) and the fit entry.
  UNSEEN_ASSIGN_OR_RETURN(FitBlobs blobs, FreezeChosen(run.get()));
  UNSEEN_RETURN_IF_ERROR(RecordSelection(run.get(), blobs));
  UNSEEN_RETURN_IF_ERROR(RecordPipelineFit(run.get(), blobs));
  return std::move(run->report);
}

}  // namespace unseen
