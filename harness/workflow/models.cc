#include "harness/workflow/models.h"

#include "storage/ledger.h"

namespace unseen {

Result<std::vector<ModelSummary>> ListFrozenModels(const std::string& ledger_path) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadOnly));
  return ListModels(*ledger);
}

Result<nlohmann::json> ShowModel(const std::string& ledger_path, const std::string& name) {
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(ledger_path, LedgerMode::kReadOnly));
  UNSEEN_ASSIGN_OR_RETURN(StoredModel model, FindModel(*ledger, name));
  return std::move(model.json);
}

}  // namespace unseen
