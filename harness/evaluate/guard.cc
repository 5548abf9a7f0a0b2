#include "harness/evaluate/guard.h"

#include <cmath>
#include <cstring>

#include "harness/data/csv.h"
#include "harness/data/row_digest.h"
#include "harness/data/source_scan.h"
#include "harness/ledger/entries.h"
#include "harness/pipeline/pipeline.h"
#include "harness/evaluate/guard_messages.h"
#include "harness/evaluate/sealed_holdout.h"
#include "harness/ledger/sealed_figures.h"
#include "storage/row_set.h"

namespace unseen {

namespace {

Status Mismatch(const std::string& what) {
  return Status::Corruption("the sealed holdout does not match its commitments: " + what);
}

std::vector<std::string> Labels(const SourceInfo& source) {
  std::vector<std::string> labels;
  for (const auto& [label, count] : source.target.classes) labels.push_back(label);
  return labels;
}

}  // namespace

Result<std::unique_ptr<HoldoutGuard>> HoldoutGuard::Open(const Ledger& ledger,
                                                         const LedgerState& st, const Key& key) {
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": the ledger is not sealed yet");
  const SealInfo& seal = *st.seal;
  UNSEEN_ASSIGN_OR_RETURN(std::string text, OpenHoldoutText(ledger, st, key));
  UNSEEN_ASSIGN_OR_RETURN(std::string set_bytes, ledger.GetBlob(seal.holdout_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet holdout, RowSet::Deserialize(set_bytes));
  const std::vector<uint32_t> rows = holdout.ToVector();
  UNSEEN_ASSIGN_OR_RETURN(HoldoutDigests held, ReadHoldoutDigests(ledger, st, key));
  if (held.rows() != rows.size()) return Mismatch("holdout digest count");
  const std::string& row_digests = held.content;  // the holdout rows' sealed content digests

  const SourceInfo& src = st.source;
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv,
                          CsvFile::FromBytes("<sealed holdout>", std::move(text), options));
  if (csv->header().size() != src.columns.size()) return Mismatch("column count");

  std::unique_ptr<HoldoutGuard> g(new HoldoutGuard());
  g->ledger_path_ = ledger.path();
  // The registered file, wherever init was run: kept out of an external predictor's reach.
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<SourceBody>> sources,
                          ReadEntries<SourceBody>(ledger));
  for (const auto& s : sources) {
    g->source_files_.push_back(s.body.absolute_path.value_or(s.body.source.path));
  }
  g->source_ = src;
  std::vector<size_t> feature_cols;
  for (size_t c = 0; c < src.columns.size(); ++c) {
    if (src.columns[c].role != ColumnRole::kFeature) continue;
    feature_cols.push_back(c);
    g->features_.columns.push_back(
        FrameColumn{src.columns[c].name, src.columns[c].type == ColumnType::kNumeric, {}, {}});
  }
  const size_t target_col = *src.ColumnOf(ColumnRole::kTarget);
  const std::vector<std::string> labels = Labels(src);
  std::vector<double> target;
  std::vector<size_t> id_col;
  if (auto id = src.ColumnOf(ColumnRole::kId)) id_col.push_back(*id);
  RowDigester all(id_col);  // the content digest: every column but the id
  uint64_t n = 0;
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    if (n >= rows.size()) return Mismatch("more rows than the holdout set");
    RowDigest d = all.Digest(f);
    if (std::memcmp(d.data(), row_digests.data() + n * d.size(), d.size()) != 0) {
      return Mismatch("a row differs from its content digest");
    }
    ++n;
    for (size_t k = 0; k < feature_cols.size(); ++k) {
      std::string_view cell = f[feature_cols[k]];
      FrameColumn& col = g->features_.columns[k];
      if (col.numeric) {
        double v = NAN;
        if (!IsMissing(cell) && !ParseNumber(cell, &v)) v = NAN;
        col.num.push_back(v);
      } else {
        col.cat.push_back(IsMissing(cell) ? std::string() : std::string(cell));
      }
    }
    std::string_view cell = f[target_col];
    if (src.task == TaskKind::kClassification) {
      auto it = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(cell));
      if (it == labels.end() || *it != CanonicalLabel(cell))
        return Mismatch("a target outside the classes");
      target.push_back(static_cast<double>(it - labels.begin()));
    } else {
      double v = NAN;
      if (!ParseNumber(cell, &v)) return Mismatch("a target that is not a number");
      target.push_back(v);
    }
    return Status::OK();
  }));
  if (n != rows.size()) return Mismatch("fewer rows than the holdout set");
  g->target_ = Eigen::Map<Eigen::VectorXd>(target.data(), static_cast<Eigen::Index>(target.size()));
  return g;
}

Result<MetricSample> HoldoutGuard::EvaluateModel(const FrozenModel& model, Metric metric,
                                                 const RangeOptions& range) const {
  Result<Predictions> p = model.Predict(features_);
  if (!p.ok()) return ValueFreeError(p.status(), source_);
  if (!p->value.allFinite() || (p->proba.size() > 0 && !p->proba.allFinite())) {
    return Status::InvalidArgument(
        "cannot be applied to the holdout: it predicted a value that is not finite (no "
        "holdout value or position is shown)");
  }
  Result<MetricSample> sample =
      SampleMetric(metric, target_, *p, static_cast<int>(source_.target.classes.size()), range);
  if (!sample.ok()) return ValueFreeError(sample.status(), source_);
  return sample;
}

}  // namespace unseen
