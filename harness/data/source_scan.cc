#include "harness/data/source_scan.h"

#include <algorithm>
#include <array>
#include <charconv>
#include <cmath>
#include <condition_variable>
#include <cstring>
#include <future>
#include <map>
#include <memory>
#include <mutex>
#include <thread>
#include <unordered_map>

#include "harness/data/row_digest.h"
#include "harness/data/scan_batches.h"
#include "storage/merkle.h"

namespace unseen {
namespace {

struct RoleColumns {
  size_t target = 0;
  std::optional<size_t> id, group, time;
};

Result<RoleColumns> ResolveRoles(const CsvFile& csv, const SourceRoles& roles,
                                 std::vector<ColumnInfo>* columns) {
  const std::vector<std::string>& header = csv.header();
  columns->clear();
  for (const std::string& name : header) columns->push_back(ColumnInfo{name});
  RoleColumns rc;
  auto assign = [&](const std::string& name, ColumnRole role,
                    const char* option) -> Result<std::optional<size_t>> {
    if (name.empty()) return std::optional<size_t>();
    auto it = std::find(header.begin(), header.end(), name);
    if (it == header.end()) {
      return Status::InvalidArgument(std::string(option) + ": no column named '" + name + "' in " +
                                     csv.path() + " (its columns: " + [&] {
                                       std::string all;
                                       for (const auto& h : header) all += (all.empty() ? "" : ", ") + h;
                                       return all;
                                     }() + ")");
    }
    size_t c = static_cast<size_t>(it - header.begin());
    if ((*columns)[c].role != ColumnRole::kFeature) {
      return Status::InvalidArgument(std::string(option) + ": column '" + name +
                                     "' already has the role " + ColumnRoleName((*columns)[c].role));
    }
    (*columns)[c].role = role;
    return std::optional<size_t>(c);
  };
  if (roles.target.empty()) return Status::InvalidArgument("--target: a target column is required");
  UNSEEN_ASSIGN_OR_RETURN(auto target, assign(roles.target, ColumnRole::kTarget, "--target"));
  rc.target = *target;
  UNSEEN_ASSIGN_OR_RETURN(rc.id, assign(roles.id, ColumnRole::kId, "--id"));
  UNSEEN_ASSIGN_OR_RETURN(rc.group, assign(roles.group, ColumnRole::kGroup, "--group"));
  UNSEEN_ASSIGN_OR_RETURN(rc.time, assign(roles.time, ColumnRole::kTime, "--time"));
  return rc;
}

// Per-column and target statistics gathered while streaming.
struct Tally {
  std::vector<uint64_t> numeric, missing;
  internal::LabelTally labels;
  bool target_all_numeric = true, target_all_integer = true;
  double tmin = INFINITY, tmax = -INFINITY, tsum = 0;
  std::vector<std::pair<uint64_t, uint64_t>> id_hashes;  // (hash of id, record offset)
};

// Copies record `r` into `batch`: its bytes whole, and the bounds of each
// field in them (an unescaped quoted field, which lives outside the record's
// bytes, is copied on its own).
void AddToBatch(const CsvRecord& r, internal::ScanBatch* batch) {
  const size_t base = batch->bytes.size();
  batch->bytes.append(r.raw.data(), r.raw.size());
  const char* const raw = r.raw.data();
  for (std::string_view f : *r.fields) {
    size_t begin;
    if (f.data() >= raw && f.data() + f.size() <= raw + r.raw.size()) {
      begin = base + static_cast<size_t>(f.data() - raw);
    } else {
      begin = batch->bytes.size();
      batch->bytes.append(f.data(), f.size());
    }
    batch->bounds.push_back(begin);
    batch->bounds.push_back(begin + f.size());
  }
}

// Adds a batch's results to the scan, in batch order.
void MergeBatch(const internal::ScanBatch& batch, const internal::ScanResult& r,
                MerkleBuilder* merkle, SourceScan* scan, Tally* t) {
  scan->row_digests.insert(scan->row_digests.end(), r.row_digests.begin(), r.row_digests.end());
  scan->content_digests.insert(scan->content_digests.end(), r.content_digests.begin(),
                               r.content_digests.end());
  // A full batch that starts at a multiple of its size is a perfect subtree.
  if (batch.rows == internal::kScanBatchRows && merkle->size() % internal::kScanBatchRows == 0) {
    merkle->AddSubtree(r.subtree_root, internal::kScanBatchHeight);
  } else {
    merkle->AddLeaves(r.row_digests.data(), sizeof(RowDigest), r.row_digests.size());
  }
  for (size_t c = 0; c < t->numeric.size(); ++c) {
    t->numeric[c] += r.numeric[c];
    t->missing[c] += r.missing[c];
  }
  t->labels.Merge(r.labels, kMaxClasses);
  t->target_all_numeric = t->target_all_numeric && r.target_all_numeric;
  t->target_all_integer = t->target_all_integer && r.target_all_integer;
  t->tmin = std::min(t->tmin, r.tmin);
  t->tmax = std::max(t->tmax, r.tmax);
  for (double v : r.target_values) t->tsum += v;  // row order, as one reader would add them
}

uint64_t Fnv1a(std::string_view s) {
  uint64_t h = 1469598103934665603ull;
  for (unsigned char c : s) h = (h ^ c) * 1099511628211ull;
  return h;
}

Status RequireValue(const CsvFile& csv, const CsvRecord& r, size_t col, const char* role) {
  if (!IsMissing((*r.fields)[col])) return Status::OK();
  return Status::InvalidArgument(csv.Location(csv.FieldOffset(r, col)) + ": missing " + role +
                                 " value in column '" + csv.header()[col] + "'; expected a value");
}

Status CheckDuplicateIds(const CsvFile& csv, Tally* t, size_t id_col) {
  std::sort(t->id_hashes.begin(), t->id_hashes.end());
  for (size_t i = 1; i < t->id_hashes.size(); ++i) {
    if (t->id_hashes[i].first != t->id_hashes[i - 1].first) continue;
    // Equal hashes: compare the ids themselves by re-reading both records.
    uint64_t a = t->id_hashes[i - 1].second, b = t->id_hashes[i].second;
    std::string ida, idb;
    uint64_t later = std::max(a, b), earlier = std::min(a, b), later_field = 0;
    Status s = csv.ForEachRecord([&](const CsvRecord& r) -> Status {
      if (r.offset == earlier) ida = std::string((*r.fields)[id_col]);
      if (r.offset == later) {
        idb = std::string((*r.fields)[id_col]);
        later_field = csv.FieldOffset(r, id_col);
        return Status::Refused("done");
      }
      return Status::OK();
    });
    if (ida == idb) {
      return Status::InvalidArgument(csv.Location(later_field) + ": duplicate id '" + idb +
                                     "' (first at " + csv.Location(earlier) +
                                     "); expected every id to be unique");
    }
  }
  return Status::OK();
}

// A record's role cells: the target is present (and a number for a declared regression
// task), and so are the id, group and time. InvalidArgument at the cell otherwise.
Status CheckRoleCells(const CsvFile& csv, const CsvRecord& r, const RoleColumns& rc,
                      const SourceInfo& info, bool regression_declared) {
  const std::string_view target = (*r.fields)[rc.target];
  if (IsMissing(target)) return RequireValue(csv, r, rc.target, "target");
  double v;
  if (regression_declared && !ParseNumber(target, &v)) {
    return Status::InvalidArgument(csv.Location(csv.FieldOffset(r, rc.target)) + ": target '" +
                                   std::string(target) +
                                   "' is not a number; a regression task expects numbers");
  }
  for (const auto& col : {rc.id, rc.group, rc.time}) {
    if (col) {
      UNSEEN_RETURN_IF_ERROR(RequireValue(csv, r, *col, ColumnRoleName(info.columns[*col].role)));
    }
  }
  return Status::OK();
}

// Column types from the tally: numeric when every present cell is a number.
void SetColumnTypes(const Tally& t, SourceInfo* info) {
  for (size_t c = 0; c < info->columns.size(); ++c) {
    info->columns[c].missing = t.missing[c];
    bool numeric = t.numeric[c] > 0 && t.numeric[c] + t.missing[c] == info->rows;
    info->columns[c].type = numeric ? ColumnType::kNumeric : ColumnType::kCategorical;
  }
}

// The task (declared, or guessed from the target) and the target's summary.
Status SetTask(const Tally& t, const ScanOptions& options, SourceInfo* info) {
  if (options.task) {
    info->task = *options.task;
  } else {
    bool few_integers = t.target_all_numeric && t.target_all_integer &&
                        t.labels.size() <= kMaxAutoClasses;
    info->task = (!t.target_all_numeric || few_integers) ? TaskKind::kClassification
                                                         : TaskKind::kRegression;
  }
  if (info->task == TaskKind::kClassification) {
    if (t.labels.size() > kMaxClasses) {
      return Status::InvalidArgument("--target: column '" + options.roles.target +
                                     "' has more than " + std::to_string(kMaxClasses) +
                                     " distinct values; a classification target expects fewer");
    }
    if (t.labels.size() < 2) {
      return Status::InvalidArgument("--target: column '" + options.roles.target +
                                     "' has a single value; expected at least two classes");
    }
    info->target.classes = t.labels.Counts();
  } else {
    info->target.min = t.tmin;
    info->target.max = t.tmax;
    info->target.mean = t.tsum / static_cast<double>(info->rows);
  }
  return Status::OK();
}

}  // namespace

std::string CanonicalLabel(std::string_view cell) {
  double v;
  if (ClassifyCell(cell, &v) != CellKind::kNumber) return std::string(cell);
  if (v == 0) v = 0;
  char buf[32];
  auto res = std::to_chars(buf, buf + sizeof buf, v);
  return std::string(buf, res.ptr);
}

Result<SourceScan> ScanSource(const std::string& path, const ScanOptions& options) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<CsvFile> csv, CsvFile::Open(path, options.csv));
  SourceScan scan;
  SourceInfo& info = scan.info;
  info.path = path;
  info.delimiter = options.csv.delimiter;
  info.file_size = csv->size();
  info.row_digest_format = kRowDigestFormat;
  UNSEEN_ASSIGN_OR_RETURN(RoleColumns rc, ResolveRoles(*csv, options.roles, &info.columns));

  // The file digest runs beside the parse, over the same mapping.
  auto file_digest = std::async(std::launch::async, [&csv] { return csv->Sha256(); });

  const size_t ncol = info.columns.size();
  Tally t;
  t.numeric.assign(ncol, 0);
  t.missing.assign(ncol, 0);
  scan.row_digests.reserve(static_cast<size_t>(csv->size() / 64));
  MerkleBuilder merkle;
  internal::ScanLayout layout{ncol, rc.target, rc.id};
  // This thread reads and checks records in order (so errors come in file order) and copies
  // their cells into batches; two workers classify, encode, hash and tally them.
  internal::ScanPipeline pipeline(layout, kMaxClasses, 2,
                                  [&](const internal::ScanBatch& b, const internal::ScanResult& r) {
                                    MergeBatch(b, r, &merkle, &scan, &t);
                                  });
  const bool regression_declared = options.task == TaskKind::kRegression;
  uint64_t next_progress = 0;
  std::unique_ptr<internal::ScanBatch> batch;

  Status parsed = csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    UNSEEN_RETURN_IF_ERROR(CheckRoleCells(*csv, r, rc, info, regression_declared));
    if (rc.id) t.id_hashes.emplace_back(Fnv1a((*r.fields)[*rc.id]), r.offset);
    if (!batch) batch = pipeline.NewBatch();
    AddToBatch(r, batch.get());
    if (++batch->rows == internal::kScanBatchRows ||
        batch->bytes.size() >= internal::kScanBatchMaxBytes) {
      pipeline.Add(std::move(batch));
    }
    if (options.progress && r.offset >= next_progress) {
      options.progress(static_cast<double>(r.offset) / static_cast<double>(csv->size()));
      next_progress = r.offset + (64u << 20);
    }
    return Status::OK();
  });
  if (parsed.ok() && batch && batch->rows > 0) pipeline.Add(std::move(batch));
  pipeline.Finish();
  Digest256 merkle_root = merkle.Root();
  auto file = file_digest.get();
  UNSEEN_RETURN_IF_ERROR(parsed);
  if (!file.ok()) return file.status();
  info.file_sha256 = file->sha256;
  if (file->size != info.file_size) {
    return Status::InvalidArgument(path + ": the file changed while it was being read");
  }
  info.rows = scan.row_digests.size();
  if (info.rows < 2) {
    return Status::InvalidArgument(path + ": " + std::to_string(info.rows) +
                                   " data row(s); expected at least 2");
  }
  if (rc.id) UNSEEN_RETURN_IF_ERROR(CheckDuplicateIds(*csv, &t, *rc.id));
  info.merkle_root = merkle_root;

  SetColumnTypes(t, &info);
  UNSEEN_RETURN_IF_ERROR(SetTask(t, options, &info));
  if (options.progress) options.progress(1.0);
  return scan;
}

}  // namespace unseen
