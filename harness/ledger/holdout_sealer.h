// HoldoutSealer: seals the holdout rows while `seal` reads the file, on a
// second thread. The caller adds each holdout row as it reaches it; a worker
// encodes the rows in batches (columns-1, harness/data/holdout_rows.h), then
// compresses and encrypts them (SealedWriter: zstd, then AES-256-GCM), so the
// reading thread does not wait for compression. The caller's methods must be
// called from one thread.
#ifndef UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_
#define UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_

#include <condition_variable>
#include <memory>
#include <mutex>
#include <string>
#include <string_view>
#include <thread>
#include <vector>

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
  void Handoff();  // passes current_ to the worker; waits while it is busy
  void Work();

  static constexpr size_t kBatchBytes = size_t{1} << 20;

  std::unique_ptr<SealedWriter> writer_;  // used by the worker only, once it runs
  HoldoutRowsEncoder encoder_;            // likewise
  Batch current_;                         // the caller's batch
  Batch pending_;                         // the batch handed over, guarded by mu_
  bool pending_full_ = false, done_ = false;
  Status error_;  // the worker's first error, guarded by mu_
  std::mutex mu_;
  std::condition_variable cv_;
  std::thread worker_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_HOLDOUT_SEALER_H_
