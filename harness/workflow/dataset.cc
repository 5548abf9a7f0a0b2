#include "harness/workflow/dataset.h"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <nlohmann/json.hpp>

#include "harness/data/csv.h"
#include "harness/data/row_digest.h"
#include "harness/data/source_scan.h"

namespace unseen {

namespace {

constexpr size_t kShownLines = 5;

struct DigestRow {
  RowDigest digest;
  uint32_t row;
  bool operator<(const DigestRow& o) const {
    return std::memcmp(digest.data(), o.digest.data(), digest.size()) < 0 ||
           (digest == o.digest && row < o.row);
  }
};

std::vector<DigestRow> SortedDigests(std::string_view blob) {
  std::vector<DigestRow> v(blob.size() / sizeof(RowDigest));
  for (size_t i = 0; i < v.size(); ++i) {
    std::memcpy(v[i].digest.data(), blob.data() + i * sizeof(RowDigest), sizeof(RowDigest));
    v[i].row = static_cast<uint32_t>(i);
  }
  std::sort(v.begin(), v.end());
  return v;
}

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

}  // namespace

std::vector<std::string> ClassLabels(const SourceInfo& source) {
  std::vector<std::string> labels;
  for (const auto& [label, count] : source.target.classes) labels.push_back(label);
  return labels;
}

Result<LoadedData> LoadData(const Ledger& ledger, const LedgerState& st, const std::string& path,
                            DataPurpose purpose, DataRefusal* refusal) {
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": seal the holdout first (`unseen seal`)");
  const SourceInfo& src = st.source;
  CsvOptions options;
  options.delimiter = src.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv, CsvFile::Open(path, options));
  UNSEEN_ASSIGN_OR_RETURN(Layout layout, MapColumns(*csv, src));
  const size_t target_col = *src.ColumnOf(ColumnRole::kTarget);
  const auto id_col = src.ColumnOf(ColumnRole::kId);
  const bool labelled = layout.file_of_source[target_col] >= 0;
  bool full_row = true;  // the file has every source column: content digests apply
  for (size_t s = 0; s < src.columns.size(); ++s) {
    if (layout.file_of_source[s] < 0 && (!id_col || s != *id_col)) full_row = false;
  }
  if (purpose == DataPurpose::kDevRows && !full_row) {
    return Status::InvalidArgument(path + ": expected every column of the source (development rows)");
  }

  // Digests to match against: content digests of all rows, feature digests of the holdout.
  UNSEEN_ASSIGN_OR_RETURN(std::string content_blob, ledger.GetBlob(st.content_digests));
  std::vector<DigestRow> content = SortedDigests(content_blob);
  content_blob = std::string();
  UNSEEN_ASSIGN_OR_RETURN(std::string feature_blob, ledger.GetBlob(st.seal->holdout_feature_digests));
  std::vector<DigestRow> holdout_features = SortedDigests(feature_blob);
  UNSEEN_ASSIGN_OR_RETURN(std::string set_bytes, ledger.GetBlob(st.seal->holdout_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet holdout, RowSet::Deserialize(set_bytes));

  LoadedData out;
  out.path = path;
  out.labelled = labelled;
  std::vector<size_t> feature_cols;
  for (size_t s = 0; s < src.columns.size(); ++s) {
    if (src.columns[s].role != ColumnRole::kFeature) continue;
    feature_cols.push_back(s);
    out.features.columns.push_back(
        FrameColumn{src.columns[s].name, src.columns[s].type == ColumnType::kNumeric, {}, {}});
  }
  std::vector<std::string> labels = ClassLabels(src);
  std::vector<double> target;
  std::vector<bool> used(src.rows, false);
  std::vector<std::string_view> canon(src.columns.size());  // the row in source column order
  std::vector<std::string_view> feature_view;
  RowDigester content_digester(id_col ? std::vector<size_t>{*id_col} : std::vector<size_t>{});
  std::vector<size_t> skip_feature = {target_col};
  if (id_col) skip_feature.push_back(*id_col);
  RowDigester feature_digester(skip_feature);
  std::vector<uint32_t> dev_rows;

  Status s = csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    for (size_t c = 0; c < src.columns.size(); ++c) {
      int fc = layout.file_of_source[c];
      canon[c] = fc >= 0 ? f[static_cast<size_t>(fc)] : std::string_view();
    }
    // Is it a holdout row? By content when the row is complete, by features always.
    bool is_holdout = false, is_dev = false;
    uint32_t dev_row = 0;
    if (full_row && labelled) {
      DigestRow key{content_digester.Digest(canon), 0};
      for (auto it = std::lower_bound(content.begin(), content.end(), key);
           it != content.end() && it->digest == key.digest; ++it) {
        if (holdout.Contains(it->row)) {
          is_holdout = true;
        } else if (!is_dev && !used[it->row]) {
          is_dev = true;
          dev_row = it->row;
        }
      }
      if (is_dev) is_holdout = false;  // an exact duplicate of a dev row is that dev row
    }
    if (!is_dev) {
      DigestRow key{feature_digester.Digest(canon), 0};
      auto it = std::lower_bound(holdout_features.begin(), holdout_features.end(), key);
      if (it != holdout_features.end() && it->digest == key.digest) is_holdout = true;
    }
    if (is_holdout || (purpose == DataPurpose::kDevRows && !is_dev)) {
      (is_holdout ? refusal->holdout_rows : refusal->not_dev_rows)++;
      if (refusal->first_lines.size() < kShownLines) refusal->first_lines.push_back(r.line);
      return Status::OK();
    }
    if (is_dev) {
      used[dev_row] = true;
      dev_rows.push_back(dev_row);
    }
    out.lines.push_back(r.line);
    out.ids.push_back(id_col && layout.file_of_source[*id_col] >= 0 ? std::string(canon[*id_col])
                                                                  : std::to_string(r.index));
    if (auto g = src.ColumnOf(ColumnRole::kGroup); g && layout.file_of_source[*g] >= 0) {
      out.groups.emplace_back(canon[*g]);
    }
    for (size_t k = 0; k < feature_cols.size(); ++k) {
      std::string_view cell = canon[feature_cols[k]];
      FrameColumn& col = out.features.columns[k];
      double v = NAN;
      if (col.numeric) {
        if (!IsMissing(cell) && !ParseNumber(cell, &v)) {
          return Status::InvalidArgument(csv->Location(r.offset) + ": column '" + col.name +
                                         "' holds '" + std::string(cell) + "'; expected a number");
        }
        col.num.push_back(v);
      } else {
        col.cat.push_back(IsMissing(cell) ? std::string() : std::string(cell));
      }
    }
    if (labelled) {
      std::string_view cell = canon[target_col];
      if (src.task == TaskKind::kClassification) {
        auto it = std::lower_bound(labels.begin(), labels.end(), CanonicalLabel(cell));
        if (it == labels.end() || *it != CanonicalLabel(cell)) {
          return Status::InvalidArgument(csv->Location(r.offset) + ": target '" + std::string(cell) +
                                         "' is not one of the source's classes");
        }
        target.push_back(static_cast<double>(it - labels.begin()));
      } else {
        double v;
        if (!ParseNumber(cell, &v)) {
          return Status::InvalidArgument(csv->Location(r.offset) + ": target '" + std::string(cell) +
                                         "' is not a number; a regression task expects numbers");
        }
        target.push_back(v);
      }
    }
    return Status::OK();
  });
  UNSEEN_RETURN_IF_ERROR(s);
  if (refusal->holdout_rows > 0 || refusal->not_dev_rows > 0) {
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
  if (out.lines.empty()) return Status::InvalidArgument(path + ": no data rows");
  out.target = Eigen::Map<Eigen::VectorXd>(target.data(), static_cast<Eigen::Index>(target.size()));
  out.source_rows = dev_rows;
  std::sort(dev_rows.begin(), dev_rows.end());
  out.rows_read = RowSet::FromSorted(dev_rows);
  UNSEEN_ASSIGN_OR_RETURN(FileDigest fd, Sha256File(path));
  out.file_sha256 = fd.sha256;
  return out;
}

LoadedData SelectRows(const LoadedData& d, const std::vector<size_t>& rows) {
  LoadedData out;
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
    out.ids.push_back(d.ids[r]);
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
                     const std::string& command, const Status& reason, const std::string& details_json) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  nlohmann::json fields = {{"command", command},
                           {"code", static_cast<int>(reason.code())},
                           {"reason", reason.message()},
                           {"details", nlohmann::json::parse(details_json)},
                           {"summary", command + " refused: " + reason.message()}};
  UNSEEN_ASSIGN_OR_RETURN(Entry e, ledger->Append("refusal", actor, fields.dump()));
  (void)e;
  return ledger->Commit();
}

}  // namespace unseen
