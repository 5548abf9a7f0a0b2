#include "harness/workflow/history.h"

namespace unseen {

Result<std::vector<HistoryLine>> ReadHistory(const std::string& ledger_path,
                                             bool with_summaries) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadOnly));
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger->Entries());
  std::vector<HistoryLine> out;
  out.reserve(entries.size());
  for (Entry& e : entries) {
    HistoryLine line;
    line.body = nlohmann::json::parse(e.body, nullptr, /*allow_exceptions=*/false);
    if (line.body.is_discarded()) {
      return Status::Corruption("entry " + std::to_string(e.seq) + " (" + e.kind +
                                "): the body is not JSON");
    }
    if (with_summaries) {
      UNSEEN_ASSIGN_OR_RETURN(line.stamp, DecodeStamp(e));
      UNSEEN_ASSIGN_OR_RETURN(line.summary, SummarizeEntry(e));
    }
    line.entry = std::move(e);
    out.push_back(std::move(line));
  }
  return out;
}

}  // namespace unseen
