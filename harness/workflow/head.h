// ReadHead: the `head` command. The hash of the newest entry, to pin
// somewhere the ledger's owner cannot edit (verify --expect-head checks it).
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_HEAD_H_
#define UNSEEN_HARNESS_WORKFLOW_HEAD_H_

#include <string>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// NotFound if there is no ledger at `ledger_path`; Corruption if it is not a
// ledger of a known format.
Result<Digest256> ReadHead(const std::string& ledger_path);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_HEAD_H_
