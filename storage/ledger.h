// Ledger: one SQLite file holding the hash chain of entries and the
// content-addressed blobs they refer to, for one dataset's evaluation.
//
// Entries are canonical JSON bodies chained by SHA-256(previous hash || body).
// Blobs (bitmaps, digest lists, the sealed holdout, frozen models) are stored
// by the SHA-256 of their bytes; an entry refers to them in its "blobs" array.
// Every byte the file stores is covered by the chain or by a digest the chain
// holds; Verify() recomputes all of it. A Ledger is not thread-safe: use one
// object from one thread at a time.
//
// Usage:
//   UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(path, LedgerMode::kReadWrite));
//   UNSEEN_RETURN_IF_ERROR(ledger->Begin());
//   UNSEEN_ASSIGN_OR_RETURN(BlobRef ref, ledger->PutBlob("rows", bytes));
//   UNSEEN_ASSIGN_OR_RETURN(Entry e, ledger->Append("note", actor, R"({"text":"hi"})", {ref}));
//   UNSEEN_RETURN_IF_ERROR(ledger->Commit());
#ifndef UNSEEN_STORAGE_LEDGER_H_
#define UNSEEN_STORAGE_LEDGER_H_

#include <cstdint>
#include <memory>
#include <optional>
#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// The ledger file format version. Written to disk (genesis entry and the
// SQLite user_version); bump only with a migration. Format 2: no per-row
// digest is stored before the seal, holdout digests and source-wide figures
// are sealed (docs/row-digests.md); format 1 ledgers are refused.
inline constexpr int kLedgerFormatVersion = 2;

enum class LedgerMode { kReadOnly, kReadWrite };

// A blob as an entry refers to it.
struct BlobRef {
  Digest256 digest{};
  std::string kind;  // e.g. "row-digests", "row-set", "sealed-rows"
  uint64_t size = 0;
};

// One entry of the chain, as stored.
struct Entry {
  int64_t seq = 0;          // 1-based, contiguous
  std::string kind;         // e.g. "ledger", "source", "seal", "refusal"
  std::string body;         // canonical JSON; includes "seq", "kind", "time", "actor", "tool"
  Digest256 prev_hash{};    // all zero for the first entry
  Digest256 hash{};         // SHA-256(prev_hash || body)
};

// What Verify() found.
struct VerifyReport {
  int64_t entries = 0;
  int64_t blobs = 0;
  uint64_t blob_bytes = 0;
  Digest256 head{};
};

class Ledger {
 public:
  // Ledgers hold an open SQLite connection and transaction state; copying
  // would alias both.
  Ledger(const Ledger&) = delete;
  Ledger& operator=(const Ledger&) = delete;
  ~Ledger();  // Rolls back an open transaction; never throws.

  // Creates a new ledger at `path` with its genesis entry ("ledger" kind,
  // carrying `genesis_fields`, a JSON object text) inside an open
  // transaction: the caller adds entries and calls Commit(), which makes the
  // file appear at `path` atomically. Until then the work lives in a
  // temporary file next to it, removed if the ledger is destroyed without
  // committing. AlreadyExists if `path` exists (it is never overwritten).
  static Result<std::unique_ptr<Ledger>> Create(const std::string& path, std::string_view actor,
                                                std::string_view genesis_fields);

  // Opens an existing ledger. NotFound if missing; InvalidArgument naming
  // both formats if it is a ledger of another format version (older or
  // newer); Corruption if the file is not a ledger.
  static Result<std::unique_ptr<Ledger>> Open(const std::string& path, LedgerMode mode);

  const std::string& path() const { return path_; }

  // Starts the command's one transaction (an immediate write lock).
  // REQUIRES: kReadWrite and no open transaction.
  Status Begin();
  // Commits. For a ledger from Create(), also moves the file into place;
  // AlreadyExists if something appeared at the path meanwhile.
  Status Commit();
  // Abandons the transaction; the file stays byte-identical.
  void Rollback();

  // Stores `data` under its SHA-256 (a no-op if present with the same kind).
  // REQUIRES: an open transaction.
  Result<BlobRef> PutBlob(std::string_view kind, std::string_view data);
  // Reads a blob and checks its digest (Corruption on mismatch, NotFound if absent).
  Result<std::string> GetBlob(const Digest256& digest) const;

  // Appends an entry. `fields` is a JSON object text of the kind's own
  // fields; the ledger adds "seq", "kind", "time", "actor", "tool" and the
  // "blobs" array from `blobs` (each must already be stored), canonicalises
  // the body and extends the chain. InvalidArgument if `fields` is not a JSON
  // object or uses a reserved key. REQUIRES: an open transaction.
  Result<Entry> Append(std::string_view kind, std::string_view actor, std::string_view fields,
                       const std::vector<BlobRef>& blobs = {});

  // All entries in order, or those of one kind.
  Result<std::vector<Entry>> Entries() const;
  Result<std::vector<Entry>> EntriesOfKind(std::string_view kind) const;
  // The newest entry of a kind, if any.
  Result<std::optional<Entry>> LastOfKind(std::string_view kind) const;
  // The hash of the newest entry.
  Result<Digest256> Head() const;
  // True if some entry has this hash.
  Result<bool> ContainsHash(const Digest256& hash) const;

  // Recomputes the chain, every body's canonical form and every blob digest;
  // checks the schema, the sequence numbers, that blobs and references agree
  // and that nothing was deleted from the end since SQLite last allocated a
  // sequence number. Corruption naming the first entry or blob that fails.
  Result<VerifyReport> Verify() const;

 private:
  struct Impl;
  explicit Ledger(std::unique_ptr<Impl> impl, std::string path);
  std::unique_ptr<Impl> impl_;
  std::string path_;
};

// Canonical JSON of a JSON text: sorted keys, no spaces, shortest round-trip
// numbers, UTF-8. InvalidArgument if `json` does not parse.
Result<std::string> CanonicalJson(std::string_view json);

// The current UTC time as ISO-8601 with seconds ("2026-12-01T22:10:25Z").
// UNSEEN_FIXED_TIME, when set, is returned instead (for reproducible tests).
std::string UtcNow();

}  // namespace unseen

#endif  // UNSEEN_STORAGE_LEDGER_H_
