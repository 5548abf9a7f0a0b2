#include "harness/workflow/head.h"

#include "storage/ledger.h"

namespace unseen {

Result<Digest256> ReadHead(const std::string& ledger_path) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadOnly));
  return ledger->Head();
}

}  // namespace unseen
