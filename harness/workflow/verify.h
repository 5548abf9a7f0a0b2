// VerifyLedger: the `verify` command. Recomputes the chain and every blob
// digest; with a key, also opens the sealed holdout in memory (never on
// disk) and checks every row against the digests committed at init and seal.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_VERIFY_H_
#define UNSEEN_HARNESS_WORKFLOW_VERIFY_H_

#include <optional>
#include <string>

#include "harness/ledger/keys.h"
#include "storage/ledger.h"

namespace unseen {

struct VerifyRequest {
  std::string ledger_path;
  std::optional<KeySpec> key;
  std::string expect_head;  // 64 hex digits, or empty
};

struct VerifyOutcome {
  VerifyReport chain;
  bool sealed = false;
  bool holdout_checked = false;
  uint64_t holdout_rows_checked = 0;
  bool expected_head_found = false;
};

// Corruption naming the first failing entry or blob (exit 3); WrongKey for
// a key that does not open the holdout (exit 2); InvalidArgument for a
// malformed --expect-head; Corruption if the expected head is absent.
Result<VerifyOutcome> VerifyLedger(const VerifyRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_VERIFY_H_
