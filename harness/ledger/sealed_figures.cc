#include "harness/ledger/sealed_figures.h"

#include <nlohmann/json.hpp>

#include "storage/sealed_blob.h"

namespace unseen {

namespace {

Result<std::string> Seal(const Key& key, const std::string& aad, std::string_view plain) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<SealedWriter> w, SealedWriter::Create(key, aad));
  UNSEEN_RETURN_IF_ERROR(w->Append(plain));
  return w->Finish();
}

// The plaintext of one of the seal's sealed blobs. A failed tag with a checked key is damage.
// REQUIRES: st.seal.
Result<std::string> Open(const Ledger& ledger, const LedgerState& st, const Key& key,
                         const Digest256& blob_digest, const std::string& aad, const char* what) {
  const std::string where = "entry " + std::to_string(st.seal->entry_seq) + " (seal): ";
  Result<std::string> blob = ledger.GetBlob(blob_digest);
  if (!blob.ok())
    return Status::Corruption(where + "the sealed " + what + ": " + blob.status().message());
  Result<std::string> plain = OpenSealed(key, aad, *blob);
  if (!plain.ok()) {
    if (plain.status().IsWrongKey()) {
      return Status::Corruption(where + "the sealed " + what +
                                " fail authentication although the key is right; the blob or "
                                "its binding was damaged");
    }
    return Status::Corruption(where + "the sealed " + what + ": " + plain.status().message());
  }
  return plain;
}

}  // namespace

std::string SealedDigestsAad(const std::string& ledger_id, const Digest256& holdout_set) {
  return "unseen sealed digests v1|" + ledger_id + "|" + ToHex(holdout_set);
}

std::string SealedSummaryAad(const std::string& ledger_id, const Digest256& holdout_set) {
  return "unseen sealed summary v1|" + ledger_id + "|" + ToHex(holdout_set);
}

Result<std::string> SealHoldoutDigests(const Key& key, const std::string& aad,
                                       const HoldoutDigests& d) {
  if (d.content.size() != d.feature.size() || d.content.size() % 16 != 0) {
    return Status::InvalidArgument(
        "holdout digests: two lists of one 16-byte digest per row "
        "expected");
  }
  return Seal(key, aad, d.content + d.feature);
}

Result<std::string> SealSourceSummary(const Key& key, const std::string& aad,
                                      const SealedFigures& f) {
  nlohmann::json j = nlohmann::json::parse(RowsSummaryToJson(f.source));
  j["cross_duplicates"] = {{"holdout_rows", f.cross_duplicate_holdout_rows},
                           {"dev_rows", f.cross_duplicate_dev_rows}};
  return Seal(key, aad, j.dump());
}

Result<HoldoutDigests> ReadHoldoutDigests(const Ledger& ledger, const LedgerState& st,
                                          const Key& key) {
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": the ledger is not sealed yet");
  UNSEEN_ASSIGN_OR_RETURN(
      std::string plain,
      Open(ledger, st, key, st.seal->sealed_digests,
           SealedDigestsAad(st.ledger_id, st.seal->holdout_set), "holdout digests"));
  const size_t list = st.seal->holdout_rows * 16;
  if (plain.size() != 2 * list) {
    return Status::Corruption("entry " + std::to_string(st.seal->entry_seq) +
                              " (seal): the sealed holdout digests hold " +
                              std::to_string(plain.size()) + " bytes; expected 2 x 16 x " +
                              std::to_string(st.seal->holdout_rows));
  }
  HoldoutDigests d;
  d.content = plain.substr(0, list);
  d.feature = plain.substr(list, list);
  return d;
}

Result<SealedFigures> ReadSealedFigures(const Ledger& ledger, const LedgerState& st,
                                        const Key& key) {
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": the ledger is not sealed yet");
  UNSEEN_ASSIGN_OR_RETURN(
      std::string plain,
      Open(ledger, st, key, st.seal->sealed_summary,
           SealedSummaryAad(st.ledger_id, st.seal->holdout_set), "source figures"));
  const std::string where =
      "entry " + std::to_string(st.seal->entry_seq) + " (seal): the sealed source figures: ";
  Result<RowsSummary> s = RowsSummaryFromJson(plain, st.source.columns.size());
  if (!s.ok()) return Status::Corruption(where + s.status().message());
  SealedFigures f;
  f.source = std::move(*s);
  const nlohmann::json j = nlohmann::json::parse(plain, nullptr, /*allow_exceptions=*/false);
  const nlohmann::json* dup = j.contains("cross_duplicates") ? &j["cross_duplicates"] : nullptr;
  if (dup == nullptr || !dup->is_object() || !dup->contains("holdout_rows") ||
      !dup->contains("dev_rows") || !(*dup)["holdout_rows"].is_number_unsigned() ||
      !(*dup)["dev_rows"].is_number_unsigned()) {
    return Status::Corruption(where + "'cross_duplicates': expected two counts");
  }
  f.cross_duplicate_holdout_rows = (*dup)["holdout_rows"].get<uint64_t>();
  f.cross_duplicate_dev_rows = (*dup)["dev_rows"].get<uint64_t>();
  return f;
}

Result<RowsSummary> ReadSourceSummary(const Ledger& ledger, const LedgerState& st, const Key& key) {
  UNSEEN_ASSIGN_OR_RETURN(SealedFigures f, ReadSealedFigures(ledger, st, key));
  return std::move(f.source);
}

}  // namespace unseen
