#include "harness/workflow/score.h"

#include <algorithm>
#include <nlohmann/json.hpp>
#include <unordered_map>

#include "harness/data/csv.h"
#include "harness/data/source_scan.h"
#include "harness/pipeline/metrics.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"
#include "storage/row_set.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// Every row any `export` entry wrote, and those entries' numbers.
Result<RowSet> ExportedRows(const Ledger& ledger, std::vector<int64_t>* seqs) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<ExportBody>> exports, ReadEntries<ExportBody>(ledger));
  RowSet all;
  for (const Decoded<ExportBody>& e : exports) {
    UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(e.body.row_set));
    UNSEEN_ASSIGN_OR_RETURN(RowSet s, RowSet::Deserialize(bytes));
    all = all.Or(s);
    seqs->push_back(e.entry.seq);
  }
  return all;
}

}  // namespace

Result<ScoreReport> ScorePredictions(const ScoreRequest& req) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  if (!st.seal) return Status::FailedPrecondition(req.ledger_path + ": seal the holdout first (`unseen seal`)");
  const SourceInfo& src = st.source;
  const bool classification = src.task == TaskKind::kClassification;
  const int classes = classification ? static_cast<int>(src.target.classes.size()) : 0;
  const LearnTask task = classification ? LearnTask::kClassification : LearnTask::kRegression;
  Metric metric = DefaultMetric(task);
  if (!req.metric.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(metric, ParseMetric(req.metric));
  }
  UNSEEN_RETURN_IF_ERROR(CheckMetric(metric, task, classes));
  std::vector<int64_t> export_seqs;
  UNSEEN_ASSIGN_OR_RETURN(RowSet exported, ExportedRows(*ledger, &export_seqs));
  UNSEEN_ASSIGN_OR_RETURN(std::string hbytes, ledger->GetBlob(st.seal->holdout_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet holdout, RowSet::Deserialize(hbytes));

  // The source: id -> row, and each row's target.
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto source, CsvFile::Open(st.source_abs_path, options));
  auto id_col = src.ColumnOf(ColumnRole::kId);
  size_t target_col = *src.ColumnOf(ColumnRole::kTarget);
  std::unordered_map<std::string, uint32_t> row_of_id;
  std::vector<std::string> target(src.rows);
  UNSEEN_RETURN_IF_ERROR(source->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (id_col) row_of_id.emplace(std::string((*r.fields)[*id_col]), static_cast<uint32_t>(r.index));
    target[r.index] = std::string((*r.fields)[target_col]);
    return Status::OK();
  }));

  UNSEEN_ASSIGN_OR_RETURN(auto pred, CsvFile::Open(req.predictions_path, CsvOptions{}));
  const auto& header = pred->header();
  auto col = [&](const std::string& n) { return std::find(header.begin(), header.end(), n) - header.begin(); };
  size_t id_at = static_cast<size_t>(col("id")), value_at = static_cast<size_t>(col("prediction"));
  if (id_at >= header.size() || value_at >= header.size()) {
    return Status::InvalidArgument(req.predictions_path + ":1:1: expected columns 'id' and 'prediction'");
  }
  std::vector<std::string> labels = ClassLabels(src);
  std::vector<size_t> proba_at;
  for (const std::string& l : labels) {
    size_t at = static_cast<size_t>(col("p_" + l));
    if (at < header.size()) proba_at.push_back(at);
  }
  bool with_proba = classification && proba_at.size() == labels.size();
  std::vector<double> y, value, proba;
  std::vector<uint32_t> rows;
  uint64_t holdout_rows = 0;
  std::vector<uint64_t> first_lines;
  Status s = pred->ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    std::string id(f[id_at]);
    uint32_t row = 0;
    double num = 0;
    if (id_col) {
      auto it = row_of_id.find(id);
      if (it == row_of_id.end()) {
        return Status::InvalidArgument(pred->Location(r.offset) + ": id '" + id + "' is not a row of the source");
      }
      row = it->second;
    } else if (!ParseNumber(id, &num) || num < 0 || num >= static_cast<double>(src.rows)) {
      return Status::InvalidArgument(pred->Location(r.offset) + ": id '" + id +
                                     "' is not an unseen_row number of the source");
    } else {
      row = static_cast<uint32_t>(num);
    }
    if (holdout.Contains(row)) {
      ++holdout_rows;
      if (first_lines.size() < 5) first_lines.push_back(r.line);
      return Status::OK();
    }
    if (!exported.Contains(row)) {
      return Status::Refused(pred->Location(r.offset) + ": id '" + id +
                             "' was never exported; expected predictions for exported rows only");
    }
    std::string cell(f[value_at]);
    if (classification) {
      auto li = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(cell));
      if (li == labels.end() || *li != CanonicalLabel(cell)) {
        return Status::InvalidArgument(pred->Location(pred->FieldOffset(r, value_at)) + ": prediction '" +
                                       cell + "' is not one of the source's classes");
      }
      value.push_back(static_cast<double>(li - labels.begin()));
      auto ti = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(target[row]));
      y.push_back(static_cast<double>(ti - labels.begin()));
      for (size_t at : proba_at) {
        double p = 0;
        if (with_proba && !ParseNumber(f[at], &p)) {
          return Status::InvalidArgument(pred->Location(pred->FieldOffset(r, at)) + ": expected a probability");
        }
        proba.push_back(p);
      }
    } else {
      double v = 0, t = 0;
      if (!ParseNumber(cell, &v)) {
        return Status::InvalidArgument(pred->Location(pred->FieldOffset(r, value_at)) + ": prediction '" +
                                       cell + "' is not a number");
      }
      ParseNumber(target[row], &t);
      value.push_back(v);
      y.push_back(t);
    }
    rows.push_back(row);
    return Status::OK();
  });
  if (holdout_rows > 0 && s.ok()) {
    s = Status::Refused(req.predictions_path + ": " + std::to_string(holdout_rows) +
                        " predictions are for sealed holdout rows; holdout rows are scored only by "
                        "the evaluation guard");
  }
  if (!s.ok()) {
    if (!s.IsRefused()) return s;
    ledger->Rollback();
    json details = {{"predictions", req.predictions_path}, {"holdout_rows", holdout_rows},
                    {"first_lines", first_lines}, {"name", req.name}};
    UNSEEN_RETURN_IF_ERROR(RecordRefusal(req.ledger_path, req.actor, "score", s, details.dump()));
    return s;
  }
  if (rows.empty()) return Status::InvalidArgument(req.predictions_path + ": no predictions");
  Predictions p;
  p.value = Eigen::Map<Eigen::VectorXd>(value.data(), static_cast<Eigen::Index>(value.size()));
  if (with_proba) {
    p.proba = Eigen::Map<Eigen::Matrix<double, Eigen::Dynamic, Eigen::Dynamic, Eigen::RowMajor>>(
        proba.data(), static_cast<Eigen::Index>(rows.size()), static_cast<Eigen::Index>(labels.size()));
  }
  Eigen::VectorXd yv = Eigen::Map<Eigen::VectorXd>(y.data(), static_cast<Eigen::Index>(y.size()));
  ScoreReport report;
  UNSEEN_ASSIGN_OR_RETURN(report.value, Score(metric, yv, p, classes));
  report.rows = rows.size();
  report.metric = MetricName(metric);
  std::sort(rows.begin(), rows.end());
  UNSEEN_ASSIGN_OR_RETURN(BlobRef set, ledger->PutBlob("row-set", RowSet::FromSorted(rows).Serialize()));
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(req.predictions_path));
  ScoreBody body;
  body.name = req.name;
  body.predictions = {req.predictions_path, fd.sha256};
  body.rows = report.rows;
  body.rows_read = set.digest;
  body.metric = report.metric;
  body.value = report.value;
  body.parents = export_seqs;
  body.summary = "scored " + req.name + " on " + std::to_string(report.rows) +
                 " exported rows: " + report.metric + " " + std::to_string(report.value);
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), req.actor, body, {set}));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
