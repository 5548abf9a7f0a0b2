// ReadStatus: the `status` command. Where a ledger stands: its source, the
// seal, the carved partitions and the holdout budget. Reads only; never
// opens the holdout. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_STATUS_H_
#define UNSEEN_HARNESS_WORKFLOW_STATUS_H_

#include <cstdint>
#include <string>
#include <vector>

#include "harness/ledger/ledger_state.h"
#include "harness/workflow/carve.h"
#include "storage/status.h"

namespace unseen {

struct LedgerStatus {
  LedgerState state;                     // source, seal, queries used, head
  std::vector<NamedPartition> partitions;  // carved partitions, oldest first (sealed ledgers)
  // Holdout queries left under the budget; 0 before the seal.
  uint64_t budget_remaining() const;
};

// NotFound if there is no ledger at `ledger_path`; Corruption if its
// entries cannot be read back.
Result<LedgerStatus> ReadStatus(const std::string& ledger_path);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_STATUS_H_
