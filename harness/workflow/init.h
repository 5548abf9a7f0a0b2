// InitLedger: create a ledger and register its source (the `init` command).
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_INIT_H_
#define UNSEEN_HARNESS_WORKFLOW_INIT_H_

#include <functional>
#include <optional>
#include <string>

#include "harness/data/source.h"
#include "harness/data/source_scan.h"
#include "storage/status.h"

namespace unseen {

struct InitRequest {
  std::string ledger_path;
  std::string data_path;
  std::string actor;
  ScanOptions scan;
};

struct InitReport {
  SourceInfo source;
  Digest256 head{};
  uint64_t ledger_bytes = 0;
};

// Scans the data and creates the ledger with a genesis and a `source`
// entry, atomically. AlreadyExists if the ledger exists (it is untouched);
// InvalidArgument for bad data (no ledger is created).
Result<InitReport> InitLedger(const InitRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_INIT_H_
