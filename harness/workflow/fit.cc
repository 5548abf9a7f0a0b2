#include "harness/workflow/fit.h"

#include <cmath>
#include <fstream>
#include <sstream>

#include "harness/sampling/folds.h"
#include "harness/pipeline/blend.h"
#include "harness/pipeline/pipeline.h"
#include "harness/pipeline/spec.h"
#include "harness/workflow/carve.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/workflow/fit_steps.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"

namespace unseen {

using json = nlohmann::json;

namespace {

constexpr int kDefaultFolds = 5;

struct Task {
  LearnTask task;
  int classes;
};

Task TaskOf(const SourceInfo& src) {
  if (src.task == TaskKind::kClassification) {
    return {LearnTask::kClassification, static_cast<int>(src.target.classes.size())};
  }
  return {LearnTask::kRegression, 0};
}

std::vector<size_t> RowsWhere(const std::vector<int>& fold, int f, bool equal) {
  std::vector<size_t> rows;
  for (size_t i = 0; i < fold.size(); ++i) {
    if ((fold[i] == f) == equal) rows.push_back(i);
  }
  return rows;
}

Eigen::VectorXd Pick(const Eigen::VectorXd& y, const std::vector<size_t>& rows) {
  Eigen::VectorXd out(static_cast<Eigen::Index>(rows.size()));
  for (size_t i = 0; i < rows.size(); ++i)
    out(static_cast<Eigen::Index>(i)) = y(static_cast<Eigen::Index>(rows[i]));
  return out;
}

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

// Scores every candidate; fills report->candidates and chosen.
Status Select(const std::vector<Candidate>& cands, const LoadedData& d,
              const std::vector<int>& fold, int k, Metric metric, const Task& t,
              FitReport* report) {
  double best = 0;
  for (size_t ci = 0; ci < cands.size(); ++ci) {
    CandidateScore cs;
    cs.settings = cands[ci].settings;
    for (int f = (k == 2 && report->selection == "validation") ? 1 : 0; f < k; ++f) {
      UNSEEN_ASSIGN_OR_RETURN(
          double s, internal::ScoreOnFold(cands[ci], d, fold, f, metric, t.task, t.classes));
      cs.fold_scores.push_back(s);
    }
    double sum = 0;
    for (double s : cs.fold_scores) sum += s;
    cs.mean = sum / static_cast<double>(cs.fold_scores.size());
    bool better = LowerIsBetter(metric) ? cs.mean < best : cs.mean > best;
    if (ci == 0 || better) {
      best = cs.mean;
      report->chosen = ci;
    }
    report->candidates.push_back(std::move(cs));
  }
  return Status::OK();
}

// A bound for the chosen candidate's validation score, over all candidates compared.
std::optional<Bound> ValidationBound(const FitReport& r, Metric metric, size_t validation_rows) {
  if (metric != Metric::kErrorRate && metric != Metric::kAccuracy) return std::nullopt;
  double mean = r.candidates[r.chosen].mean;
  BoundRequest b;
  b.method = BoundMethod::kClopperPearson;
  b.n = validation_rows;
  b.successes = static_cast<uint64_t>(std::llround(mean * static_cast<double>(validation_rows)));
  b.mean = static_cast<double>(*b.successes) / static_cast<double>(validation_rows);
  b.log_hypotheses = std::log(static_cast<double>(r.candidates.size()));
  auto bound = ComputeBound(b);
  if (!bound.ok()) return std::nullopt;
  return *bound;
}

json ScoresJson(const FitReport& r) {
  json c = json::array();
  for (const CandidateScore& s : r.candidates) {
    c.push_back({{"settings", s.settings}, {"fold_scores", s.fold_scores}, {"mean", s.mean}});
  }
  return c;
}

// Drops the rows of the data that lie in the partition named by
// --exclude; fills the report's excluded fields.
Status ExcludePartition(const NamedPartition& p, LoadedData* d, FitReport* report) {
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

}  // namespace

namespace internal {

Result<double> ScoreOnFold(const Candidate& c, const LoadedData& d, const std::vector<int>& fold,
                           int f, Metric metric, LearnTask task, int classes) {
  std::vector<size_t> train = RowsWhere(fold, f, false), test = RowsWhere(fold, f, true);
  UNSEEN_ASSIGN_OR_RETURN(FittedPipeline p, FitPipeline(c, d.features.Select(train),
                                                        Pick(d.target, train), task, classes));
  UNSEEN_ASSIGN_OR_RETURN(Predictions pred, p.Predict(d.features.Select(test)));
  return Score(metric, Pick(d.target, test), pred, classes);
}

std::vector<RowSet> FoldRowSets(const LoadedData& d, const std::vector<int>& fold, int k) {
  std::vector<std::vector<uint32_t>> rows(static_cast<size_t>(k));
  for (size_t i = 0; i < fold.size(); ++i)
    rows[static_cast<size_t>(fold[i])].push_back(d.source_rows[i]);
  std::vector<RowSet> sets;
  for (auto& r : rows) {
    std::sort(r.begin(), r.end());
    sets.push_back(RowSet::FromSorted(r));
  }
  return sets;
}

Result<std::string> ReadSpecBytes(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  if (!f) return Status::NotFound(path + ": cannot read the spec file");
  std::ostringstream ss;
  ss << f.rdbuf();
  return ss.str();
}

Status RefuseFit(const FitRequest& req, Ledger* ledger, const Status& reason, const json& details) {
  ledger->Rollback();
  UNSEEN_RETURN_IF_ERROR(RecordRefusal(req.ledger_path, req.actor, "fit", reason, details.dump()));
  return reason;
}

Result<LoadedData> LoadFitData(const FitRequest& req, const LedgerState& st, Ledger* ledger,
                               std::string* data) {
  *data = req.data_path.empty() ? st.seal->dev_out_path : req.data_path;
  DataRefusal refusal;
  auto loaded = LoadData(*ledger, st, *data, DataPurpose::kDevRows, &refusal);
  if (loaded.ok() || !loaded.status().IsRefused()) return loaded;
  json details = {{"data", *data},
                  {"holdout_rows", refusal.holdout_rows},
                  {"not_dev_rows", refusal.not_dev_rows},
                  {"first_lines", refusal.first_lines},
                  {"model", req.name}};
  return RefuseFit(req, ledger, loaded.status(), details);
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
  UNSEEN_RETURN_IF_ERROR(CheckModelName(req.name));
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  if (!st.seal)
    return Status::FailedPrecondition(req.ledger_path + ": seal the holdout first (`unseen seal`)");
  UNSEEN_RETURN_IF_ERROR(NameIsFree(*ledger, req.name));

  // 1. The spec, checked against the source's feature columns.
  UNSEEN_ASSIGN_OR_RETURN(PipelineSpec spec, ParseSpecFile(req.spec_path));
  if (spec.learner.kind == kBlendKind) return internal::FitBlend(req, st, spec, ledger.get());
  std::vector<std::string> features;
  for (const ColumnInfo& c : st.source.columns) {
    if (c.role == ColumnRole::kFeature) features.push_back(c.name);
  }
  UNSEEN_RETURN_IF_ERROR(ValidateSpec(spec, features));
  const Task t = TaskOf(st.source);
  Metric metric = DefaultMetric(t.task);
  if (spec.select && !spec.select->metric.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(metric, ParseMetric(spec.select->metric));
  }
  Status metric_ok = CheckMetric(metric, t.task, t.classes);
  if (!metric_ok.ok()) {
    return Status::InvalidArgument(spec.path + ":" +
                                   std::to_string(spec.select ? spec.select->line : 1) + ": " +
                                   metric_ok.message());
  }

  // 2. The data, matched against the sealed holdout before any use, less
  // the rows of an excluded partition.
  std::optional<NamedPartition> excluded;
  if (!req.exclude.empty()) {
    Result<NamedPartition> p = FindPartition(*ledger, req.exclude);
    if (!p.ok()) return Status::NotFound("--exclude: " + p.status().message());
    excluded = std::move(*p);
  }
  std::string data;
  UNSEEN_ASSIGN_OR_RETURN(LoadedData d, internal::LoadFitData(req, st, ledger.get(), &data));
  FitReport report;
  if (excluded) UNSEEN_RETURN_IF_ERROR(ExcludePartition(*excluded, &d, &report));

  // 3. Selection among the candidates.
  std::vector<Candidate> cands = ExpandGrid(spec);
  report.name = req.name;
  report.rows = d.lines.size();
  report.metric = MetricName(metric);
  report.selection = "none";
  std::vector<int> fold;
  int k = 0;
  uint64_t seed = spec.select ? spec.select->seed : 0;
  if (spec.select || cands.size() > 1) {
    std::vector<int> labels;
    if (t.task == LearnTask::kClassification) {
      for (Eigen::Index i = 0; i < d.target.size(); ++i)
        labels.push_back(static_cast<int>(d.target(i)));
    }
    if (spec.select && spec.select->validation) {
      report.selection = "validation";
      UNSEEN_ASSIGN_OR_RETURN(
          fold, AssignValidation(report.rows, *spec.select->validation, seed, d.groups));
      k = 2;
    } else {
      report.selection = "k-fold";
      k = spec.select && spec.select->folds ? *spec.select->folds : kDefaultFolds;
      UNSEEN_ASSIGN_OR_RETURN(fold, AssignFolds(report.rows, k, seed, labels, d.groups));
    }
    report.folds = k;
    UNSEEN_RETURN_IF_ERROR(Select(cands, d, fold, k, metric, t, &report));
    if (report.selection == "validation") {
      size_t nval = RowsWhere(fold, 1, true).size();
      report.validation_bound = ValidationBound(report, metric, nval);
    } else {
      report.caution =
          "the cross-validated score of the chosen candidate is optimistic: it was "
          "the best of " +
          std::to_string(cands.size()) +
          " compared on the same folds; only the holdout gives an unbiased estimate";
    }
  }

  // 4. The chosen candidate, refitted on every row read, frozen.
  const Candidate& chosen = cands[report.chosen];
  UNSEEN_ASSIGN_OR_RETURN(FittedPipeline final_fit,
                          FitPipeline(chosen, d.features, d.target, t.task, t.classes));
  json model = internal::FrozenModelHeader(st, req.name);
  model["settings"] = chosen.settings;
  model["pipeline"] = final_fit.ToJson();
  UNSEEN_ASSIGN_OR_RETURN(std::string model_text, CanonicalJson(model.dump()));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef model_ref, ledger->PutBlob("model", model_text));
  UNSEEN_ASSIGN_OR_RETURN(std::string spec_text, internal::ReadSpecBytes(req.spec_path));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef spec_ref, ledger->PutBlob("spec", spec_text));
  UNSEEN_ASSIGN_OR_RETURN(BlobRef rows_ref, ledger->PutBlob("row-set", d.rows_read.Serialize()));
  report.model_digest = model_ref.digest;

  std::vector<int64_t> parents = {st.seal->entry_seq};
  if (excluded) parents.push_back(excluded->entry_seq);
  if (report.selection != "none") {
    std::vector<BlobRef> fold_refs = {rows_ref};
    SelectBody sel;
    for (const RowSet& s : internal::FoldRowSets(d, fold, k)) {
      UNSEEN_ASSIGN_OR_RETURN(BlobRef r, ledger->PutBlob("row-set", s.Serialize()));
      fold_refs.push_back(r);
      sel.fold_row_sets.push_back(r.digest);
    }
    sel.model = req.name;
    sel.metric = report.metric;
    sel.selection = report.selection;
    sel.folds = k;
    sel.seed = seed;
    sel.rows_read = rows_ref.digest;
    sel.candidates = ScoresJson(report);
    sel.chosen = report.chosen;
    sel.parents = parents;
    sel.summary = "selected candidate " + std::to_string(report.chosen) + " of " +
                  std::to_string(cands.size()) + " for " + req.name + " by " + report.selection +
                  " " + report.metric;
    UNSEEN_ASSIGN_OR_RETURN(Entry se, AppendEntry(ledger.get(), req.actor, sel, fold_refs));
    parents.push_back(se.seq);
  }
  FitBody fit;
  fit.model = req.name;
  fit.model_digest = model_ref.digest;
  fit.spec = spec_ref.digest;
  fit.data = {data, d.file_sha256};
  fit.rows_read = rows_ref.digest;
  fit.rows = report.rows;
  fit.parents = parents;
  fit.candidates_compared = cands.size();
  fit.settings = chosen.settings;
  fit.learner = chosen.learner.kind;
  fit.summary = "froze " + req.name + " (" + chosen.learner.kind + ", " +
                std::to_string(report.rows) + " rows, chosen from " +
                std::to_string(cands.size()) + ")";
  std::vector<BlobRef> fit_blobs = {model_ref, spec_ref, rows_ref};
  if (excluded) {
    fit.excluded = FitBody::Excluded{excluded->name, excluded->entry_seq, excluded->row_set,
                                     report.excluded_rows};
    // Already stored by the partition entry (a no-op here); named as a blob this entry relies on.
    UNSEEN_ASSIGN_OR_RETURN(BlobRef ex_ref, ledger->PutBlob("row-set", excluded->rows.Serialize()));
    fit_blobs.push_back(ex_ref);
  }
  UNSEEN_ASSIGN_OR_RETURN(Entry fe, AppendEntry(ledger.get(), req.actor, fit, fit_blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.head = fe.hash;
  return report;
}

}  // namespace unseen
