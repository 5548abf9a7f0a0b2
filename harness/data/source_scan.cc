#include "harness/data/source_scan.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <array>
#include <condition_variable>
#include <future>
#include <mutex>
#include <thread>
#include <unordered_map>

#include "harness/data/row_digest.h"
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
  std::unordered_map<std::string, uint64_t> labels;
  bool target_all_numeric = true, target_all_integer = true;
  double tmin = INFINITY, tmax = -INFINITY, tsum = 0;
  uint64_t first_text_target_offset = UINT64_MAX;  // for the regression error
  std::vector<std::pair<uint64_t, uint64_t>> id_hashes;  // (hash of id, record offset)
};

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

// Hashes canonical rows on a second thread, in order, in batches: the row
// digest, the content digest (the row without its id cell) and the Merkle
// tree. The parsing thread only encodes rows and hands batches over.
class RowHasher {
 public:
  RowHasher(bool with_content, SourceScan* out)
      : with_content_(with_content), out_(out), worker_([this] { Work(); }) {}
  ~RowHasher() { (void)Finish(); }

  // Adds one row's canonical bytes; [id_begin, id_end) is the id cell.
  void Add(std::string_view canonical, size_t id_begin, size_t id_end) {
    size_t start = current_.bytes.size();
    current_.bytes.append(canonical.data(), canonical.size());
    current_.rows.push_back({start, start + id_begin, start + id_end, start + canonical.size()});
    if (current_.rows.size() >= kBatchRows) Handoff();
  }

  // Hashes what is left and returns the Merkle root. Idempotent.
  Digest256 Finish() {
    if (worker_.joinable()) {
      Handoff();
      {
        std::lock_guard<std::mutex> lock(mu_);
        done_ = true;
      }
      cv_.notify_all();
      worker_.join();
    }
    return merkle_.Root();
  }

 private:
  static constexpr size_t kBatchRows = 8192;
  struct Batch {
    std::string bytes;
    std::vector<std::array<size_t, 4>> rows;  // start, id begin, id end, end
  };

  void Handoff() {
    if (current_.rows.empty()) return;
    std::unique_lock<std::mutex> lock(mu_);
    cv_.wait(lock, [this] { return !pending_full_; });
    std::swap(pending_, current_);
    pending_full_ = true;
    lock.unlock();
    cv_.notify_all();
    current_.bytes.clear();
    current_.rows.clear();
  }

  void Work() {
    Sha256 sha;
    Batch batch;
    for (;;) {
      {
        std::unique_lock<std::mutex> lock(mu_);
        cv_.wait(lock, [this] { return pending_full_ || done_; });
        if (!pending_full_) return;
        std::swap(batch, pending_);
        pending_full_ = false;
      }
      cv_.notify_all();
      const char* b = batch.bytes.data();
      for (const auto& r : batch.rows) {
        sha.Update(b + r[0], r[3] - r[0]);
        RowDigest d = TruncateToRowDigest(sha.Finish());
        out_->row_digests.push_back(d);
        merkle_.AddLeaf(d.data(), d.size());
        if (with_content_) {
          sha.Update(b + r[0], r[1] - r[0]);
          sha.Update(b + r[2], r[3] - r[2]);
          out_->content_digests.push_back(TruncateToRowDigest(sha.Finish()));
        }
      }
      batch.bytes.clear();
      batch.rows.clear();
    }
  }

  const bool with_content_;
  SourceScan* out_;
  MerkleBuilder merkle_;
  Batch current_, pending_;
  bool pending_full_ = false, done_ = false;
  std::mutex mu_;
  std::condition_variable cv_;
  std::thread worker_;  // last: starts after every member above exists
};

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

  // The file digest runs on the second core while this thread parses.
  auto file_digest = std::async(std::launch::async, [&path] { return Sha256File(path); });

  const size_t ncol = info.columns.size();
  Tally t;
  t.numeric.assign(ncol, 0);
  t.missing.assign(ncol, 0);
  std::string canonical, label;
  scan.row_digests.reserve(static_cast<size_t>(csv->size() / 64));
  RowHasher hasher(rc.id.has_value(), &scan);
  const bool regression_declared = options.task == TaskKind::kRegression;
  uint64_t next_progress = 0;

  Status parsed = csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    // Each cell is classified once and feeds the tallies and the canonical bytes.
    canonical.clear();
    size_t id_begin = 0, id_end = 0;
    for (size_t c = 0; c < ncol; ++c) {
      double v = 0;
      CellKind k = ClassifyCell(f[c], &v);
      if (rc.id && c == *rc.id) id_begin = canonical.size();
      AppendClassifiedCell(k, v, f[c], &canonical);
      if (rc.id && c == *rc.id) id_end = canonical.size();
      if (k == CellKind::kMissing) ++t.missing[c];
      if (k == CellKind::kNumber) ++t.numeric[c];
      if (c != rc.target) continue;
      if (k == CellKind::kMissing) return RequireValue(*csv, r, c, "target");
      if (k == CellKind::kNumber) {
        t.tmin = std::min(t.tmin, v);
        t.tmax = std::max(t.tmax, v);
        t.tsum += v;
        if (v != std::floor(v)) t.target_all_integer = false;
      } else {
        if (regression_declared) {
          return Status::InvalidArgument(csv->Location(csv->FieldOffset(r, c)) + ": target '" +
                                         std::string(f[c]) +
                                         "' is not a number; a regression task expects numbers");
        }
        t.target_all_numeric = false;
      }
      if (t.labels.size() <= kMaxClasses) {
        if (k == CellKind::kNumber) {
          char buf[32];
          auto res = std::to_chars(buf, buf + sizeof buf, v == 0 ? 0.0 : v);
          label.assign(buf, res.ptr);
        } else {
          label.assign(f[c].data(), f[c].size());
        }
        auto it = t.labels.find(label);
        if (it != t.labels.end()) ++it->second;
        else t.labels.emplace(label, 1);
      }
    }
    for (const auto& col : {rc.id, rc.group, rc.time}) {
      if (col) UNSEEN_RETURN_IF_ERROR(RequireValue(*csv, r, *col, ColumnRoleName(info.columns[*col].role)));
    }
    if (rc.id) t.id_hashes.emplace_back(Fnv1a(f[*rc.id]), r.offset);
    hasher.Add(canonical, id_begin, id_end);
    if (options.progress && r.offset >= next_progress) {
      options.progress(static_cast<double>(r.offset) / static_cast<double>(csv->size()));
      next_progress = r.offset + (64u << 20);
    }
    return Status::OK();
  });
  Digest256 merkle_root = hasher.Finish();
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

  for (size_t c = 0; c < ncol; ++c) {
    info.columns[c].missing = t.missing[c];
    bool numeric = t.numeric[c] > 0 && t.numeric[c] + t.missing[c] == info.rows;
    info.columns[c].type = numeric ? ColumnType::kNumeric : ColumnType::kCategorical;
  }
  if (options.task) {
    info.task = *options.task;
  } else {
    bool few_integers = t.target_all_numeric && t.target_all_integer &&
                        t.labels.size() <= kMaxAutoClasses;
    info.task = (!t.target_all_numeric || few_integers) ? TaskKind::kClassification
                                                        : TaskKind::kRegression;
  }
  if (info.task == TaskKind::kClassification) {
    if (t.labels.size() > kMaxClasses) {
      return Status::InvalidArgument("--target: column '" + options.roles.target + "' has more than " +
                                     std::to_string(kMaxClasses) +
                                     " distinct values; a classification target expects fewer");
    }
    if (t.labels.size() < 2) {
      return Status::InvalidArgument("--target: column '" + options.roles.target +
                                     "' has a single value; expected at least two classes");
    }
    info.target.classes = std::map<std::string, uint64_t>(t.labels.begin(), t.labels.end());
  } else {
    info.target.min = t.tmin;
    info.target.max = t.tmax;
    info.target.mean = t.tsum / static_cast<double>(info.rows);
  }
  if (options.progress) options.progress(1.0);
  return scan;
}

}  // namespace unseen
