// ReadHistory: the `history` command. Every entry of a ledger in order, with
// its body as stored and, on request, who wrote it, when, and one line on
// what it did (decoded through harness/ledger/entries.h). Reads only.
// Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_HISTORY_H_
#define UNSEEN_HARNESS_WORKFLOW_HISTORY_H_

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/ledger/entries.h"
#include "storage/ledger.h"
#include "storage/status.h"

namespace unseen {

struct HistoryLine {
  Entry entry;          // seq, kind, hashes, the body text
  nlohmann::json body;  // the body parsed
  EntryStamp stamp;     // with_summaries only
  std::string summary;  // with_summaries only: what the entry did
};

// NotFound if there is no ledger at `ledger_path`; Corruption naming the
// entry whose body is not JSON or, with `with_summaries`, does not decode.
// Without summaries a ledger whose bodies decode badly can still be listed.
Result<std::vector<HistoryLine>> ReadHistory(const std::string& ledger_path, bool with_summaries);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_HISTORY_H_
