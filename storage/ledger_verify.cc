// Ledger::Verify(): every byte the file stores is recomputed or compared.
//
// Covered: the SQLite schema (tables, indexes, triggers), the file's
// application_id and user_version, each entry's sequence number, kind,
// canonical body, previous hash and hash, each blob's digest, kind, size and
// bytes, that every blob is referenced by an entry and every reference is
// stored, and SQLite's own record of the highest sequence number handed out
// (which catches a quiet deletion of the newest entries).
#include <map>
#include <nlohmann/json.hpp>

#include "storage/ledger_internal.h"

namespace unseen {

using namespace internal;  // NOLINT: the ledger's own helpers
using json = nlohmann::json;

namespace {

struct RefInfo {
  std::string kind;
  uint64_t size = 0;
  int64_t seq = 0;
  std::string entry_kind;
};

// Checks one entry's stored columns against its body and the chain.
Status CheckEntry(const Entry& e, int64_t expected_seq, const Digest256& prev,
                  std::map<Digest256, RefInfo>* refs) {
  std::string name = EntryName(e.seq, e.kind);
  if (e.seq != expected_seq) {
    return Status::Corruption("entry " + std::to_string(expected_seq) +
                              ": missing or out of order (found sequence number " +
                              std::to_string(e.seq) + ")");
  }
  if (e.prev_hash != prev) {
    return Status::Corruption(name + ": prev_hash does not match the hash of the entry before it");
  }
  if (ChainHash(e.prev_hash, e.body) != e.hash) {
    return Status::Corruption(name + ": hash does not match SHA-256(prev_hash || body)");
  }
  json body;
  try {
    body = json::parse(e.body);
    if (body.dump(-1, ' ', false, json::error_handler_t::strict) != e.body) {
      return Status::Corruption(name + ": body is not in canonical form");
    }
  } catch (const std::exception& ex) {
    return Status::Corruption(name + ": body is not JSON: " + ex.what());
  }
  if (!body.is_object() || body.value("seq", int64_t{-1}) != e.seq ||
      body.value("kind", std::string()) != e.kind) {
    return Status::Corruption(name + ": the seq or kind column disagrees with the body");
  }
  if (expected_seq == 1 && (e.kind != "ledger" || body.value("format", -1) != kLedgerFormatVersion)) {
    return Status::Corruption(name + ": the first entry must be the ledger's genesis entry");
  }
  if (!body.contains("blobs") || !body["blobs"].is_array()) {
    return Status::Corruption(name + ": body has no blobs array");
  }
  for (const json& r : body["blobs"]) {
    auto digest = Digest256FromHex(r.value("digest", std::string()));
    if (!digest.ok()) return Status::Corruption(name + ": a blob reference has a bad digest");
    RefInfo info{r.value("kind", std::string()), r.value("size", uint64_t{0}), e.seq, e.kind};
    auto [it, inserted] = refs->emplace(*digest, info);
    if (!inserted && (it->second.kind != info.kind || it->second.size != info.size)) {
      return Status::Corruption(name + ": blob " + ToHex(*digest) +
                                " is referenced with another kind or size than in " +
                                EntryName(it->second.seq, it->second.entry_kind));
    }
  }
  return Status::OK();
}

}  // namespace

Result<VerifyReport> Ledger::Verify() const {
  VerifyReport report;
  SQLite::Database& db = *impl_->db;
  try {
    // 1. The file's header fields and schema.
    if (db.execAndGet("PRAGMA application_id").getInt() != kApplicationId ||
        db.execAndGet("PRAGMA user_version").getInt() != kLedgerFormatVersion) {
      return Status::Corruption("the SQLite header's application_id or user_version was changed");
    }
    std::vector<std::string> want = ExpectedSchemaRows();
    std::sort(want.begin(), want.end());
    std::vector<std::string> have = SchemaRows(db);
    std::sort(have.begin(), have.end());
    if (have != want) {
      return Status::Corruption("the ledger's schema was changed (tables, indexes or triggers "
                                "differ from format " + std::to_string(kLedgerFormatVersion) + ")");
    }

    // 2. The chain, entry by entry.
    std::map<Digest256, RefInfo> refs;
    Digest256 prev{};
    SQLite::Statement q(db, "SELECT seq, kind, body, prev_hash, hash FROM entries ORDER BY seq");
    int64_t expected = 1;
    while (q.executeStep()) {
      Entry e = ReadEntry(q);
      if (q.getColumn(3).getBytes() != 32 || q.getColumn(4).getBytes() != 32) {
        return Status::Corruption(EntryName(e.seq, e.kind) + ": a hash column is not 32 bytes");
      }
      UNSEEN_RETURN_IF_ERROR(CheckEntry(e, expected, prev, &refs));
      prev = e.hash;
      ++expected;
    }
    report.entries = expected - 1;
    if (report.entries == 0) return Status::Corruption("the ledger has no entries");
    report.head = prev;

    // 3. Nothing deleted from the end: SQLite remembers the highest seq it gave out.
    SQLite::Statement s(db, "SELECT seq FROM sqlite_sequence WHERE name = 'entries'");
    if (!s.executeStep() || s.getColumn(0).getInt64() != report.entries) {
      return Status::Corruption("entries after entry " + std::to_string(report.entries) +
                                " were deleted (SQLite handed out a higher sequence number)");
    }
    if (s.executeStep()) return Status::Corruption("sqlite_sequence has extra rows");

    // 4. Blobs: bytes match digests, and blobs and references agree.
    SQLite::Statement b(db, "SELECT digest, kind, size, data FROM blobs ORDER BY rowid");
    while (b.executeStep()) {
      Digest256 digest{};
      if (!DigestFromColumn(b.getColumn(0), &digest)) {
        return Status::Corruption("a blob's digest column is not 32 bytes");
      }
      auto it = refs.find(digest);
      if (it == refs.end()) {
        return Status::Corruption("blob " + ToHex(digest) + " is not referenced by any entry");
      }
      const RefInfo& ref = it->second;
      std::string where = EntryName(ref.seq, ref.entry_kind) + ": blob " + ToHex(digest) + " (" +
                          ref.kind + ")";
      const SQLite::Column data = b.getColumn(3);
      std::string_view bytes(static_cast<const char*>(data.getBlob()),
                             static_cast<size_t>(data.getBytes()));
      if (Sha256Of(bytes) != digest) return Status::Corruption(where + ": bytes do not match the digest");
      if (b.getColumn(1).getString() != ref.kind) return Status::Corruption(where + ": kind changed");
      if (b.getColumn(2).getInt64() != static_cast<int64_t>(ref.size) || bytes.size() != ref.size) {
        return Status::Corruption(where + ": size changed");
      }
      report.blob_bytes += bytes.size();
      ++report.blobs;
      refs.erase(it);
    }
    if (!refs.empty()) {
      const auto& [digest, ref] = *refs.begin();
      return Status::Corruption(EntryName(ref.seq, ref.entry_kind) + ": blob " + ToHex(digest) +
                                " (" + ref.kind + ") is missing");
    }
  } catch (const std::exception& e) {
    return Status::Corruption(path_ + ": cannot read the ledger: " + e.what());
  }
  return report;
}

}  // namespace unseen
