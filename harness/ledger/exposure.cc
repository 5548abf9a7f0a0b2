#include "harness/ledger/exposure.h"

#include <memory>

#include "storage/ledger.h"

namespace unseen {

Result<int64_t> RecordExposure(const std::string& ledger_path, const std::string& actor,
                               ExposureBody body) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  body.summary =
      body.command + ": " + body.model_kind + " model '" + body.model + "' failed on the holdout";
  if (body.holdout_rows_sent > 0) {
    body.summary += " after receiving the features of " + std::to_string(body.holdout_rows_sent) +
                    " holdout rows";
  }
  body.summary += "; no answer was shown (" + body.reason + ")";
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(ledger.get(), actor, body));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  return e.seq;
}

}  // namespace unseen
