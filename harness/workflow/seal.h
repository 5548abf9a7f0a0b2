// SealHoldout: carve the holdout, encrypt it into the ledger, commit to its
// digests and write the development rows (the `seal` command).
//
// Deterministic: the same source, strategy, fraction and seed give the same
// partition and a byte-identical dev file, whatever key is used.
// Thread-compatible; uses a second thread for the file digest.
#ifndef UNSEEN_HARNESS_WORKFLOW_SEAL_H_
#define UNSEEN_HARNESS_WORKFLOW_SEAL_H_

#include <functional>
#include <string>
#include <vector>

#include "harness/sampling/split.h"
#include "harness/ledger/ledger_state.h"
#include "storage/seal_crypto.h"

namespace unseen {

inline constexpr uint64_t kDefaultBudgetQueries = 100;

struct SealRequest {
  std::string ledger_path;
  std::string data_path;  // empty: the path registered at init
  std::string dev_out;
  std::string actor;
  Key key{};
  KeyInfo key_info;       // how the key was obtained; key_check is filled in here
  SplitStrategy strategy = SplitStrategy::kRandom;
  double fraction = 0.2;
  uint64_t seed = 0;
  bool drop_cross_duplicates = false;
  uint64_t budget_queries = kDefaultBudgetQueries;
  // Optional: refuse a query whose Hoeffding half-width on a [0, 1] loss, at
  // budget_delta over every question so far (ln H), would pass this. 0: none.
  double budget_half_width = 0;
  double budget_delta = 0.05;
  std::function<void(double)> progress;
};

struct SealReport {
  SealInfo seal;
  uint64_t requested_holdout = 0;
  std::string split_note;
  // Rows whose content digest falls on both sides: exact duplicates.
  uint64_t cross_duplicate_holdout_rows = 0;
  uint64_t cross_duplicate_dev_rows = 0;
  std::vector<uint64_t> cross_duplicate_lines;  // first few holdout lines (1-based, in the file)
  bool dropped_cross_duplicates = false;
  uint64_t group_violations = 0;  // group values on both sides
  uint64_t time_violations = 0;   // dev rows later than the earliest holdout row
  bool has_group = false, has_time = false;
  Digest256 dev_out_sha256{};
  uint64_t sealed_bytes = 0;
  Digest256 head{};
};

// FailedPrecondition if the ledger is already sealed (the file stays
// byte-identical); InvalidArgument for bad options, a data file that does
// not match the registered digest, or a dev file path equal to the data.
Result<SealReport> SealHoldout(const SealRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_SEAL_H_
