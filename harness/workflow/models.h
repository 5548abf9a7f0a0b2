// The `models` command: the frozen models a ledger holds, or one of them
// whole. Reads only. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_MODELS_H_
#define UNSEEN_HARNESS_WORKFLOW_MODELS_H_

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/ledger/models.h"
#include "storage/status.h"

namespace unseen {

// Every frozen model of the ledger at `ledger_path` (harness/ledger/models.h).
// NotFound if there is no ledger; Corruption for a malformed entry.
Result<std::vector<ModelSummary>> ListFrozenModels(const std::string& ledger_path);

// The frozen model `name` whole: every fitted parameter, as stored.
// NotFound naming the known models if there is none of that name.
Result<nlohmann::json> ShowModel(const std::string& ledger_path, const std::string& name);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_MODELS_H_
