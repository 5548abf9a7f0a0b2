#include "harness/workflow/verify.h"

#include "harness/evaluate/sealed_holdout.h"
#include "harness/ledger/ledger_state.h"

namespace unseen {

Result<VerifyOutcome> VerifyLedger(const VerifyRequest& req) {
  std::optional<Digest256> expect;
  if (!req.expect_head.empty()) {
    auto d = Digest256FromHex(req.expect_head);
    if (!d.ok()) {
      return Status::InvalidArgument("--expect-head: expected 64 hex digits, got '" +
                                     req.expect_head + "'");
    }
    expect = *d;
  }
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadOnly));
  VerifyOutcome out;
  UNSEEN_ASSIGN_OR_RETURN(out.chain, ledger->Verify());
  if (expect) {
    UNSEEN_ASSIGN_OR_RETURN(out.expected_head_found, ledger->ContainsHash(*expect));
    if (!out.expected_head_found) {
      return Status::Corruption("the ledger no longer contains head " + req.expect_head +
                                " (truncated or rewritten)");
    }
  }
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  out.sealed = st.seal.has_value();
  if (req.key && out.sealed) {
    UNSEEN_ASSIGN_OR_RETURN(out.holdout_rows_checked, CheckSealedHoldout(*ledger, *req.key));
    out.holdout_checked = true;
  }
  return out;
}

}  // namespace unseen
