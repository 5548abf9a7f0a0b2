// Lineage: the steps a frozen model descends from, walked through the
// `parents` of its entries, and the reasons it is tainted: a step that read
// holdout rows (or says it did), a model frozen on another ledger or on a
// source whose file digest differs from this ledger's. Thread-compatible.
#ifndef UNSEEN_HARNESS_LEDGER_LINEAGE_H_
#define UNSEEN_HARNESS_LEDGER_LINEAGE_H_

#include <cstdint>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"

namespace unseen {

struct Lineage {
  std::vector<int64_t> steps;       // entry seqs, the model's own fit entry first
  uint64_t holdout_rows_read = 0;   // holdout rows in the row sets its steps read
  std::vector<std::string> taints;  // one sentence each; empty: clean
};

// Walks the lineage of the model frozen by entry `fit_seq`, whose frozen
// JSON is `model`. Corruption when an entry it names is missing, malformed,
// or not a fit, select or partition entry.
Result<Lineage> TraceLineage(const Ledger& ledger, const LedgerState& state, int64_t fit_seq,
                             const nlohmann::json& model);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_LEDGER_LINEAGE_H_
