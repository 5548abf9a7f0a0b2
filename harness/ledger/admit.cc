#include "harness/ledger/admit.h"

#include <algorithm>
#include <atomic>
#include <cmath>
#include <cstring>
#include <functional>
#include <future>
#include <memory>
#include <optional>
#include <nlohmann/json.hpp>

#include "harness/data/csv.h"
#include "harness/data/row_digest.h"
#include "harness/data/row_matcher.h"
#include "harness/data/source_scan.h"
#include "harness/ledger/sealed_figures.h"

namespace unseen {

namespace {

// The columns of the file, mapped to the source's by name.
struct Layout {
  std::vector<int> source_of_file;  // file column -> source column, -1 if unknown
  std::vector<int> file_of_source;  // source column -> file column, -1 if absent
};

Result<Layout> MapColumns(const CsvFile& csv, const SourceInfo& src) {
  Layout l;
  l.file_of_source.assign(src.columns.size(), -1);
  for (size_t f = 0; f < csv.header().size(); ++f) {
    auto s = src.ColumnNamed(csv.header()[f]);
    l.source_of_file.push_back(s ? static_cast<int>(*s) : -1);
    if (s) l.file_of_source[*s] = static_cast<int>(f);
  }
  for (size_t s = 0; s < src.columns.size(); ++s) {
    if (l.file_of_source[s] < 0 && src.columns[s].role == ColumnRole::kFeature) {
      return Status::InvalidArgument(csv.path() + ": no column '" + src.columns[s].name +
                                     "'; expected every feature column of the source");
    }
  }
  return l;
}

// The class index of a target cell, by its canonical label. Numbers are looked up by their bits
// among the few seen so far, so no label string is built per row.
class ClassIndexer {
 public:
  explicit ClassIndexer(std::vector<std::string> labels) : labels_(std::move(labels)) {}

  // The index of the cell's label, or -1 when it is not one of the source's classes.
  int Of(CellKind kind, double number, std::string_view cell) {
    if (kind != CellKind::kNumber) return Find(cell);
    if (number == 0) number = 0;  // -0 and +0 are one label
    uint64_t bits;
    std::memcpy(&bits, &number, sizeof bits);
    for (const auto& [b, index] : numbers_) {
      if (b == bits) return index;
    }
    const int index = Find(CanonicalLabel(cell));
    if (numbers_.size() < kCachedNumbers) numbers_.emplace_back(bits, index);
    return index;
  }

 private:
  static constexpr size_t kCachedNumbers = 64;
  int Find(std::string_view label) const {
    auto it = std::lower_bound(labels_.begin(), labels_.end(), label,
                               [](const std::string& a, std::string_view b) { return a < b; });
    return it != labels_.end() && *it == label ? static_cast<int>(it - labels_.begin()) : -1;
  }
  const std::vector<std::string> labels_;  // sorted
  std::vector<std::pair<uint64_t, int>> numbers_;
};

// Appends a row's feature values to the frame and its target (class index or value) to
// *target when `target_col` is set. InvalidArgument, without the location, for a value that
// does not fit its column.
Status AppendValues(const std::vector<std::string_view>& canon,
                    const std::vector<size_t>& feature_cols, ClassIndexer* classes, TaskKind task,
                    std::optional<size_t> target_col, Frame* frame, std::vector<double>* target) {
  for (size_t k = 0; k < feature_cols.size(); ++k) {
    const std::string_view cell = canon[feature_cols[k]];
    FrameColumn& col = frame->columns[k];
    if (col.numeric) {
      double v = 0;
      const CellKind kind = ClassifyCell(cell, &v);
      if (kind == CellKind::kText) {
        return Status::InvalidArgument("column '" + col.name + "' holds '" + std::string(cell) +
                                       "'; expected a number");
      }
      col.num.push_back(kind == CellKind::kNumber ? v : NAN);
    } else {
      col.cat.push_back(IsMissing(cell) ? std::string() : std::string(cell));
    }
  }
  if (!target_col) return Status::OK();
  std::string_view cell = canon[*target_col];
  double v = 0;
  const CellKind kind = ClassifyCell(cell, &v);
  if (task == TaskKind::kClassification) {
    const int index = classes->Of(kind, v, cell);
    if (index < 0) {
      return Status::InvalidArgument("target '" + std::string(cell) +
                                     "' is not one of the source's classes");
    }
    target->push_back(index);
  } else {
    if (kind != CellKind::kNumber) {
      return Status::InvalidArgument("target '" + std::string(cell) +
                                     "' is not a number; a regression task expects numbers");
    }
    target->push_back(v);
  }
  return Status::OK();
}

// What the file's columns say about how its rows are read and matched.
struct FilePlan {
  Layout layout;
  size_t target_col = 0;
  std::optional<size_t> id_col, group_col;
  bool labelled = false;   // the file has the target column
  bool full_row = true;    // every source column but the id: content digests apply
  bool has_id = false, has_group = false;
  bool same_order = false;  // the source's columns in the source's order (a dev file)
};

Result<FilePlan> PlanFile(const CsvFile& csv, const SourceInfo& src, DataPurpose purpose) {
  FilePlan plan;
  UNSEEN_ASSIGN_OR_RETURN(plan.layout, MapColumns(csv, src));
  const std::vector<int>& file_of = plan.layout.file_of_source;
  plan.target_col = *src.ColumnOf(ColumnRole::kTarget);
  plan.id_col = src.ColumnOf(ColumnRole::kId);
  plan.group_col = src.ColumnOf(ColumnRole::kGroup);
  plan.labelled = file_of[plan.target_col] >= 0;
  for (size_t s = 0; s < src.columns.size(); ++s) {
    if (file_of[s] < 0 && (!plan.id_col || s != *plan.id_col)) plan.full_row = false;
  }
  if (purpose == DataPurpose::kDevRows && !plan.full_row) {
    return Status::InvalidArgument(csv.path() +
                                   ": expected every column of the source (development rows)");
  }
  plan.has_group = plan.group_col && file_of[*plan.group_col] >= 0;
  plan.has_id = plan.id_col && file_of[*plan.id_col] >= 0;
  plan.same_order = csv.header().size() == src.columns.size();
  for (size_t c = 0; c < src.columns.size(); ++c) {
    plan.same_order = plan.same_order && file_of[c] == static_cast<int>(c);
  }
  return plan;
}

// Digests to match against. Without the key: the development rows' content digests, which
// the ledger keeps plain, so a row is a development row or unknown. With the key: the holdout
// rows' content and feature digests too, opened from their sealed blob. The matcher reads them
// on its own thread, while the caller reads the file and leaves the ledger alone until
// Finish().
std::function<Result<MatchTables>()> TableLoader(const Ledger& ledger, const LedgerState& st,
                                                 const Key* key) {
  return [&ledger, &st, key]() -> Result<MatchTables> {
    const SealInfo& seal = *st.seal;
    MatchTables tables;
    UNSEEN_ASSIGN_OR_RETURN(std::string dev_bytes, ledger.GetBlob(seal.dev_set));
    UNSEEN_ASSIGN_OR_RETURN(RowSet dev_set, RowSet::Deserialize(dev_bytes));
    std::vector<uint32_t> dev = dev_set.ToVector();
    UNSEEN_ASSIGN_OR_RETURN(std::string dev_digests, ledger.GetBlob(seal.dev_content_digests));
    if (dev_digests.size() != dev.size() * sizeof(RowDigest)) {
      return Status::Corruption("the development rows' content digests do not match their count");
    }
    std::string& all = tables.content_digests;
    all.assign(st.source.rows * sizeof(RowDigest), '\0');
    for (size_t i = 0; i < dev.size(); ++i) {
      if (dev[i] >= st.source.rows) return Status::Corruption("a dev row beyond the source");
      std::memcpy(&all[size_t{dev[i]} * sizeof(RowDigest)], dev_digests.data() + i * 16, 16);
    }
    if (key == nullptr) {
      tables.known_rows = std::move(dev);
      return tables;
    }
    UNSEEN_ASSIGN_OR_RETURN(HoldoutDigests held, ReadHoldoutDigests(ledger, st, *key));
    UNSEEN_ASSIGN_OR_RETURN(std::string set_bytes, ledger.GetBlob(seal.holdout_set));
    UNSEEN_ASSIGN_OR_RETURN(tables.holdout, RowSet::Deserialize(set_bytes));
    const std::vector<uint32_t> holdout = tables.holdout.ToVector();
    if (holdout.size() != held.rows()) {
      return Status::Corruption("the sealed holdout digests do not match the holdout's row count");
    }
    for (size_t i = 0; i < holdout.size(); ++i) {
      if (holdout[i] >= st.source.rows) return Status::Corruption("a holdout row beyond the source");
      std::memcpy(&all[size_t{holdout[i]} * sizeof(RowDigest)], held.content.data() + i * 16, 16);
    }
    tables.holdout_feature_digests = std::move(held.feature);
    return tables;
  };
}

// Reads every row's values on the calling thread while a RowMatcher hashes and looks the
// rows up on another. A holdout row is refused even when the file has other errors, so after
// the first bad value the rows are still read and matched, and their values no longer kept.
class RowReader {
 public:
  RowReader(const SourceInfo& src, const FilePlan& plan, const CsvFile& csv, RowMatcher* matcher,
            AdmittedData* out)
      : src_(src),
        plan_(plan),
        csv_(csv),
        matcher_(matcher),
        out_(out),
        classes_(ClassLabels(src)),
        canon_(src.columns.size()) {
    for (size_t s = 0; s < src.columns.size(); ++s) {
      if (src.columns[s].role != ColumnRole::kFeature) continue;
      feature_cols_.push_back(s);
      out->features.columns.push_back(
          FrameColumn{src.columns[s].name, src.columns[s].type == ColumnType::kNumeric, {}, {}});
    }
    // Room for the rows the file seems to hold: vectors that grow by doubling would copy every
    // column about once more and touch twice the memory.
    const size_t expected_rows = csv.EstimateRecords();
    out->features.Reserve(expected_rows);
    if (plan.labelled) target_.reserve(expected_rows);
    out->lines.reserve(expected_rows);
    if (plan.has_id) out->ids.reserve(expected_rows);
    if (plan.has_group) out->groups.reserve(expected_rows);
    batch_ = matcher->NewBatch();
  }

  // Reads the file; the status of the read itself (a malformed record). Values that do not
  // fit their column are kept in bad_value().
  Status ReadAll() {
    Status s = csv_.ForEachRecord([this](const CsvRecord& r) { return Row(r); });
    if (batch_->rows() > 0) matcher_->Add(std::move(batch_));
    return s;
  }

  const Status& bad_value() const { return bad_value_; }
  std::vector<double>& target() { return target_; }

 private:
  Status Row(const CsvRecord& r) {
    if (!plan_.same_order) {
      for (size_t c = 0; c < src_.columns.size(); ++c) {
        int fc = plan_.layout.file_of_source[c];
        canon_[c] = fc >= 0 ? (*r.fields)[static_cast<size_t>(fc)] : std::string_view();
      }
    }
    const std::vector<std::string_view>& row = plan_.same_order ? *r.fields : canon_;
    // The matcher splits and classifies the record on its thread; once it has stopped (the
    // file is the dev file), nothing more is handed to it.
    const bool matching = !matcher_->stopped();
    if (matching) batch_->AddRow(r.raw, r.line);
    if (bad_value_.ok()) Keep(row, r);
    if (matching && batch_->full()) {
      matcher_->Add(std::move(batch_));
      batch_ = matcher_->NewBatch();
    }
    return Status::OK();
  }

  void Keep(const std::vector<std::string_view>& row, const CsvRecord& r) {
    bad_value_ =
        AppendValues(row, feature_cols_, &classes_, src_.task,
                     plan_.labelled ? std::optional<size_t>(plan_.target_col) : std::nullopt,
                     &out_->features, &target_);
    if (!bad_value_.ok()) {
      bad_value_ = Status::InvalidArgument(csv_.Location(r.offset) + ": " + bad_value_.message());
      return;
    }
    out_->lines.push_back(r.line);
    if (plan_.has_id) out_->ids.emplace_back(row[*plan_.id_col]);
    if (plan_.has_group) out_->groups.emplace_back(row[*plan_.group_col]);
  }

  const SourceInfo& src_;
  const FilePlan& plan_;
  const CsvFile& csv_;
  RowMatcher* matcher_;
  AdmittedData* out_;
  ClassIndexer classes_;
  std::vector<size_t> feature_cols_;
  std::vector<std::string_view> canon_;  // the row in source column order
  std::vector<double> target_;
  std::unique_ptr<MatchBatch> batch_;
  Status bad_value_;
};

// The file's SHA-256, on a third thread over the same mapping the rows are read from, so the
// digest recorded is that of the bytes used. When it is the digest of the dev file seal wrote,
// the file is that file: its rows are the development rows in source order, which is what
// matching them would find, so the matcher stops. Until a file of the dev file's size is known
// to be another, the matcher is held (it loads nothing and matches nothing), so that on two
// cores the reader and the digest each have one to themselves.
std::future<Result<FileDigest>> HashFile(const CsvFile& file, const SealInfo& seal,
                                         RowMatcher* matcher, std::atomic<bool>* is_dev_file) {
  return std::async(std::launch::async, [&file, &seal, matcher, is_dev_file] {
    Result<FileDigest> d = file.Sha256();
    if (d.ok() && d->size == seal.dev_out_size && d->sha256 == seal.dev_out_sha256) {
      is_dev_file->store(true);
      matcher->Stop();
    } else {
      matcher->Release();
    }
    return d;
  });
}

// For the dev file, the seal's own dev row set stands for what matching would have found.
Result<std::optional<RowSet>> TakeDevRowSet(const Ledger& ledger, const SealInfo& seal,
                                            const std::string& path, const AdmittedData& out,
                                            bool values_ok, MatchResult* matched) {
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_bytes, ledger.GetBlob(seal.dev_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet dev_set, RowSet::Deserialize(dev_bytes));
  matched->dev_rows = dev_set.ToVector();
  matched->holdout_rows = matched->other_rows = 0;
  matched->first_lines.clear();
  if (matched->dev_rows.size() != out.lines.size() && values_ok) {
    return Status::Corruption(path + ": has the dev file's SHA-256 but " +
                              std::to_string(out.lines.size()) + " rows, not the " +
                              std::to_string(matched->dev_rows.size()) + " of the dev row set");
  }
  return std::optional<RowSet>(std::move(dev_set));
}

// Refused when rows match the holdout or are not development rows.
Status RefuseMatches(const std::string& path, const MatchResult& matched, DataRefusal* refusal) {
  refusal->holdout_rows = matched.holdout_rows;
  refusal->not_dev_rows = matched.other_rows;
  refusal->first_lines = matched.first_lines;
  if (refusal->holdout_rows == 0 && refusal->not_dev_rows == 0) return Status::OK();
  std::string lines;
  for (uint64_t l : refusal->first_lines) lines += (lines.empty() ? "" : ", ") + std::to_string(l);
  if (refusal->holdout_rows > 0) {
    return Status::Refused(path + ": " + std::to_string(refusal->holdout_rows) +
                           " rows match sealed holdout rows (first lines: " + lines +
                           "); holdout rows may not be used to build models");
  }
  return Status::Refused(path + ": " + std::to_string(refusal->not_dev_rows) +
                         " rows are not development rows of this ledger's source (first lines: " +
                         lines + "); expected rows from the dev file");
}

}  // namespace

std::vector<std::string> ClassLabels(const SourceInfo& source) {
  std::vector<std::string> labels;
  for (const auto& [label, count] : source.target.classes) labels.push_back(label);
  return labels;
}

Result<AdmittedData> AdmitData(const Ledger& ledger, const LedgerState& st, const std::string& path,
                               DataPurpose purpose, DataRefusal* refusal) {
  return AdmitData(ledger, st, path, purpose, refusal, nullptr);
}

Result<AdmittedData> AdmitData(const Ledger& ledger, const LedgerState& st, const std::string& path,
                               DataPurpose purpose, DataRefusal* refusal, const Key* key) {
  if (!st.seal)
    return Status::FailedPrecondition(ledger.path() + ": seal the holdout first (`unseen seal`)");
  const SourceInfo& src = st.source;
  const SealInfo& seal = *st.seal;
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv, CsvFile::Open(path, options));
  UNSEEN_ASSIGN_OR_RETURN(FilePlan plan, PlanFile(*csv, src, purpose));

  AdmittedData out;
  out.path = path;
  out.labelled = plan.labelled;
  // New rows without the key: there is nothing to match them against (the holdout's digests
  // are sealed), so the matcher is stopped before it loads anything.
  const bool nothing_to_match = purpose == DataPurpose::kNewRows && key == nullptr;
  RowMatcher matcher(TableLoader(ledger, st, key),
                     MatchLayout{src.delimiter, plan.layout.file_of_source}, plan.target_col,
                     plan.id_col, plan.full_row && plan.labelled, purpose == DataPurpose::kDevRows,
                     /*held=*/nothing_to_match || csv->size() == seal.dev_out_size);
  if (nothing_to_match) matcher.Stop();
  std::atomic<bool> is_dev_file{false};
  std::future<Result<FileDigest>> file_digest = HashFile(*csv, seal, &matcher, &is_dev_file);
  RowReader reader(src, plan, *csv, &matcher, &out);
  Status read = reader.ReadAll();
  Result<FileDigest> fd = file_digest.get();
  MatchResult matched = matcher.Finish();
  UNSEEN_RETURN_IF_ERROR(matched.status);
  UNSEEN_RETURN_IF_ERROR(read);
  if (!fd.ok()) return fd.status();

  std::optional<RowSet> dev_set;  // the seal's, when the file is the dev file
  if (is_dev_file.load()) {
    UNSEEN_ASSIGN_OR_RETURN(
        dev_set, TakeDevRowSet(ledger, seal, path, out, reader.bad_value().ok(), &matched));
  }
  UNSEEN_RETURN_IF_ERROR(RefuseMatches(path, matched, refusal));
  UNSEEN_RETURN_IF_ERROR(reader.bad_value());
  if (out.lines.empty()) return Status::InvalidArgument(path + ": no data rows");
  std::vector<double>& target = reader.target();
  out.target = Eigen::Map<Eigen::VectorXd>(target.data(), static_cast<Eigen::Index>(target.size()));
  std::vector<uint32_t> dev_rows = std::move(matched.dev_rows);
  if (dev_set) {
    out.rows_read = std::move(*dev_set);
    out.source_rows = std::move(dev_rows);
  } else {
    out.source_rows = dev_rows;
    std::sort(dev_rows.begin(), dev_rows.end());
    out.rows_read = RowSet::FromSorted(dev_rows);
  }
  out.file_sha256 = fd->sha256;
  return out;
}

AdmittedData SelectRows(const AdmittedData& d, const std::vector<size_t>& rows) {
  AdmittedData out;
  out.path = d.path;
  out.file_sha256 = d.file_sha256;
  out.labelled = d.labelled;
  out.features = d.features.Select(rows);
  out.target.resize(d.labelled ? static_cast<Eigen::Index>(rows.size()) : 0);
  std::vector<uint32_t> read;
  for (size_t i = 0; i < rows.size(); ++i) {
    size_t r = rows[i];
    if (d.labelled)
      out.target(static_cast<Eigen::Index>(i)) = d.target(static_cast<Eigen::Index>(r));
    out.ids.push_back(d.IdOf(r));  // a row number of `d` would change here: kept as text
    if (!d.groups.empty()) out.groups.push_back(d.groups[r]);
    out.source_rows.push_back(d.source_rows[r]);
    out.lines.push_back(d.lines[r]);
    read.push_back(d.source_rows[r]);
  }
  std::sort(read.begin(), read.end());
  out.rows_read = RowSet::FromSorted(read);
  return out;
}

Status RecordRefusal(const std::string& ledger_path, const std::string& actor,
                     const std::string& command, const Status& reason,
                     const std::string& details_json) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  RefusalBody refusal;
  refusal.command = command;
  refusal.code = static_cast<int>(reason.code());
  refusal.reason = reason.message();
  refusal.details = nlohmann::json::parse(details_json, nullptr, /*allow_exceptions=*/false);
  if (refusal.details.is_discarded()) {
    return Status::Internal("refusal of " + command + ": its details are not JSON");
  }
  refusal.summary = command + " refused: " + reason.message();
  UNSEEN_RETURN_IF_ERROR(AppendEntry(ledger.get(), actor, refusal).status());
  return ledger->Commit();
}

}  // namespace unseen
