// The parallel part of ScanSource (source_scan.h): rows are read in file order by one thread and
// handed over in batches; worker threads classify every cell, encode the canonical rows, hash
// them (row and content digests, and the Merkle subtree of each full batch) and tally the
// columns; the results are merged strictly in batch order, so every sum and every digest list
// is what a single thread reading the rows in order would compute. Internal to harness/data.
#ifndef UNSEEN_HARNESS_DATA_SCAN_BATCHES_H_
#define UNSEEN_HARNESS_DATA_SCAN_BATCHES_H_

#include <cstdint>
#include <functional>
#include <map>
#include <memory>
#include <mutex>
#include <optional>
#include <string>
#include <string_view>
#include <thread>
#include <unordered_map>
#include <vector>

#include "harness/data/bounded_queue.h"
#include "storage/digest.h"
#include "storage/merkle.h"

namespace unseen::internal {

// Target labels counted by value: numbers by their bits (no string is built per row), text by
// its bytes. Numbers and text never share a canonical label, since text is what does not parse
// as a number.
class LabelTally {
 public:
  size_t size() const { return few_.size() + many_.size() + texts_.size(); }
  void AddNumber(double v, uint64_t n = 1);
  void AddText(std::string_view cell, uint64_t n = 1);
  // Adds `other`'s counts; a label not counted yet is added only while size() <= cap, as when
  // the rows are tallied one by one and tallying stops past the cap.
  void Merge(const LabelTally& other, size_t cap);
  // Labels in their canonical spelling (a number by its shortest round-trip form), with counts.
  std::map<std::string, uint64_t> Counts() const;

 private:
  // A classification target has a few labels: a linear search over them beats hashing. Past
  // kFew, numbers move to the hash map.
  static constexpr size_t kFew = 32;
  std::vector<std::pair<uint64_t, uint64_t>> few_;  // (bits, count)
  std::unordered_map<uint64_t, uint64_t> many_;
  std::unordered_map<std::string, uint64_t> texts_;
};

// Which columns play a part in the digests and tallies.
struct ScanLayout {
  size_t columns = 0;
  size_t target = 0;
  std::optional<size_t> id;
};

// Rows as read: cell c of row r is bytes[bounds[2k], bounds[2k + 1]) with k = r * columns + c.
// (The reading thread copies each record's bytes whole, and only an unescaped quoted field on
// its own.)
struct ScanBatch {
  uint64_t index = 0;  // batch number, from 0 in file order
  std::string bytes;
  std::vector<size_t> bounds;
  size_t rows = 0;
  void Clear() {
    bytes.clear();
    bounds.clear();
    rows = 0;
  }
};
// A batch is handed over at kScanBatchRows rows, or sooner past this many bytes.
inline constexpr size_t kScanBatchMaxBytes = size_t{64} << 20;

// A power of two, so every full batch is a perfect Merkle subtree of this height.
inline constexpr int kScanBatchHeight = 13;
inline constexpr size_t kScanBatchRows = size_t{1} << kScanBatchHeight;

// What a batch contributes to the scan.
struct ScanResult {
  std::vector<RowDigest> row_digests;
  std::vector<RowDigest> content_digests;  // empty without an id column
  Digest256 subtree_root{};                // Merkle root of the row digests, when full
  std::vector<uint64_t> numeric, missing;  // per column
  LabelTally labels;                       // target labels, while at most cap distinct
  bool target_all_numeric = true, target_all_integer = true;
  double tmin, tmax;
  std::vector<double> target_values;  // numeric targets in row order, for the sum
};

// Classifies, encodes, hashes and tallies the rows of `batch` into *out. Stops adding new
// labels past `label_cap` distinct ones.
void ScanRows(const ScanLayout& layout, const ScanBatch& batch, size_t label_cap, ScanResult* out);

// Runs ScanRows on worker threads and hands each result to `merge` in batch order, one call at
// a time. Add() and Finish() must be called from one thread.
class ScanPipeline {
 public:
  using MergeFn = std::function<void(const ScanBatch&, const ScanResult&)>;
  ScanPipeline(ScanLayout layout, size_t label_cap, int workers, MergeFn merge);
  ~ScanPipeline();  // Finish()es if needed
  ScanPipeline(const ScanPipeline&) = delete;
  ScanPipeline& operator=(const ScanPipeline&) = delete;

  // A cleared batch to fill; give it back with Add(). Blocks while enough batches are in flight.
  // A batch dropped instead of added (on an error, before Finish()) still counts as in flight.
  std::unique_ptr<ScanBatch> NewBatch();
  void Add(std::unique_ptr<ScanBatch> batch);
  // Waits until every batch added has been merged, and stops the workers. Idempotent.
  void Finish();

 private:
  struct Done {
    std::unique_ptr<ScanBatch> batch;
    std::unique_ptr<ScanResult> result;
  };
  void Work();
  // Files `done` by its index, then merges every batch whose turn has come, unless another
  // worker is merging: it then merges this one too when its turn comes.
  void MergeInOrder(Done done);

  const ScanLayout layout_;
  const size_t label_cap_;
  const MergeFn merge_;
  // Bounded memory: at most this many batches exist, each queued, being scanned, waiting to be
  // merged, or cleared in free_ (a few per worker).
  const size_t max_batches_;
  size_t batches_ = 0;       // made by NewBatch() so far; the caller's thread only
  uint64_t next_index_ = 0;  // the next batch Add() numbers; the caller's thread only
  bool finished_ = false;    // the caller's thread only
  // A batch is in one place at a time, so neither batch queue is ever full. Results are made by
  // the workers as needed and are bounded the same way, but not as plainly: no limit.
  BoundedQueue<std::unique_ptr<ScanBatch>> queue_;          // added, not yet taken
  BoundedQueue<std::unique_ptr<ScanBatch>> free_;           // cleared, for NewBatch()
  BoundedQueue<std::unique_ptr<ScanResult>> free_results_;  // merged, for reuse
  std::mutex merge_mu_;                                     // guards the three below
  std::map<uint64_t, Done> done_;                           // processed, waiting for their turn
  uint64_t next_merge_ = 0;                                 // the next batch to merge
  bool merging_ = false;                                    // a worker is merging
  std::vector<std::thread> workers_;
};

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_DATA_SCAN_BATCHES_H_
