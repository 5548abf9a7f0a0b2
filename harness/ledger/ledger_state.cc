#include "harness/ledger/ledger_state.h"

#include <nlohmann/json.hpp>

namespace unseen {

using json = nlohmann::json;

namespace {

Result<Digest256> HexField(const json& j, const char* key) {
  return Digest256FromHex(j.at(key).get<std::string>());
}

Result<SealInfo> SealFromJson(const Entry& e) {
  SealInfo s;
  try {
    json j = json::parse(e.body);
    s.entry_seq = e.seq;
    s.strategy = j.at("strategy").get<std::string>();
    s.fraction = j.at("fraction").get<double>();
    s.seed = j.at("seed").get<uint64_t>();
    s.holdout_rows = j.at("holdout").at("rows").get<uint64_t>();
    s.dev_rows = j.at("dev").at("rows").get<uint64_t>();
    UNSEEN_ASSIGN_OR_RETURN(s.holdout_set, HexField(j.at("holdout"), "row_set"));
    UNSEEN_ASSIGN_OR_RETURN(s.dev_set, HexField(j.at("dev"), "row_set"));
    UNSEEN_ASSIGN_OR_RETURN(s.sealed_rows, HexField(j.at("holdout"), "sealed_rows"));
    UNSEEN_ASSIGN_OR_RETURN(s.holdout_feature_digests, HexField(j.at("holdout"), "feature_digests"));
    if (j.at("holdout").contains("encoding")) {
      s.holdout_encoding = j.at("holdout").at("encoding").get<std::string>();
    }
    const json& k = j.at("key");
    s.key.source = k.at("source").get<std::string>();
    s.key.key_check_hex = k.at("key_check").get<std::string>();
    if (s.key.source == "passphrase") {
      s.key.salt_hex = k.at("salt").get<std::string>();
      s.key.scrypt.n = k.at("scrypt").at("N").get<uint64_t>();
      s.key.scrypt.r = k.at("scrypt").at("r").get<uint32_t>();
      s.key.scrypt.p = k.at("scrypt").at("p").get<uint32_t>();
    }
    s.budget_queries = j.at("budget").at("queries").get<uint64_t>();
    s.budget_half_width = j.at("budget").value("half_width", 0.0);
    s.budget_delta = j.at("budget").value("delta", 0.05);
    s.dev_out_path = j.at("dev").at("file").at("path").get<std::string>();
    UNSEEN_ASSIGN_OR_RETURN(s.dev_out_sha256, HexField(j.at("dev").at("file"), "sha256"));
    s.dev_out_size = j.at("dev").at("file").at("size").get<uint64_t>();
  } catch (const std::exception& ex) {
    return Status::Corruption("entry " + std::to_string(e.seq) + " (seal) is malformed: " + ex.what());
  }
  return s;
}

}  // namespace

std::string SealedAad(const std::string& ledger_id, const Digest256& holdout_set) {
  return "unseen sealed rows v1|" + ledger_id + "|" + ToHex(holdout_set);
}

Result<LedgerState> ReadLedgerState(const Ledger& ledger) {
  LedgerState st;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger.Entries());
  if (entries.empty() || entries[0].kind != "ledger") {
    return Status::Corruption(ledger.path() + ": the first entry is not the genesis entry");
  }
  st.entries = static_cast<int64_t>(entries.size());
  st.head = entries.back().hash;
  try {
    st.ledger_id = json::parse(entries[0].body).at("ledger_id").get<std::string>();
  } catch (const std::exception& ex) {
    return Status::Corruption(ledger.path() + ": genesis entry is malformed: " + ex.what());
  }
  bool have_source = false;
  for (const Entry& e : entries) {
    if (e.kind == "source" && !have_source) {
      UNSEEN_ASSIGN_OR_RETURN(st.source, SourceFromJson(e.body));
      try {
        json j = json::parse(e.body);
        st.source_abs_path = j.at("file").value("absolute_path", st.source.path);
        UNSEEN_ASSIGN_OR_RETURN(st.row_digests, HexField(j, "row_digests"));
        UNSEEN_ASSIGN_OR_RETURN(st.content_digests, HexField(j, "content_digests"));
      } catch (const std::exception& ex) {
        return Status::Corruption("entry " + std::to_string(e.seq) + " (source) is malformed: " +
                                  ex.what());
      }
      st.source_seq = e.seq;
      have_source = true;
    } else if (e.kind == "seal") {
      UNSEEN_ASSIGN_OR_RETURN(SealInfo seal, SealFromJson(e));
      st.seal = std::move(seal);
    } else if (e.kind == "budget" && st.seal) {
      try {
        json b = json::parse(e.body);
        st.seal->budget_queries += b.at("add_queries").get<uint64_t>();
        ++st.budget_raises;
      } catch (const std::exception&) {
        return Status::Corruption("entry " + std::to_string(e.seq) + " (budget) is malformed");
      }
    } else if (e.kind == "eval") {
      try {
        st.holdout_queries += json::parse(e.body).value("queries_spent", uint64_t{0});
      } catch (const std::exception&) {
        return Status::Corruption("entry " + std::to_string(e.seq) + " (eval) is malformed");
      }
    }
  }
  if (!have_source) return Status::Corruption(ledger.path() + ": the ledger has no source entry");
  return st;
}

}  // namespace unseen
