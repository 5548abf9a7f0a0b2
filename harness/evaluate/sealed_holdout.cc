#include "harness/evaluate/sealed_holdout.h"

#include <cstring>

#include "harness/data/csv.h"
#include "harness/data/holdout_rows.h"
#include "harness/data/row_digest.h"
#include "storage/row_set.h"
#include "storage/sealed_blob.h"

namespace unseen {

namespace {

Status Mismatch(const std::string& what) {
  return Status::Corruption("the sealed holdout does not match its commitments: " + what);
}

}  // namespace

Result<std::string> OpenHoldoutText(const Ledger& ledger, const LedgerState& st, const Key& key) {
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": the ledger is not sealed yet");
  const SealInfo& seal = *st.seal;
  UNSEEN_ASSIGN_OR_RETURN(std::string blob, ledger.GetBlob(seal.sealed_rows));
  auto plain = OpenSealed(key, SealedAad(st.ledger_id, seal.holdout_set), blob);
  if (!plain.ok()) {
    // The key matched its check value, so a failed tag means damage.
    if (plain.status().IsWrongKey()) {
      return Status::Corruption("entry " + std::to_string(seal.entry_seq) +
                                " (seal): the sealed holdout fails authentication although the "
                                "key is right; the blob or its binding was damaged");
    }
    return plain.status();
  }
  std::string text;
  if (seal.holdout_encoding == kHoldoutEncodingColumns) {
    UNSEEN_ASSIGN_OR_RETURN(text, DecodeHoldoutRows(*plain));
  } else if (seal.holdout_encoding == kHoldoutEncodingCsv) {
    text = std::move(*plain);
  } else {
    return Status::Corruption("entry " + std::to_string(seal.entry_seq) +
                              " (seal): unknown holdout encoding '" + seal.holdout_encoding + "'");
  }
  return text;
}

Result<uint64_t> CheckSealedHoldout(const Ledger& ledger, const KeySpec& spec) {
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(ledger));
  if (!st.seal) return Status::FailedPrecondition(ledger.path() + ": the ledger is not sealed yet");
  const SealInfo& seal = *st.seal;
  UNSEEN_ASSIGN_OR_RETURN(Key key, KeyForSeal(spec, seal, st.ledger_id));
  UNSEEN_ASSIGN_OR_RETURN(std::string text, OpenHoldoutText(ledger, st, key));
  UNSEEN_ASSIGN_OR_RETURN(std::string set_bytes, ledger.GetBlob(seal.holdout_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet holdout, RowSet::Deserialize(set_bytes));
  std::vector<uint32_t> rows = holdout.ToVector();
  UNSEEN_ASSIGN_OR_RETURN(std::string row_digests, ledger.GetBlob(st.row_digests));
  UNSEEN_ASSIGN_OR_RETURN(std::string features, ledger.GetBlob(seal.holdout_feature_digests));
  if (features.size() != rows.size() * sizeof(RowDigest)) return Mismatch("feature digest count");

  CsvOptions options;
  options.delimiter = st.source.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv,
                          CsvFile::FromBytes("<sealed holdout>", std::move(text), options));
  if (csv->header().size() != st.source.columns.size()) return Mismatch("column count");
  std::vector<size_t> skip;
  if (auto id = st.source.ColumnOf(ColumnRole::kId)) skip.push_back(*id);
  skip.push_back(*st.source.ColumnOf(ColumnRole::kTarget));
  RowDigester all, feature(skip);
  uint64_t n = 0;
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (n >= rows.size()) return Mismatch("more rows than the holdout set");
    RowDigest d = all.Digest(*r.fields);
    if (std::memcmp(d.data(), row_digests.data() + size_t{rows[n]} * d.size(), d.size()) != 0) {
      return Mismatch("row " + std::to_string(rows[n]) + " differs from its row digest");
    }
    d = feature.Digest(*r.fields);
    if (std::memcmp(d.data(), features.data() + n * d.size(), d.size()) != 0) {
      return Mismatch("row " + std::to_string(rows[n]) + " differs from its feature digest");
    }
    ++n;
    return Status::OK();
  }));
  if (n != rows.size()) return Mismatch("fewer rows than the holdout set");
  return n;
}

}  // namespace unseen
