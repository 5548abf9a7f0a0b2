#include "harness/ledger/lineage.h"

#include <map>
#include <set>

#include "storage/row_set.h"

namespace unseen {

using json = nlohmann::json;

Result<Lineage> TraceLineage(const Ledger& ledger, const LedgerState& st, int64_t fit_seq,
                             const json& model) {
  Lineage out;
  if (model.value("ledger_id", std::string()) != st.ledger_id) {
    out.taints.push_back("the model was frozen on another ledger (" +
                         model.value("ledger_id", std::string("unknown")) + ")");
  }
  if (model.value("source_sha256", std::string()) != ToHex(st.source.file_sha256)) {
    out.taints.push_back("the model was fitted on a source whose file digest (" +
                         model.value("source_sha256", std::string("unknown")) +
                         ") is not this ledger's (" + ToHex(st.source.file_sha256) + ")");
  }
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
    try {
      json b = json::parse(e.body);
      const std::string where = "entry " + std::to_string(seq) + " (" + e.kind + ")";
      if (b.value("tainted", false)) out.taints.push_back(where + " is marked tainted");
      if (b.contains("holdout_rows_read") && b["holdout_rows_read"].get<uint64_t>() > 0) {
        out.taints.push_back(where + " says it read " +
                             std::to_string(b["holdout_rows_read"].get<uint64_t>()) +
                             " holdout rows");
      }
      if ((e.kind == "fit" || e.kind == "select") && b.contains("rows_read") && st.seal) {
        UNSEEN_ASSIGN_OR_RETURN(Digest256 d, Digest256FromHex(b["rows_read"].get<std::string>()));
        UNSEEN_ASSIGN_OR_RETURN(std::string bytes, ledger.GetBlob(d));
        UNSEEN_ASSIGN_OR_RETURN(RowSet read, RowSet::Deserialize(bytes));
        uint64_t overlap = read.And(holdout).Cardinality();
        if (overlap > 0) {
          out.holdout_rows_read += overlap;
          out.taints.push_back(where + " read " + std::to_string(overlap) + " holdout rows");
        }
      }
      for (const json& p : b.value("parents", json::array())) {
        int64_t parent = p.get<int64_t>();
        // The seal and the source are not steps that read data for the model.
        if (parent > 0 && by_seq.count(parent) && by_seq[parent]->kind != "seal" &&
            by_seq[parent]->kind != "source") {
          todo.push_back(parent);
        } else if (!by_seq.count(parent)) {
          return Status::Corruption(where + " names parent " + std::to_string(parent) +
                                    ", which does not exist");
        }
      }
    } catch (const std::exception& ex) {
      return Status::Corruption("entry " + std::to_string(seq) + " (" + e.kind +
                                ") is malformed: " + ex.what());
    }
  }
  return out;
}

}  // namespace unseen
