// The `fit` command's choice among a pipeline spec's candidates
// (workflow/fit_steps.h): folds or a validation split, every candidate
// scored on them with every transform refitted inside each fold, and the
// `select` entry that records the comparison.
#include <algorithm>
#include <cmath>

#include "harness/pipeline/pipeline.h"
#include "harness/sampling/folds.h"
#include "harness/workflow/fit_steps.h"

namespace unseen::internal {

using json = nlohmann::json;

namespace {

constexpr int kDefaultFolds = 5;

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

// Each row's fold: a validation split (fold 1 is the validation part) when
// [select] asks for one, else k folds, stratified by class for classification.
Status AssignSelectionFolds(FitRun* run) {
  const PipelineSpec& spec = run->spec;
  const AdmittedData& d = run->data;
  FitReport& report = run->report;
  std::vector<int> labels;
  if (run->task == LearnTask::kClassification) {
    for (Eigen::Index i = 0; i < d.target.size(); ++i)
      labels.push_back(static_cast<int>(d.target(i)));
  }
  if (spec.select && spec.select->validation) {
    report.selection = "validation";
    UNSEEN_ASSIGN_OR_RETURN(
        run->fold, AssignValidation(report.rows, *spec.select->validation, run->seed, d.groups));
    run->k = 2;
  } else {
    report.selection = "k-fold";
    run->k = spec.select && spec.select->folds ? *spec.select->folds : kDefaultFolds;
    UNSEEN_ASSIGN_OR_RETURN(run->fold,
                            AssignFolds(report.rows, run->k, run->seed, labels, d.groups));
  }
  report.folds = run->k;
  return Status::OK();
}

// Scores every candidate on the folds; fills report->candidates and chosen.
Status ScoreCandidates(FitRun* run) {
  FitReport* report = &run->report;
  const std::vector<Candidate>& cands = run->candidates;
  const int k = run->k;
  double best = 0;
  for (size_t ci = 0; ci < cands.size(); ++ci) {
    CandidateScore cs;
    cs.settings = cands[ci].settings;
    for (int f = (k == 2 && report->selection == "validation") ? 1 : 0; f < k; ++f) {
      UNSEEN_ASSIGN_OR_RETURN(double s, ScoreOnFold(cands[ci], run->data, run->fold, f, run->metric,
                                                    run->task, run->classes));
      cs.fold_scores.push_back(s);
    }
    double sum = 0;
    for (double s : cs.fold_scores) sum += s;
    cs.mean = sum / static_cast<double>(cs.fold_scores.size());
    bool better = LowerIsBetter(run->metric) ? cs.mean < best : cs.mean > best;
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

}  // namespace

Result<double> ScoreOnFold(const Candidate& c, const AdmittedData& d, const std::vector<int>& fold,
                           int f, Metric metric, LearnTask task, int classes) {
  std::vector<size_t> train = RowsWhere(fold, f, false), test = RowsWhere(fold, f, true);
  UNSEEN_ASSIGN_OR_RETURN(FittedPipeline p, FitPipeline(c, d.features.Select(train),
                                                        Pick(d.target, train), task, classes));
  UNSEEN_ASSIGN_OR_RETURN(Predictions pred, p.Predict(d.features.Select(test)));
  return Score(metric, Pick(d.target, test), pred, classes);
}

std::vector<RowSet> FoldRowSets(const AdmittedData& d, const std::vector<int>& fold, int k) {
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

Status SelectCandidate(FitRun* run) {
  FitReport& report = run->report;
  run->candidates = ExpandGrid(run->spec);
  report.name = run->req->name;
  report.rows = run->data.lines.size();
  report.metric = MetricName(run->metric);
  report.selection = "none";
  run->seed = run->spec.select ? run->spec.select->seed : 0;
  if (!run->spec.select && run->candidates.size() <= 1) return Status::OK();
  UNSEEN_RETURN_IF_ERROR(AssignSelectionFolds(run));
  UNSEEN_RETURN_IF_ERROR(ScoreCandidates(run));
  if (report.selection == "validation") {
    size_t nval = RowsWhere(run->fold, 1, true).size();
    report.validation_bound = ValidationBound(report, run->metric, nval);
  } else {
    report.caution =
        "the cross-validated score of the chosen candidate is optimistic: it was "
        "the best of " +
        std::to_string(run->candidates.size()) +
        " compared on the same folds; only the holdout gives an unbiased estimate";
  }
  return Status::OK();
}

Status RecordSelection(FitRun* run, const FitBlobs& blobs) {
  const FitReport& report = run->report;
  if (report.selection == "none") return Status::OK();
  std::vector<BlobRef> fold_refs = {blobs.rows_read};
  SelectBody sel;
  for (const RowSet& s : FoldRowSets(run->data, run->fold, run->k)) {
    UNSEEN_ASSIGN_OR_RETURN(BlobRef r, run->ledger->PutBlob("row-set", s.Serialize()));
    fold_refs.push_back(r);
    sel.fold_row_sets.push_back(r.digest);
  }
  sel.model = run->req->name;
  sel.metric = report.metric;
  sel.selection = report.selection;
  sel.folds = run->k;
  sel.seed = run->seed;
  sel.rows_read = blobs.rows_read.digest;
  sel.candidates = ScoresJson(report);
  sel.chosen = report.chosen;
  sel.parents = run->parents;
  sel.summary = "selected candidate " + std::to_string(report.chosen) + " of " +
                std::to_string(run->candidates.size()) + " for " + run->req->name + " by " +
                report.selection + " " + report.metric;
  UNSEEN_ASSIGN_OR_RETURN(Entry se,
                          AppendEntry(run->ledger.get(), run->req->actor, sel, fold_refs));
  run->parents.push_back(se.seq);
  return Status::OK();
}

}  // namespace unseen::internal
