#include "harness/workflow/seal.h"

#include <stdio.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <array>
#include <cstdlib>
#include <cstring>
#include <future>
#include <memory>
#include <optional>
#include <thread>
#include <unordered_map>
#include <unordered_set>

#include "harness/data/bounded_queue.h"
#include "harness/data/csv.h"
#include "harness/data/digest_index.h"
#include "harness/data/row_digest.h"
#include "harness/data/row_summary.h"
#include "harness/data/source_scan.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/holdout_sealer.h"
#include "harness/ledger/sealed_figures.h"
#include "storage/staged_file.h"
#include "storage/row_set.h"
#include "storage/sealed_blob.h"

namespace unseen {
namespace {

constexpr size_t kShownDuplicateLines = 5;

struct DigestHash {
  size_t operator()(const RowDigest& d) const {
    size_t h;
    std::memcpy(&h, d.data(), sizeof h);
    return h;
  }
};

// Pass 1: the per-row keys a strategy (or a violation count) needs.
Status ReadSplitKeys(const CsvFile& csv, const SourceInfo& src, SplitRequest* split,
                     std::vector<uint32_t>* group_of_row, SplitRequest* time_keys) {
  auto target = src.ColumnOf(ColumnRole::kTarget);
  auto group = src.ColumnOf(ColumnRole::kGroup);
  auto time = src.ColumnOf(ColumnRole::kTime);
  bool want_class = split->strategy == SplitStrategy::kStratified;
  bool time_numeric = time && src.columns[*time].type == ColumnType::kNumeric;
  std::unordered_map<std::string, uint32_t> classes, groups;
  time_keys->rows = src.rows;
  return csv.ForEachRecord([&](const CsvRecord& r) -> Status {
    const auto& f = *r.fields;
    if (want_class) {
      auto [it, _] = classes.emplace(CanonicalLabel(f[*target]), classes.size());
      split->labels.push_back(it->second);
    }
    if (group) {
      auto [it, _] = groups.emplace(std::string(f[*group]), groups.size());
      group_of_row->push_back(it->second);
    }
    if (time) {
      double v = 0;
      if (time_numeric && ParseNumber(f[*time], &v)) {
        time_keys->time_numeric.push_back(v);
      } else {
        time_keys->time_text.emplace_back(f[*time]);
      }
    }
    return Status::OK();
  });
}

// Content digests that fall on both sides. Returns the holdout rows that
// have an exact duplicate in dev, and counts the dev rows that have one.
std::vector<uint32_t> CrossDuplicates(std::string_view digests, const SplitResult& split,
                                      uint64_t* dev_rows) {
  const DigestIndex holdout(digests, &split.holdout);
  std::unordered_set<RowDigest, DigestHash> in_both;
  *dev_rows = 0;
  // Lookups land at random in the table: fetch a few rows ahead.
  constexpr size_t kAhead = 16;
  const std::vector<uint32_t>& dev = split.dev;
  for (size_t i = 0; i < dev.size(); ++i) {
    if (i + kAhead < dev.size()) holdout.Prefetch(holdout.At(dev[i + kAhead]));
    const RowDigest d = holdout.At(dev[i]);
    if (holdout.Contains(d)) {
      ++*dev_rows;
      in_both.insert(d);
    }
  }
  std::vector<uint32_t> rows;
  if (in_both.empty()) return rows;
  for (uint32_t r : split.holdout) {
    if (in_both.count(holdout.At(r))) rows.push_back(r);
  }
  return rows;
}

// Moves `rows` (ascending, all in the holdout) to dev.
void MoveToDev(const std::vector<uint32_t>& rows, SplitResult* split) {
  std::vector<uint32_t> holdout, dev;
  std::set_difference(split->holdout.begin(), split->holdout.end(), rows.begin(), rows.end(),
                      std::back_inserter(holdout));
  std::merge(split->dev.begin(), split->dev.end(), rows.begin(), rows.end(),
             std::back_inserter(dev));
  split->holdout = std::move(holdout);
  split->dev = std::move(dev);
}

bool SameFile(const std::string& a, const std::string& b) {
  struct stat sa, sb;
  return ::stat(a.c_str(), &sa) == 0 && ::stat(b.c_str(), &sb) == 0 && sa.st_dev == sb.st_dev &&
         sa.st_ino == sb.st_ino;
}

struct Pass2Output {
  std::string sealed;
  std::string feature_digests;  // 16 bytes per holdout row, in row order
  std::vector<uint64_t> holdout_lines;  // the file line of each holdout row, when asked for
  std::vector<uint64_t> duplicate_lines;
};

// The dev file's bytes: each dev record and LF, in file order, written and
// hashed on a second thread. A record that ends with LF in the source is
// passed on with its neighbours as one span of the mapped file (most dev
// records follow one another), so a span costs one write, not a copy per row.
class DevRows {
 public:
  explicit DevRows(StagedFile* file) : file_(file), worker_([this] { Work(); }) {}
  ~DevRows() { (void)Finish(); }

  // Returns the worker's first error, if it has failed so far.
  Status Add(const CsvRecord& r) {
    const bool ends_with_lf = r.raw_line.size() == r.raw.size() + 1;  // not CRLF, not the last line
    if (ends_with_lf && r.raw_line.data() == span_end_) {
      span_end_ += r.raw_line.size();
    } else {
      EndSpan();
      if (ends_with_lf) {
        span_begin_ = r.raw_line.data();
        span_end_ = span_begin_ + r.raw_line.size();
      } else {  // CRLF or no line end in the source: the dev file has LF
        current_.pieces.push_back({nullptr, current_.owned.size(), r.raw.size() + 1});
        current_.owned.append(r.raw.data(), r.raw.size());
        current_.owned.push_back('\n');
        current_.bytes += r.raw.size() + 1;
      }
    }
    if (static_cast<size_t>(span_end_ - span_begin_) >= kSpanBytes) EndSpan();
    if (current_.bytes < kBatchBytes) return Status::OK();
    return Handoff();
  }

  // Writes what is left and stops the worker; returns its first error.
  Status Finish() {
    if (worker_.joinable()) {
      EndSpan();
      if (!current_.pieces.empty()) (void)Handoff();  // a failure is in error_, returned below
      full_.Close();  // the worker writes what is queued, then returns
      worker_.join();
    }
    return error_;
  }

 private:
  static constexpr size_t kSpanBytes = size_t{1} << 20;
  static constexpr size_t kBatchBytes = size_t{4} << 20;
  struct Piece {
    const char* data;  // in the mapping, or nullptr for `owned` from `offset`
    size_t offset, size;
  };
  struct Batch {
    std::vector<Piece> pieces;
    std::string owned;
    size_t bytes = 0;
    void Clear() {
      pieces.clear();
      owned.clear();
      bytes = 0;
    }
  };

  void EndSpan() {
    if (span_end_ != span_begin_) {
      const size_t n = static_cast<size_t>(span_end_ - span_begin_);
      current_.pieces.push_back({span_begin_, 0, n});
      current_.bytes += n;
    }
    span_begin_ = span_end_ = nullptr;
  }

  // Passes current_ to the worker, waiting while a batch already waits, and takes a cleared
  // one to fill. Push() fails only once the worker has failed: this thread closes full_ only
  // after its last Handoff().
  Status Handoff() {
    const bool taken = full_.Push(std::move(current_));
    std::optional<Batch> reused = empty_.TryPop();
    current_ = reused ? std::move(*reused) : Batch();
    return taken ? Status::OK() : error_;
  }

  void Work() {
    while (std::optional<Batch> batch = full_.Pop()) {
      Status s;
      for (const Piece& p : batch->pieces) {
        const char* at = p.data ? p.data : batch->owned.data() + p.offset;
        s = file_->Write(std::string_view(at, p.size));
        if (!s.ok()) break;
      }
      if (!s.ok()) {
        // The dev file is lost: stop, and let the caller's next Handoff() fail, not wait.
        error_ = std::move(s);
        full_.Close();
        return;
      }
      batch->Clear();
      (void)empty_.Push(std::move(*batch));  // never closed, never full
    }
  }

  StagedFile* file_;
  const char* span_begin_ = nullptr;
  const char* span_end_ = nullptr;
  Batch current_;  // the caller's
  // Filled batches go to the worker through full_, one waiting at most, so that the reader is
  // at most two batches ahead; they come back cleared through empty_ for reuse (three exist).
  BoundedQueue<Batch> full_{1};
  BoundedQueue<Batch> empty_{BoundedQueue<Batch>::kNoLimit};
  // The worker's first error. It writes it before closing full_ and then stops, so the caller
  // reads it only after a Push() that failed or after joining the worker.
  Status error_;
  std::thread worker_;  // last: starts after every member above exists
};

// Pass 2: dev rows to the dev file, holdout rows into the sealed blob (on a
// second thread) and their feature digests; with `record_lines`, the file
// line of each holdout row.
Status WriteRows(const CsvFile& csv, const SourceInfo& src, const SplitResult& split,
                 bool record_lines, const Key& key, const std::string& aad, StagedFile* dev,
                 Pass2Output* out, const std::function<void(double)>& progress) {
  std::string header = std::string(csv.header_raw()) + "\n";
  UNSEEN_RETURN_IF_ERROR(dev->Write(header));
  UNSEEN_ASSIGN_OR_RETURN(
      std::unique_ptr<HoldoutSealer> sealer,
      HoldoutSealer::Create(key, aad, csv.header_raw(), src.delimiter, src.columns.size()));
  std::vector<size_t> skip;
  if (auto id = src.ColumnOf(ColumnRole::kId)) skip.push_back(*id);
  skip.push_back(*src.ColumnOf(ColumnRole::kTarget));
  RowDigester features(skip);
  DevRows dev_rows(dev);
  out->feature_digests.reserve(split.holdout.size() * sizeof(RowDigest));
  uint64_t next_progress = 0;
  // Only the holdout rows are parsed: the file is the one init read whole, and its digest is
  // checked beside this pass. Dev rows are cut at their line ends and copied as they are.
  Status s = csv.ForEachRecordParsing(split.holdout, [&](const CsvRecord& r) -> Status {
    if (r.fields == nullptr) return dev_rows.Add(r);
    if (record_lines) out->holdout_lines.push_back(r.line);
    RowDigest d = features.Digest(*r.fields);
    out->feature_digests.append(reinterpret_cast<const char*>(d.data()), d.size());
    if (progress && r.offset >= next_progress) {
      progress(static_cast<double>(r.offset) / static_cast<double>(csv.size()));
      next_progress = r.offset + (64u << 20);
    }
    return sealer->AddRow(r.raw);
  });
  Status written = dev_rows.Finish();
  UNSEEN_RETURN_IF_ERROR(s);
  UNSEEN_RETURN_IF_ERROR(written);
  UNSEEN_ASSIGN_OR_RETURN(out->sealed, sealer->Finish());
  return Status::OK();
}

// Everything one `seal` call knows, step by step. Members that a thread or a
// future reads are declared before that future, so that on an early return
// the future (which waits for its task) is destroyed first.
struct SealRun {
  const SealRequest* req = nullptr;
  std::unique_ptr<Ledger> ledger;
  LedgerState state;
  std::string data;  // the source file to read
  SealReport report;
  std::unique_ptr<CsvFile> csv;
  // Every row's row and content digests and the figures over every row, from a scan of the
  // file as init made it: init keeps none of them (only the Merkle root the scan must match).
  SourceScan scan;
  std::future<Result<FileDigest>> file_digest;  // the file's SHA-256, beside the passes
  SplitRequest time_keys;
  std::vector<uint32_t> group_of_row;
  SplitResult split;
  std::vector<uint32_t> flagged;  // holdout rows with an exact duplicate in dev
  BlobRef holdout_ref;
  std::unique_ptr<StagedFile> dev;
  Pass2Output out;
  std::array<BlobRef, 3> refs;  // dev row set, sealed rows, sealed holdout digests
  RowsSummary dev_summary;      // published: the figures over the development rows
  // Dev row digests, dev content digests (plain), sealed source figures.
  std::array<BlobRef, 3> digest_refs;
};

// The digests of `rows` out of a list of one per source row, back to back.
std::string Gather(const std::vector<RowDigest>& all, const std::vector<uint32_t>& rows) {
  std::string out;
  out.reserve(rows.size() * sizeof(RowDigest));
  for (uint32_t r : rows) out.append(reinterpret_cast<const char*>(all[r].data()), all[r].size());
  return out;
}

// The content digests of every row as bytes: the row digests when the source has no id.
std::string_view ContentBytes(const SourceScan& scan) {
  const std::vector<RowDigest>& d =
      scan.content_digests.empty() ? scan.row_digests : scan.content_digests;
  return {reinterpret_cast<const char*>(d.data()), d.size() * sizeof(RowDigest)};
}

// Options that can be checked before the ledger is opened.
Status CheckOptions(const SealRequest& req) {
  if (!(req.fraction > 0 && req.fraction < 1)) {
    return Status::InvalidArgument("--fraction: expected a number strictly between 0 and 1");
  }
  if (req.dev_out.empty()) return Status::InvalidArgument("--dev-out: a path is required");
  return Status::OK();
}

// The ledger, in the command's transaction, not sealed yet; the strategy fits the source.
Status OpenRun(SealRun* run) {
  const SealRequest& req = *run->req;
  UNSEEN_ASSIGN_OR_RETURN(run->ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(run->state, ReadLedgerState(*run->ledger));
  if (run->state.seal) {
    return Status::FailedPrecondition(req.ledger_path + ": already sealed at entry " +
                                      std::to_string(run->state.seal->entry_seq) +
                                      "; a ledger has one holdout and it is sealed once");
  }
  const SourceInfo& src = run->state.source;
  run->data = req.data_path.empty() ? run->state.source_abs_path : req.data_path;
  if (SameFile(run->data, req.dev_out)) {
    return Status::InvalidArgument("--dev-out: " + req.dev_out + " is the data file itself");
  }
  if (src.rows > kMaxSplitRows) return Status::InvalidArgument("source has too many rows to split");
  SealReport& report = run->report;
  report.has_group = src.ColumnOf(ColumnRole::kGroup).has_value();
  report.has_time = src.ColumnOf(ColumnRole::kTime).has_value();
  if (req.strategy == SplitStrategy::kGroup && !report.has_group) {
    return Status::InvalidArgument(
        "--strategy group: the source has no group column (init --group)");
  }
  if (req.strategy == SplitStrategy::kTime && !report.has_time) {
    return Status::InvalidArgument("--strategy time: the source has no time column (init --time)");
  }
  if (req.strategy == SplitStrategy::kStratified && src.task != TaskKind::kClassification) {
    return Status::InvalidArgument("--strategy stratified: needs a classification target");
  }
  return Status::OK();
}

// Opens the file and starts its digest: the file must be the one registered, and its digest
// runs beside the passes, over the mapping the rows are read from.
Status OpenSource(SealRun* run) {
  CsvOptions csv_options;
  csv_options.delimiter = run->state.source.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(run->csv, CsvFile::Open(run->data, csv_options));
  const CsvFile& file = *run->csv;
  run->file_digest = std::async(std::launch::async, [&file] { return file.Sha256(); });
  return Status::OK();
}

// The scan init made, made again: every row's digests and the figures over every row. The
// file must be the one registered, by its SHA-256 and by the Merkle root over its row digests.
Status ScanRegisteredSource(SealRun* run) {
  const SourceInfo& src = run->state.source;
  ScanOptions options;
  options.csv.delimiter = src.delimiter;
  options.task = src.task;
  for (const ColumnInfo& c : src.columns) {
    if (c.role == ColumnRole::kTarget) options.roles.target = c.name;
    if (c.role == ColumnRole::kId) options.roles.id = c.name;
    if (c.role == ColumnRole::kGroup) options.roles.group = c.name;
    if (c.role == ColumnRole::kTime) options.roles.time = c.name;
  }
  auto changed = [&](const Digest256& now) {
    return Status::InvalidArgument(run->data + ": the file's SHA-256 is " + ToHex(now) +
                                   " but the source registered at init has " +
                                   ToHex(src.file_sha256) + "; expected the same file");
  };
  Result<SourceScan> scan = ScanSource(run->data, options);
  if (!scan.ok()) {
    // A file that init read whole and that no longer reads is a changed file: say so first.
    Result<FileDigest> file = Sha256File(run->data);
    if (file.ok() && (file->sha256 != src.file_sha256 || file->size != src.file_size)) {
      return changed(file->sha256);
    }
    return scan.status();
  }
  run->scan = std::move(*scan);
  const SourceInfo& now = run->scan.info;
  if (now.file_sha256 != src.file_sha256 || now.file_size != src.file_size) {
    return changed(now.file_sha256);
  }
  if (now.merkle_root != src.merkle_root || now.rows != src.rows) {
    return Status::Corruption(run->data + ": the file has the registered SHA-256 but its rows' "
                              "Merkle root is " + ToHex(now.merkle_root) + ", not the " +
                              ToHex(src.merkle_root) + " recorded at init");
  }
  return Status::OK();
}

// The published figures: the development rows' (read from the checked file), and a refusal
// when a class would have no development row, since listing it would say that only holdout
// rows carry it (docs/row-digests.md). Nothing is written by then.
Status SummarizeDev(SealRun* run) {
  const SourceInfo& src = run->state.source;
  UNSEEN_ASSIGN_OR_RETURN(run->dev_summary, SummarizeRows(*run->csv, src, run->split.dev));
  if (src.task != TaskKind::kClassification) return Status::OK();
  for (const auto& [label, count] : run->scan.info.target.classes) {
    if (run->dev_summary.target.classes.count(label) == 0) {
      return Status::InvalidArgument(
          "class '" + label + "' (" + std::to_string(count) +
          " rows) would be in the holdout only: a model fitted on the development rows could "
          "never predict it, and the published class list would reveal it. Use --strategy "
          "stratified, another --seed or a smaller --fraction");
    }
  }
  return Status::OK();
}

// InvalidArgument unless the file read is the source registered at init.
Status CheckSourceFile(SealRun* run) {
  const SourceInfo& src = run->state.source;
  auto fd = run->file_digest.get();
  if (!fd.ok()) return fd.status();
  if (fd->sha256 != src.file_sha256 || fd->size != src.file_size) {
    return Status::InvalidArgument(run->data + ": the file's SHA-256 is " + ToHex(fd->sha256) +
                                   " but the source registered at init has " +
                                   ToHex(src.file_sha256) + "; expected the same file");
  }
  return Status::OK();
}

// Pass 1 (only when a strategy or a violation count needs keys), then the split.
Status SplitRows(SealRun* run) {
  const SealRequest& req = *run->req;
  const SourceInfo& src = run->state.source;
  SplitRequest split_req;
  split_req.strategy = req.strategy;
  split_req.fraction = req.fraction;
  split_req.seed = req.seed;
  split_req.rows = src.rows;
  if (req.strategy != SplitStrategy::kRandom || run->report.has_group || run->report.has_time) {
    UNSEEN_RETURN_IF_ERROR(
        ReadSplitKeys(*run->csv, src, &split_req, &run->group_of_row, &run->time_keys));
  }
  if (req.strategy == SplitStrategy::kGroup) split_req.labels = run->group_of_row;
  if (req.strategy == SplitStrategy::kTime) {
    split_req.time_numeric = run->time_keys.time_numeric;
    split_req.time_text = run->time_keys.time_text;
  }
  UNSEEN_ASSIGN_OR_RETURN(run->split, Split(split_req));
  return Status::OK();
}

// Exact duplicates across the cut are a leak: the holdout rows whose content digest is also a
// dev row's.
Result<std::vector<uint32_t>> FindCrossDuplicates(SealRun* run) {
  return CrossDuplicates(ContentBytes(run->scan), run->split, &run->report.cross_duplicate_dev_rows);
}

// Dropping cross-duplicates changes the split, so it happens before pass 2; then the group and
// time violations of the final split.
Status SettleSplit(SealRun* run) {
  SealReport& report = run->report;
  if (run->req->drop_cross_duplicates) {
    UNSEEN_ASSIGN_OR_RETURN(run->flagged, FindCrossDuplicates(run));
    if (!run->flagged.empty()) {
      MoveToDev(run->flagged, &run->split);
      report.dropped_cross_duplicates = true;
    }
  }
  if (report.has_group) {
    report.group_violations = CountGroupViolations(run->group_of_row, run->split.holdout);
  }
  if (report.has_time) {
    run->time_keys.strategy = SplitStrategy::kTime;
    report.time_violations = CountTimeViolations(run->time_keys, run->split);
  }
  return Status::OK();
}

// The first few holdout rows with a duplicate in dev, by their line in the file.
void NoteDuplicateLines(SealRun* run) {
  const std::vector<uint32_t>& holdout = run->split.holdout;
  for (uint32_t row : run->flagged) {
    if (run->out.duplicate_lines.size() == kShownDuplicateLines) break;
    const auto at = std::lower_bound(holdout.begin(), holdout.end(), row);
    run->out.duplicate_lines.push_back(
        run->out.holdout_lines[static_cast<size_t>(at - holdout.begin())]);
  }
}

// The development rows' digests, plain; the holdout rows' digests and the figures over every
// row, sealed under the key (harness/ledger/sealed_figures.h).
Status StoreDigestsAndFigures(SealRun* run) {
  Ledger* ledger = run->ledger.get();
  const SourceScan& scan = run->scan;
  const SplitResult& split = run->split;
  const Key& key = run->req->key;
  const std::string& id = run->state.ledger_id;
  const Digest256& holdout_set = run->holdout_ref.digest;
  HoldoutDigests held;
  held.content = Gather(scan.content_digests.empty() ? scan.row_digests : scan.content_digests,
                        split.holdout);
  held.feature = std::move(run->out.feature_digests);
  run->out.feature_digests = std::string();
  UNSEEN_ASSIGN_OR_RETURN(std::string sealed_digests,
                          SealHoldoutDigests(key, SealedDigestsAad(id, holdout_set), held));
  UNSEEN_ASSIGN_OR_RETURN(run->refs[2], ledger->PutBlob("sealed-digests", sealed_digests));
  UNSEEN_ASSIGN_OR_RETURN(
      std::string sealed_summary,
      SealSourceSummary(key, SealedSummaryAad(id, holdout_set),
                        SealedFigures{SummaryOfSource(scan.info), run->flagged.size(),
                                      run->report.cross_duplicate_dev_rows}));
  UNSEEN_ASSIGN_OR_RETURN(run->digest_refs[2], ledger->PutBlob("sealed-summary", sealed_summary));
  UNSEEN_ASSIGN_OR_RETURN(run->digest_refs[0],
                          ledger->PutBlob("row-digests", Gather(scan.row_digests, split.dev)));
  run->digest_refs[1] = run->digest_refs[0];
  if (!scan.content_digests.empty()) {
    UNSEEN_ASSIGN_OR_RETURN(
        run->digest_refs[1],
        ledger->PutBlob("content-digests", Gather(scan.content_digests, split.dev)));
  }
  return Status::OK();
}

// Pass 2: the dev file written and the holdout sealed, in one read of the file. Without
// dropping, the cross-duplicates are looked for beside it (it does not touch the ledger),
// then the blobs are stored while the dev file reaches the disk (fsync) on another thread.
Status WriteAndStore(SealRun* run) {
  const SealRequest& req = *run->req;
  // The holdout's row set binds the sealed blob (its digest is in the AAD): it comes first.
  UNSEEN_ASSIGN_OR_RETURN(
      run->holdout_ref,
      run->ledger->PutBlob("row-set", RowSet::FromSorted(run->split.holdout).Serialize()));
  run->dev = std::make_unique<StagedFile>(req.dev_out, "--dev-out");
  UNSEEN_RETURN_IF_ERROR(run->dev->Open());
  const bool find_later = !req.drop_cross_duplicates;
  if (find_later) run->out.holdout_lines.reserve(run->split.holdout.size());
  const std::string aad = SealedAad(run->state.ledger_id, run->holdout_ref.digest);
  std::future<Result<std::vector<uint32_t>>> later_duplicates;
  if (find_later) later_duplicates = std::async(std::launch::async, FindCrossDuplicates, run);
  Status written = WriteRows(*run->csv, run->state.source, run->split, find_later, req.key, aad,
                             run->dev.get(), &run->out, req.progress);
  // A file changed since init fails here, whatever the pass made of its bytes.
  UNSEEN_RETURN_IF_ERROR(CheckSourceFile(run));
  UNSEEN_RETURN_IF_ERROR(written);
  UNSEEN_RETURN_IF_ERROR(SummarizeDev(run));
  std::future<Status> closing = std::async(std::launch::async, [run] {
    return run->dev->Close(&run->report.dev_out_sha256);
  });
  auto store = [&]() -> Status {
    if (find_later) {
      UNSEEN_ASSIGN_OR_RETURN(run->flagged, later_duplicates.get());
    }
    Ledger* ledger = run->ledger.get();
    UNSEEN_ASSIGN_OR_RETURN(run->refs[1], ledger->PutBlob("sealed-rows", run->out.sealed));
    run->out.sealed = std::string();
    UNSEEN_RETURN_IF_ERROR(StoreDigestsAndFigures(run));
    if (find_later) NoteDuplicateLines(run);
    UNSEEN_ASSIGN_OR_RETURN(
        run->refs[0], ledger->PutBlob("row-set", RowSet::FromSorted(run->split.dev).Serialize()));
    return Status::OK();
  };
  Status stored = store();
  UNSEEN_RETURN_IF_ERROR(closing.get());
  UNSEEN_RETURN_IF_ERROR(stored);
  run->report.cross_duplicate_holdout_rows = run->flagged.size();
  return Status::OK();
}

// The seal entry, the commit, and only then the dev file at its path.
Status RecordSeal(SealRun* run) {
  const SealRequest& req = *run->req;
  const SplitResult& split = run->split;
  const SealReport& report = run->report;
  const auto& [dev_ref, sealed_ref, digests_ref] = run->refs;
  SealBody body;
  body.source_entry = run->state.source_seq;
  body.strategy = SplitStrategyName(req.strategy);
  body.fraction = req.fraction;
  body.seed = req.seed;
  body.requested_holdout = split.requested_holdout;
  body.split_note = split.note;
  const auto& [dev_rows_ref, dev_content_ref, summary_ref] = run->digest_refs;
  body.holdout.rows = split.holdout.size();
  body.holdout.row_set = run->holdout_ref.digest;
  body.holdout.sealed_rows = sealed_ref.digest;
  body.holdout.sealed_digests = digests_ref.digest;
  body.holdout.sealed_summary = summary_ref.digest;
  body.holdout.cipher = "AES-256-GCM";
  body.holdout.compression = "zstd";
  body.holdout.encoding = kHoldoutEncodingColumns;
  body.dev.rows = split.dev.size();
  body.dev.row_set = dev_ref.digest;
  body.dev.file_path = req.dev_out;
  body.dev.file_sha256 = report.dev_out_sha256;
  body.dev.file_size = run->dev->size();
  body.dev.row_digests = dev_rows_ref.digest;
  body.dev.content_digests = dev_content_ref.digest;
  body.dev.summary = run->dev_summary;
  body.key = req.key_info;
  body.key.key_check_hex = ToHex(KeyCheck(req.key, run->state.ledger_id));
  body.cross_duplicates_moved_to_dev = report.dropped_cross_duplicates;
  if (report.has_group) body.group_violations = report.group_violations;
  if (report.has_time) body.time_violations = report.time_violations;
  body.budget_queries = req.budget_queries;
  body.budget_half_width = req.budget_half_width;  // recorded only when positive
  body.budget_delta = req.budget_delta;
  std::vector<BlobRef> blobs = {run->holdout_ref, dev_ref,      sealed_ref,
                                digests_ref,      dev_rows_ref, summary_ref};
  if (dev_content_ref.digest != dev_rows_ref.digest) blobs.push_back(dev_content_ref);
  UNSEEN_ASSIGN_OR_RETURN(Entry entry, AppendEntry(run->ledger.get(), req.actor, body, blobs));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Commit());
  UNSEEN_RETURN_IF_ERROR(run->dev->MoveIntoPlace());
  run->report.head = entry.hash;
  return Status::OK();
}

}  // namespace

Result<SealReport> SealHoldout(const SealRequest& req) {
  UNSEEN_RETURN_IF_ERROR(CheckOptions(req));
  auto run = std::make_unique<SealRun>();
  run->req = &req;
  UNSEEN_RETURN_IF_ERROR(OpenRun(run.get()));
  UNSEEN_RETURN_IF_ERROR(ScanRegisteredSource(run.get()));
  UNSEEN_RETURN_IF_ERROR(OpenSource(run.get()));
  UNSEEN_RETURN_IF_ERROR(SplitRows(run.get()));
  UNSEEN_RETURN_IF_ERROR(SettleSplit(run.get()));
  UNSEEN_RETURN_IF_ERROR(WriteAndStore(run.get()));
  UNSEEN_RETURN_IF_ERROR(RecordSeal(run.get()));

  SealReport& report = run->report;
  UNSEEN_ASSIGN_OR_RETURN(LedgerState after, ReadLedgerState(*run->ledger));
  report.seal = *after.seal;
  report.requested_holdout = run->split.requested_holdout;
  report.split_note = run->split.note;
  report.cross_duplicate_lines = run->out.duplicate_lines;
  report.sealed_bytes = run->refs[1].size;
  return std::move(report);
}

}  // namespace unseen
