#include "harness/ledger/lineage.h"

#include <map>
#include <optional>
#include <set>

#include "harness/ledger/entries.h"
#include "storage/row_set.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// What the walk reads of one step.
struct Step {
  std::vector<int64_t> parents;
  std::optional<Digest256> rows_read;  // fit and select: the rows the step read
  bool tainted = false;
  uint64_t holdout_rows_read = 0;
};

// A model descends from fits (a blend's members), the selection before a
// fit, and carved partitions; the seal and the source are not walked.
Result<Step> StepOf(const Entry& e) {
  if (e.kind == kKindFit) {
    UNSEEN_ASSIGN_OR_RETURN(FitBody b, DecodeEntry<FitBody>(e));
    return Step{std::move(b.parents), b.rows_read, b.tainted, b.holdout_rows_read};
  }
  if (e.kind == kKindSelect) {
    UNSEEN_ASSIGN_OR_RETURN(SelectBody b, DecodeEntry<SelectBody>(e));
    return Step{std::move(b.parents), b.rows_read, false, 0};
  }
  if (e.kind == kKindPartition) {
    UNSEEN_ASSIGN_OR_RETURN(PartitionBody b, DecodeEntry<PartitionBody>(e));
    return Step{std::move(b.parents), std::nullopt, false, 0};
  }
  return Status::Corruption("entry " + std::to_string(e.seq) + " (" + e.kind +
                            ") is named as a parent of a model, but is no fit, select or "
                            "partition entry");
}

std::vector<std::string> ModelTaints(const LedgerState& st, const json& model) {
  std::vector<std::string> taints;
  if (model.value("ledger_id", std::string()) != st.ledger_id) {
    taints.push_back("the model was frozen on another ledger (" +
                     model.value("ledger_id", std::string("unknown")) + ")");
  }
  if (model.value("source_sha256", std::string()) != ToHex(st.source.file_sha256)) {
    taints.push_back("the model was fitted on a source whose file digest (" +
                     model.value("source_sha256", std::string("unknown")) +
                     ") is not this ledger's (" + ToHex(st.source.file_sha256) + ")");
  }
  return taints;
}

}  // namespace

Result<Lineage> TraceLineage(const Ledger& ledger, const LedgerState& st, int64_t fit_seq,
                             const json& model) {
  Lineage out;
  out.taints = ModelTaints(st, model);
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger.Entries());
  std::map<int64_t, const Entry*> by_seq;
  for (const Entry& e : entries) by_seq[e.seq] = &e;
  RowSet holdout;
  if (st.seal) {
    UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(st.seal->holdout_set));
    UNSEEN_ASSIGN_OR_RETURN(holdout, RowSet::Deserialize(bytes));
  }
  std::set<int64_t> seen;
  std::vector<int64_t> todo = {fit_seq};
  while (!todo.empty()) {
    int64_t seq = todo.back();
    todo.pop_back();
    if (!seen.insert(seq).second) continue;
    auto it = by_seq.find(seq);
    if (it == by_seq.end()) {
      return Status::Corruption("lineage of entry " + std::to_string(fit_seq) + " names entry " +
                                std::to_string(seq) + ", which does not exist");
    }
    const Entry& e = *it->second;
    out.steps.push_back(seq);
    UNSEEN_ASSIGN_OR_RETURN(Step step, StepOf(e));
    const std::string where = "entry " + std::to_string(seq) + " (" + e.kind + ")";
    if (step.tainted) out.taints.push_back(where + " is marked tainted");
    if (step.holdout_rows_read > 0) {
      out.taints.push_back(where + " says it read " + std::to_string(step.holdout_rows_read) +
                           " holdout rows");
    }
    if (step.rows_read && st.seal) {
      UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(*step.rows_read));
      UNSEEN_ASSIGN_OR_RETURN(RowSet read, RowSet::Deserialize(bytes));
      uint64_t overlap = read.And(holdout).Cardinality();
      if (overlap > 0) {
        out.holdout_rows_read += overlap;
        out.taints.push_back(where + " read " + std::to_string(overlap) + " holdout rows");
      }
    }
    for (int64_t parent : step.parents) {
      auto p = by_seq.find(parent);
      if (p == by_seq.end()) {
        return Status::Corruption(where + " names parent " + std::to_string(parent) +
                                  ", which does not exist");
      }
      // The seal and the source are not steps that read data for the model.
      if (parent > 0 && p->second->kind != kKindSeal && p->second->kind != kKindSource) {
        todo.push_back(parent);
      }
    }
  }
  return out;
}

}  // namespace unseen
