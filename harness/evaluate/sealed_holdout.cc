#include "harness/evaluate/sealed_holdout.h"

#include <cstring>

#include "harness/data/csv.h"
#include "harness/data/holdout_rows.h"
#include "harness/data/row_digest.h"
#include "harness/ledger/sealed_figures.h"
#include "storage/merkle.h"
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
  UNSEEN_ASSIGN_OR_RETURN(HoldoutDigests held, ReadHoldoutDigests(ledger, st, key));
  if (held.rows() != rows.size()) return Mismatch("holdout digest count");
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_set_bytes, ledger.GetBlob(seal.dev_set));
  UNSEEN_ASSIGN_OR_RETURN(RowSet dev_set, RowSet::Deserialize(dev_set_bytes));
  const std::vector<uint32_t> dev = dev_set.ToVector();
  UNSEEN_ASSIGN_OR_RETURN(std::string dev_digests, ledger.GetBlob(seal.dev_row_digests));
  if (dev_digests.size() != dev.size() * sizeof(RowDigest)) return Mismatch("dev digest count");
  if (dev.size() + rows.size() != st.source.rows) return Mismatch("dev and holdout row counts");

  CsvOptions options;
  options.delimiter = st.source.delimiter;
  UNSEEN_ASSIGN_OR_RETURN(auto csv,
                          CsvFile::FromBytes("<sealed holdout>", std::move(text), options));
  if (csv->header().size() != st.source.columns.size()) return Mismatch("column count");
  std::vector<size_t> skip, id;
  if (auto id_col = st.source.ColumnOf(ColumnRole::kId)) id.push_back(*id_col);
  skip = id;
  skip.push_back(*st.source.ColumnOf(ColumnRole::kTarget));
  RowDigester all, content(id), feature(skip);
  std::string row_digests;  // computed from the decrypted rows, for the Merkle root
  row_digests.reserve(rows.size() * sizeof(RowDigest));
  auto same = [](const RowDigest& d, const std::string& list, size_t n) {
    return std::memcmp(d.data(), list.data() + n * d.size(), d.size()) == 0;
  };
  uint64_t n = 0;
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
    if (n >= rows.size()) return Mismatch("more rows than the holdout set");
    const std::string row = "row " + std::to_string(rows[n]);
    const RowDigest d = all.Digest(*r.fields);
    row_digests.append(reinterpret_cast<const char*>(d.data()), d.size());
    if (!same(content.Digest(*r.fields), held.content, n)) {
      return Mismatch(row + " differs from its content digest");
    }
    if (!same(feature.Digest(*r.fields), held.feature, n)) {
      return Mismatch(row + " differs from its feature digest");
    }
    ++n;
    return Status::OK();
  }));
  if (n != rows.size()) return Mismatch("fewer rows than the holdout set");

  // The dev rows' digests and those of the decrypted holdout rows, merged in row order, must give
  // the Merkle root the source entry recorded at init: the seal split the registered rows and
  // kept every one, unchanged.
  MerkleBuilder merkle;
  size_t d = 0, h = 0;
  for (uint64_t row = 0; row < st.source.rows; ++row) {
    if (d < dev.size() && dev[d] == row) {
      merkle.AddLeaf(dev_digests.data() + d++ * sizeof(RowDigest), sizeof(RowDigest));
    } else if (h < rows.size() && rows[h] == row) {
      merkle.AddLeaf(row_digests.data() + h++ * sizeof(RowDigest), sizeof(RowDigest));
    } else {
      return Mismatch("row " + std::to_string(row) + " is on neither side");
    }
  }
  if (merkle.Root() != st.source.merkle_root) {
    return Mismatch("the dev and holdout rows' Merkle root is not the source's");
  }
  UNSEEN_ASSIGN_OR_RETURN(RowsSummary figures, ReadSourceSummary(ledger, st, key));
  if (figures.rows != st.source.rows) return Mismatch("the sealed source figures' row count");
  return n;
}

}  // namespace unseen
