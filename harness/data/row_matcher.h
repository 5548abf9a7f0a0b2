// RowMatcher: decides, row by row, whether the rows of a file brought in are rows of the source
// and whether they touch the sealed holdout, on a thread of its own while the caller goes on
// reading the file.
//
// The caller hands the records over in batches, in file order. The matcher splits them into
// cells, encodes each row's canonical bytes (row_digest.h), hashes them and looks them up:
//   - by content digest among all the source's rows (when the file has every column): a match
//     with a holdout row marks the row as a holdout row, unless it also matches a development
//     row not matched yet, which it then is (the first such in row order);
//   - by feature digest (every column but the id and the target) among the holdout's rows,
//     for every row not matched to a development row.
// Batches are processed one after another in the order added, so the result is what one
// thread reading the file in order would decide. Add() and Finish() must be called from one
// thread.
#ifndef UNSEEN_HARNESS_DATA_ROW_MATCHER_H_
#define UNSEEN_HARNESS_DATA_ROW_MATCHER_H_

#include <atomic>
#include <cstdint>
#include <functional>
#include <future>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <thread>
#include <vector>

#include "harness/data/bounded_queue.h"
#include "harness/data/digest_index.h"
#include "harness/data/row_digest.h"
#include "storage/row_set.h"
#include "storage/status.h"

namespace unseen {

// Rows handed to the matcher, in file order: each record's bytes as the file has them (views
// into the CsvFile, which must outlive the matcher, from a pass that found them well formed) and
// the line it starts on. The matcher splits and classifies the cells itself, so the reading
// thread does no more for it than this.
struct MatchBatch {
  std::vector<std::string_view> records;
  std::vector<uint64_t> lines;
  size_t bytes = 0;

  // Rows per batch: large enough that handing over costs nothing, small enough that the
  // matcher starts early. A batch is also handed over past kMaxBytes, so that the matcher,
  // a few batches behind the reader, stays within the pages CsvFile keeps mapped behind its
  // cursor (csv.h).
  static constexpr size_t kRows = 4096;
  static constexpr size_t kMaxBytes = size_t{4} << 20;

  size_t rows() const { return lines.size(); }
  bool full() const { return rows() >= kRows || bytes >= kMaxBytes; }
  void AddRow(std::string_view raw, uint64_t line) {
    records.push_back(raw);
    lines.push_back(line);
    bytes += raw.size();
  }
  void Clear() {
    records.clear();
    lines.clear();
    bytes = 0;
  }
};

// How the file's records map onto the source's columns.
struct MatchLayout {
  char delimiter = ',';
  // Source column c is field file_of_source[c] of a record, or absent (an empty cell) when -1.
  std::vector<int> file_of_source;
};

struct MatchResult {
  Status status;                      // OK, or why the tables could not be loaded
  std::vector<uint32_t> dev_rows;     // the source row of each row matched to a development row
  uint64_t holdout_rows = 0;          // rows that match a holdout row
  uint64_t other_rows = 0;            // rows that match neither (when every row must be dev)
  std::vector<uint64_t> first_lines;  // lines of the first few rows counted above
};

// What rows are matched against. Without the key only the development rows' digests are
// known: then `known_rows` lists them, `holdout` is empty and so is the feature list, and a row
// is either a development row or unknown, never a holdout row (docs/row-digests.md).
struct MatchTables {
  // 16 bytes for each source row, in row order; only the rows in known_rows are looked up.
  std::string content_digests;
  std::string holdout_feature_digests;  // of every holdout row, in row order; may be empty
  RowSet holdout;                       // the holdout's row numbers; empty without the key
  // The rows whose content digests are known (ascending); empty: every row.
  std::vector<uint32_t> known_rows;
};

class RowMatcher {
 public:
  // Indexes `tables` on the matcher's thread, while the caller starts reading. `layout` maps
  // the file's fields onto the source's columns; `target` is the source's target column and
  // `id` its id column, if any. With
  // `by_content` false (the file lacks a column), rows are matched by features only and none
  // is a development row. With `dev_required`, a row matched to no development row is
  // counted in other_rows.
  // REQUIRES: tables.content_digests holds 16 bytes for each source row.
  RowMatcher(MatchTables tables, MatchLayout layout, size_t target, std::optional<size_t> id,
             bool by_content, bool dev_required);
  // The same, with the tables loaded by `load` on the matcher's thread, so that reading them
  // overlaps the caller's reading too. When `load` fails, batches are taken and not matched,
  // and Finish() returns its status. `load` must not touch what the caller uses meanwhile.
  //
  // With `held`, the matcher starts held, for a caller that may yet learn the answer another
  // way (and Stop()): until Release(), Stop() or Finish(), the thread neither loads the tables
  // nor matches, and NewBatch() never blocks, so batches queue up without bound. Meant for a
  // short wait, such as a file digest that runs several times faster than the reader: the
  // matcher then takes no CPU from the reader, and after Stop() it never loads the tables at
  // all. After Release() it loads them and catches up on the queued batches; views into pages
  // the CsvFile has released by then are read in again.
  RowMatcher(std::function<Result<MatchTables>()> load, MatchLayout layout, size_t target,
             std::optional<size_t> id, bool by_content, bool dev_required, bool held = false);
  ~RowMatcher();  // Finish()es if needed
  RowMatcher(const RowMatcher&) = delete;
  RowMatcher& operator=(const RowMatcher&) = delete;

  // A cleared batch to fill; give it back with Add(). Blocks while two batches wait, unless
  // held.
  std::unique_ptr<MatchBatch> NewBatch();
  void Add(std::unique_ptr<MatchBatch> batch);
  // Ends a hold (see the constructor). Thread-safe.
  void Release();
  // Tells the thread to match no further batches: the caller knows the answer another way.
  // Thread-safe; the result Finish() returns is then partial and must not be used.
  void Stop();
  // Whether Stop() has been called: batches added since are not matched, so the caller may
  // stop filling them. Thread-safe.
  bool stopped() const { return stopped_.load(std::memory_order_relaxed); }
  // Waits until every batch added is matched, stops the thread and returns the result.
  // Call once.
  MatchResult Finish();

 private:
  void Work();
  void Match(const MatchBatch& b);
  // Encodes the rows of `b` into bytes_, ends_, target_begin_ and target_end_.
  void Encode(const MatchBatch& b);

  std::function<Result<MatchTables>()> load_;              // run first by the thread
  MatchTables tables_;                                     // what load_ gave
  std::optional<DigestIndex> content_, holdout_features_;  // built by the thread, first
  bool match_features_ = false;  // some holdout feature digest is known
  const MatchLayout layout_;
  const size_t target_;
  const std::optional<size_t> id_;
  const bool by_content_, dev_required_;
  std::vector<bool> used_;  // source rows already matched
  MatchResult result_;
  // The batch being matched, encoded: row i's content bytes (every column but the id) are
  // bytes_[ends_[i-1], ends_[i]) (from 0 for i = 0), its target cell [target_begin_[i],
  // target_end_[i]).
  std::string bytes_;
  std::vector<uint32_t> ends_, target_begin_, target_end_;
  std::vector<RowDigest> content_digests_;
  std::vector<std::string_view> fields_;  // of the record being encoded
  std::string scratch_;

  // Batches go to the thread through queue_ and come back through free_, matched or not, for
  // NewBatch() to reuse. Neither queue is bounded itself: what bounds them is the number of
  // batches that exist (batches_), which NewBatch() keeps at kMaxOutstanding except while held.
  using BatchQueue = BoundedQueue<std::unique_ptr<MatchBatch>>;
  BatchQueue queue_{BatchQueue::kNoLimit};  // added, not yet matched
  BatchQueue free_{BatchQueue::kNoLimit};   // matched, for NewBatch()
  // Batches made by NewBatch() and not yet freed by the thread: with the caller, in queue_,
  // being matched or in free_. Only NewBatch() adds and only the thread subtracts.
  std::atomic<size_t> batches_{0};
  std::atomic<bool> held_;  // started held, and no Release(), Stop() or Finish() since
  std::atomic<bool> stopped_{false};
  // The end of the hold, which the thread waits for before anything else: made ready once, by
  // the first Release(), Stop() or Finish() (at once when not held).
  std::once_flag release_once_;
  std::promise<void> release_;
  std::future<void> released_ = release_.get_future();
  std::thread worker_;  // last: starts after every member above exists
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_ROW_MATCHER_H_
