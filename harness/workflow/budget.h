// Raising the holdout budget after the seal: an entry of its own, so that
// every report can show that the budget was raised, by whom and why.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_BUDGET_H_
#define UNSEEN_HARNESS_WORKFLOW_BUDGET_H_

#include <cstdint>
#include <string>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct BudgetRequest {
  std::string ledger_path, actor;
  uint64_t add_queries = 0;
  std::string reason;
};

struct BudgetReport {
  uint64_t budget = 0;  // after the raise
  uint64_t used = 0;
  Digest256 head{};
};

// Appends a `budget` entry adding `add_queries` holdout queries.
// InvalidArgument for 0 queries, an empty reason, or a total beyond 2^53;
// FailedPrecondition before seal.
Result<BudgetReport> RaiseBudget(const BudgetRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_BUDGET_H_
