// The `score` command as named steps: open the ledger, gather the exported
// and holdout row sets, index the source, read the predictions (refusing
// holdout rows and rows never exported), score them and record one entry.
#include "harness/workflow/score.h"

#include <algorithm>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <unordered_map>

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "harness/pipeline/metrics.h"
#include "storage/ledger.h"
#include "storage/row_set.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// Everything one `score` call knows, step by step.
struct ScoreRun {
  const ScoreRequest* req = nullptr;
  std::unique_ptr<Ledger> ledger;
  LedgerState st;
  bool classification = false;
  int classes = 0;
  Metric metric = Metric::kMse;
  std::vector<int64_t> export_seqs;  // the export entries, the score entry's parents
  RowSet exported, holdout;
  // The source: id -> row (when it has an id column), and each row's target.
  std::optional<size_t> id_col;
  std::unordered_map<std::string, uint32_t> row_of_id;
  std::vector<std::string> target;
  // The predictions file: its columns, and what its records hold.
  std::unique_ptr<CsvFile> pred;
  size_t id_at = 0, value_at = 0;
  std::vector<std::string> labels;  // the source's classes
  std::vector<size_t> proba_at;     // the p_LABEL columns found
  bool with_proba = false;          // classification with every p_LABEL column
  std::vector<double> y, value, proba;
  std::vector<uint32_t> rows;
  uint64_t holdout_rows = 0;
  std::vector<uint64_t> first_lines;  // of the first holdout rows, for the refusal
  ScoreReport report;
};

// Opens the ledger in the command's transaction and fixes the metric.
Result<std::unique_ptr<ScoreRun>> OpenScore(const ScoreRequest& req) {
  auto run = std::make_unique<ScoreRun>();
  run->req = &req;
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  run->ledger = std::move(opened.ledger);
  run->st = std::move(opened.state);
  const SourceInfo& src = run->st.source;
  run->classification = src.task == TaskKind::kClassification;
  run->classes = run->classification ? static_cast<int>(src.target.classes.size()) : 0;
  const LearnTask task = run->classification ? LearnTask::kClassification : LearnTask::kRegression;
  run->metric = DefaultMetric(task);
  if (!req.metric.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(run->metric, ParseMetric(req.metric));
  }
  UNSEEN_RETURN_IF_ERROR(CheckMetric(run->metric, task, run->classes));
  return run;
}

// Every row any `export` entry wrote (and those entries' numbers), and the
// sealed holdout's rows.
Status ReadRowSets(ScoreRun* run) {
  const Ledger& ledger = *run->ledger;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<ExportBody>> exports,
                          ReadEntries<ExportBody>(ledger));
  for (const Decoded<ExportBody>& e : exports) {
    UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(e.body.row_set));
    UNSEEN_ASSIGN_OR_RETURN(RowSet s, RowSet::Deserialize(bytes));
    run->exported = run->exported.Or(s);
    run->export_seqs.push_back(e.entry.seq);
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string hbytes, ledger.GetBlob(run->st.seal->holdout_set));
  UNSEEN_ASSIGN_OR_RETURN(run->holdout, RowSet::Deserialize(hbytes));
  return Status::OK();
}

// The source: id -> row, and each row's target.
Status IndexSource(ScoreRun* run) {
  const SourceInfo& src = run->st.source;
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto source, CsvFile::Open(run->st.source_abs_path, options));
  run->id_col = src.ColumnOf(ColumnRole::kId);
  size_t target_col = *src.ColumnOf(ColumnRole::kTarget);
  run->target.resize(src.rows);
  return source->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (run->id_col)
      run->row_of_id.emplace(std::string((*r.fields)[*run->id_col]),
                             static_cast<uint32_t>(r.index));
    run->target[r.index] = std::string((*r.fields)[target_col]);
    return Status::OK();
  });
}

// The predictions file's `id`, `prediction` and p_LABEL columns.
Status OpenPredictions(ScoreRun* run) {
  const std::string& path = run->req->predictions_path;
  UNSEEN_ASSIGN_OR_RETURN(run->pred, CsvFile::Open(path, CsvOptions{}));
  const auto& header = run->pred->header();
  auto col = [&](const std::string& n) {
    return std::find(header.begin(), header.end(), n) - header.begin();
  };
  run->id_at = static_cast<size_t>(col("id"));
  run->value_at = static_cast<size_t>(col("prediction"));
  if (run->id_at >= header.size() || run->value_at >= header.size()) {
    return Status::InvalidArgument(path + ":1:1: expected columns 'id' and 'prediction'");
  }
  run->labels = ClassLabels(run->st.source);
  for (const std::string& l : run->labels) {
    size_t at = static_cast<size_t>(col("p_" + l));
    if (at < header.size()) run->proba_at.push_back(at);
  }
  run->with_proba = run->classification && run->proba_at.size() == run->labels.size();
  return Status::OK();
}

// The source row a prediction's id names: by the source's id column, else
// an unseen_row number.
Result<uint32_t> RowOfId(const ScoreRun& run, const CsvRecord& r, const std::string& id) {
  if (run.id_col) {
    auto it = run.row_of_id.find(id);
    if (it == run.row_of_id.end()) {
      return Status::InvalidArgument(run.pred->Location(r.offset) + ": id '" + id +
                                     "' is not a row of the source");
    }
    return it->second;
  }
  double num = 0;
  if (!ParseNumber(id, &num) || num < 0 || num >= static_cast<double>(run.st.source.rows)) {
    return Status::InvalidArgument(run.pred->Location(r.offset) + ": id '" + id +
                                   "' is not an unseen_row number of the source");
  }
  return static_cast<uint32_t>(num);
}

// A predicted class (and its probabilities) for source row `row`.
Status ReadClassPrediction(ScoreRun* run, const CsvRecord& r, const std::string& cell,
                           uint32_t row) {
  const std::vector<std::string>& labels = run->labels;
  const CsvFile& pred = *run->pred;
  auto li = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(cell));
  if (li == labels.end() || *li != CanonicalLabel(cell)) {
    return Status::InvalidArgument(pred.Location(pred.FieldOffset(r, run->value_at)) +
                                   ": prediction '" + cell +
                                   "' is not one of the source's classes");
  }
  run->value.push_back(static_cast<double>(li - labels.begin()));
  auto ti = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(run->target[row]));
  run->y.push_back(static_cast<double>(ti - labels.begin()));
  for (size_t at : run->proba_at) {
    double p = 0;
    if (run->with_proba && !ParseNumber((*r.fields)[at], &p)) {
      return Status::InvalidArgument(pred.Location(pred.FieldOffset(r, at)) +
                                     ": expected a probability");
    }
    run->proba.push_back(p);
  }
  return Status::OK();
}

// A predicted value for source row `row`.
Status ReadValuePrediction(ScoreRun* run, const CsvRecord& r, const std::string& cell,
                           uint32_t row) {
  double v = 0, t = 0;
  if (!ParseNumber(cell, &v)) {
    return Status::InvalidArgument(run->pred->Location(run->pred->FieldOffset(r, run->value_at)) +
                                   ": prediction '" + cell + "' is not a number");
  }
  ParseNumber(run->target[row], &t);
  run->value.push_back(v);
  run->y.push_back(t);
  return Status::OK();
}

// One record of the predictions file. A holdout row is counted (the whole
// file is refused afterwards); a row never exported is refused at once.
Status ReadPrediction(ScoreRun* run, const CsvRecord& r) {
  const auto& f = *r.fields;
  std::string id(f[run->id_at]);
  UNSEEN_ASSIGN_OR_RETURN(uint32_t row, RowOfId(*run, r, id));
  if (run->holdout.Contains(row)) {
    ++run->holdout_rows;
    if (run->first_lines.size() < 5) run->first_lines.push_back(r.line);
    return Status::OK();
  }
  if (!run->exported.Contains(row)) {
    return Status::Refused(run->pred->Location(r.offset) + ": id '" + id +
                           "' was never exported; expected predictions for exported rows only");
  }
  std::string cell(f[run->value_at]);
  if (run->classification) {
    UNSEEN_RETURN_IF_ERROR(ReadClassPrediction(run, r, cell, row));
  } else {
    UNSEEN_RETURN_IF_ERROR(ReadValuePrediction(run, r, cell, row));
  }
  run->rows.push_back(row);
  return Status::OK();
}

// Every record of the predictions file. A refusal rolls the transaction
// back and is recorded as a `refusal` entry.
Status ReadPredictions(ScoreRun* run) {
  const ScoreRequest& req = *run->req;
  Status s = run->pred->ForEachRecord([run](const CsvRecord& r) { return ReadPrediction(run, r); });
  if (run->holdout_rows > 0 && s.ok()) {
    s = Status::Refused(req.predictions_path + ": " + std::to_string(run->holdout_rows) +
                        " predictions are for sealed holdout rows; holdout rows are scored only by "
                        "the evaluation guard");
  }
  if (s.ok() || !s.IsRefused()) return s;
  run->ledger->Rollback();
  json details = {{"predictions", req.predictions_path},
                  {"holdout_rows", run->holdout_rows},
                  {"first_lines", run->first_lines},
                  {"name", req.name}};
  UNSEEN_RETURN_IF_ERROR(RecordRefusal(req.ledger_path, req.actor, "score", s, details.dump()));
  return s;
}

// The metric over the predictions read.
Status ScoreRows(ScoreRun* run) {
  if (run->rows.empty())
    return Status::InvalidArgument(run->req->predictions_path + ": no predictions");
  Predictions p;
  p.value =
      Eigen::Map<Eigen::VectorXd>(run->value.data(), static_cast<Eigen::Index>(run->value.size()));
  if (run->with_proba) {
    p.proba = Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(
        run->proba.data(), static_cast<Eigen::Index>(run->rows.size()),
        static_cast<Eigen::Index>(run->labels.size()));
  }
  Eigen::VectorXd yv =
      Eigen::Map<Eigen::VectorXd>(run->y.data(), static_cast<Eigen::Index>(run->y.size()));
  UNSEEN_ASSIGN_OR_RETURN(run->report.value, Score(run->metric, yv, p, run->classes));
  run->report.rows = run->rows.size();
  run->report.metric = MetricName(run->metric);
  return Status::OK();
}

// The `score` entry with the rows scored, then the commit.
Status RecordScore(ScoreRun* run) {
  const ScoreRequest& req = *run->req;
  ScoreReport& report = run->report;
  std::sort(run->rows.begin(), run->rows.end());
  UNSEEN_ASSIGN_OR_RETURN(
      BlobRef set, run->ledger->PutBlob("row-set", RowSet::FromSorted(run->rows).Serialize()));
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(req.predictions_path));
  ScoreBody body;
  body.name = req.name;
  body.predictions = {req.predictions_path, fd.sha256};
  body.rows = report.rows;
  body.rows_read = set.digest;
  body.metric = report.metric;
  body.value = report.value;
  body.parents = run->export_seqs;
  body.summary = "scored " + req.name + " on " + std::to_string(report.rows) +
                 " exported rows: " + report.metric + " " + std::to_string(report.value);
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(run->ledger.get(), req.actor, body, {set}));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Commit());
  report.head = e.hash;
  return Status::OK();
}

}  // namespace

Result<ScoreReport> ScorePredictions(const ScoreRequest& req) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<ScoreRun> run, OpenScore(req));
  // What may be scored: the rows exported, never the holdout's.
  UNSEEN_RETURN_IF_ERROR(ReadRowSets(run.get()));
  UNSEEN_RETURN_IF_ERROR(IndexSource(run.get()));
  // The predictions, each matched to its source row and checked.
  UNSEEN_RETURN_IF_ERROR(OpenPredictions(run.get()));
  UNSEEN_RETURN_IF_ERROR(ReadPredictions(run.get()));
  // The score and its entry.
  UNSEEN_RETURN_IF_ERROR(ScoreRows(run.get()));
  UNSEEN_RETURN_IF_ERROR(RecordScore(run.get()));
  return std::move(run->report);
}

}  // namespace unseen
