// HoldoutSealer: seals the holdout rows while `seal` reads the file, on a
// second thread. The caller adds each holdout row as it reaches it; a worker
// encodes the rows in batches (columns-1, harness/data/holdout_rows.h), then
// compresses and encrypts them (SealedWriter: zstd, then AES-256-GCM), so the
// reading thread does not wait for compression. The caller's methods must be
// called from one thread.
#ifndef UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_
#define UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_

#include <memory>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

#include "harness/data/bounded_queue.h"
#include "harness/data/holdout_rows.h"
#include "storage/seal_crypto.h"
#include "storage/sealed_blob.h"
#include "storage/status.h"

namespace unseen {

class HoldoutSealer {
 public:
  // A sealer bound to `aad` for rows of `columns` fields separated by
  // `delimiter`, below `header` (the header row, without line end). Errors
  // as for SealedWriter::Create().
  static Result<std::unique_ptr<HoldoutSealer>> Create(const Key& key, std::string aad,
                                                       std::string_view header, char delimiter,
                                                       size_t columns);
  ~HoldoutSealer();  // stops the worker; the blob so far is discarded
  HoldoutSealer(const HoldoutSealer&) = delete;
  HoldoutSealer& operator=(const HoldoutSealer&) = delete;

  // Adds one row: `raw`, a record as in the file without its line end.
  // Returns the worker's first error, if it has failed so far.
  Status AddRow(std::string_view raw);

  // Seals what is left, stops the worker and returns the blob, or the first
  // error. REQUIRES: called once, after the last AddRow().
  Result<std::string> Finish();

 private:
  // Rows back to back, each followed by LF; row i is text[starts[i], ends[i]).
  struct Batch {
    std::string text;
    std::vector<size_t> starts, ends;
    void Clear() {
      text.clear();
      starts.clear();
      ends.clear();
    }
  };

  HoldoutSealer(std::unique_ptr<SealedWriter> writer, char delimiter, size_t columns);
  // Passes current_ to the worker, waiting while a batch already waits, and takes a cleared one
  // to fill. Returns the worker's error if it has failed (it then closed full_).
  Status Handoff();
  void Work();
  void Stop();  // closes full_ and joins the worker, which seals what is queued first

  static constexpr size_t kBatchBytes = size_t{1} << 20;

  std::unique_ptr<SealedWriter> writer_;  // used by the worker only, once it runs
  HoldoutRowsEncoder encoder_;            // likewise
  Batch current_;                         // the caller's batch
  // Filled batches go to the worker through full_, one waiting at most, so that the reader is
  // at most two batches ahead; they come back cleared through empty_ for reuse (three exist).
  BoundedQueue<Batch> full_{1};
  BoundedQueue<Batch> empty_{BoundedQueue<Batch>::kNoLimit};
  // The worker's first error. It writes it before closing full_ and then stops, so the caller
  // reads it only after a Push() that failed or after joining the worker.
  Status error_;
  std::thread worker_;  // last: starts after every member above exists
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_
