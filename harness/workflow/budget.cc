#include "harness/workflow/budget.h"

#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"

namespace unseen {

Result<BudgetReport> RaiseBudget(const BudgetRequest& req) {
  if (req.add_queries == 0) return Status::InvalidArgument("--raise: expected at least 1 query");
  if (req.reason.empty()) {
    return Status::InvalidArgument(
        "--reason: expected a reason for raising the budget (it is shown in every report)");
  }
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  std::unique_ptr<Ledger> ledger = std::move(opened.ledger);
  LedgerState st = std::move(opened.state);
  const uint64_t before = st.seal->budget_queries;
  if (req.add_queries > (uint64_t{1} << 53) - before) {
    return Status::InvalidArgument("--raise: the budget would pass 2^53 queries");
  }
  BudgetReport report;
  report.budget = before + req.add_queries;
  report.used = st.holdout_queries;
  BudgetBody body;
  body.add_queries = req.add_queries;
  body.budget_before = before;
  body.budget_after = report.budget;
  body.queries_used = st.holdout_queries;
  body.reason = req.reason;
  body.parents = {st.seal->entry_seq};
  body.summary = "raised the holdout budget from " + std::to_string(before) + " to " +
                 std::to_string(report.budget) + " queries: " + req.reason;
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), req.actor, body));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
