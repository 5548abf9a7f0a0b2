#include "harness/workflow/status.h"

#include "storage/ledger.h"

namespace unseen {

uint64_t LedgerStatus::budget_remaining() const {
  if (!state.seal) return 0;
  const uint64_t budget = state.seal->budget_queries;
  return budget > state.holdout_queries ? budget - state.holdout_queries : 0;
}

Result<LedgerStatus> ReadStatus(const std::string& ledger_path) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadOnly));
  LedgerStatus out;
  UNSEEN_ASSIGN_OR_RETURN(out.state, ReadLedgerState(*ledger));
  if (out.state.seal) {
    UNSEEN_ASSIGN_OR_RETURN(out.partitions, ListPartitions(*ledger));
  }
  return out;
}

}  // namespace unseen
