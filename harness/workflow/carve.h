// Named partitions of dev: `unseen carve` sets a seeded share of the
// development rows aside under a name (for example the rows a blend's
// weights are fitted on) and records it as a `partition` entry holding the
// row set. `fit --exclude NAME` leaves a partition out; a blend names the
// partition it is fitted on. Partitions are never changed once carved.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_CARVE_H_
#define UNSEEN_HARNESS_WORKFLOW_CARVE_H_

#include <cstdint>
#include <string>
#include <vector>

#include "storage/digest.h"
#include "storage/ledger.h"
#include "storage/row_set.h"
#include "storage/status.h"

namespace unseen {

struct CarveRequest {
  std::string ledger_path, name, actor;
  double fraction = 0;  // share of the dev rows, in (0, 1)
  uint64_t seed = 0;
  bool stratified = false;  // classification only; whole groups win when the source has groups
  std::string data_path;    // the source file, if it moved since init (empty: registered path)
};

// A carved partition as its entry records it.
struct NamedPartition {
  std::string name;
  int64_t entry_seq = 0;
  std::string strategy;  // "random", "stratified" or "group"
  double fraction = 0;
  uint64_t seed = 0;
  Digest256 row_set{};  // digest of the row-set blob
  RowSet rows;          // source row numbers, all of them dev rows
};

struct CarveReport {
  NamedPartition partition;
  uint64_t dev_rows = 0;
  uint64_t requested = 0;  // round(fraction * dev rows)
  std::string note;        // why the size differs from the request (whole groups), or empty
  Digest256 head{};
};

// Carves the partition and appends its entry in one transaction. The
// strategy is the split code's (harness/sampling/split.h) applied to the dev rows in
// ascending order: whole groups when the source has a group column,
// otherwise stratified by class with `stratified`, otherwise random; the
// same request gives the same rows on every machine. Reads the registered
// source file (SHA-256 checked) only for group or class labels.
// InvalidArgument for a bad name, a name already carved, "dev" or
// "holdout", a fraction outside (0, 1), `stratified` on a regression
// source, or a source file whose digest differs; FailedPrecondition before
// seal. On error the ledger is unchanged.
Result<CarveReport> CarvePartition(const CarveRequest& request);

// Every carved partition, in entry order, rows loaded. Corruption if an
// entry or its blob is malformed.
Result<std::vector<NamedPartition>> ListPartitions(const Ledger& ledger);

// The partition named `name`. NotFound "no partition named 'X' (partitions:
// ...)" when there is none.
Result<NamedPartition> FindPartition(const Ledger& ledger, const std::string& name);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_CARVE_H_
