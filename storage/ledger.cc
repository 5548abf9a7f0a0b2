#include "storage/ledger.h"

#include <SQLiteCpp/SQLiteCpp.h>
#include <fcntl.h>
#include <sqlite3.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <ctime>
#include <map>
#include <nlohmann/json.hpp>

#include "storage/ledger_internal.h"
#include "storage/version.h"

namespace unseen {
namespace {

using json = nlohmann::json;

// The whole schema. Verify() compares the file's schema with the one this
// text produces, so any added table, index or trigger is caught.
constexpr const char* kSchema = R"sql(
CREATE TABLE entries (
  seq INTEGER PRIMARY KEY AUTOINCREMENT,
  kind TEXT NOT NULL,
  body TEXT NOT NULL,
  prev_hash BLOB NOT NULL,
  hash BLOB NOT NULL UNIQUE
);
CREATE TABLE blobs (
  digest BLOB PRIMARY KEY,
  kind TEXT NOT NULL,
  size INTEGER NOT NULL,
  data BLOB NOT NULL
);
CREATE TRIGGER entries_append_only_update BEFORE UPDATE ON entries
  BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER entries_append_only_delete BEFORE DELETE ON entries
  BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER blobs_append_only_update BEFORE UPDATE ON blobs
  BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
CREATE TRIGGER blobs_append_only_delete BEFORE DELETE ON blobs
  BEGIN SELECT RAISE(ABORT, 'the ledger is append-only'); END;
)sql";

const char* const kReservedKeys[] = {"seq", "kind", "time", "actor", "tool", "blobs"};

}  // namespace

namespace internal {

// "UNSN": marks the SQLite file as an unseen ledger. Written to disk.
const int kApplicationId = 0x554E534E;

bool DigestFromColumn(const SQLite::Column& col, Digest256* out) {
  if (col.getBytes() != 32) return false;
  std::memcpy(out->data(), col.getBlob(), 32);
  return true;
}

Digest256 ChainHash(const Digest256& prev, std::string_view body) {
  Sha256 h;
  h.Update(prev.data(), prev.size());
  h.Update(body);
  return h.Finish();
}

// sqlite_master rows as "type|name|tbl_name|sql" lines, ordered by name.
std::vector<std::string> SchemaRows(SQLite::Database& db) {
  std::vector<std::string> rows;
  SQLite::Statement q(db, "SELECT type, name, tbl_name, ifnull(sql, '') FROM sqlite_master "
                          "ORDER BY name");
  while (q.executeStep()) {
    rows.push_back(q.getColumn(0).getString() + "|" + q.getColumn(1).getString() + "|" +
                   q.getColumn(2).getString() + "|" + q.getColumn(3).getString());
  }
  return rows;
}

std::vector<std::string> ExpectedSchemaRows() {
  SQLite::Database mem(":memory:", SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE);
  mem.exec(kSchema);
  return SchemaRows(mem);
}

Entry ReadEntry(SQLite::Statement& q) {
  Entry e;
  e.seq = q.getColumn(0).getInt64();
  e.kind = q.getColumn(1).getString();
  e.body = q.getColumn(2).getString();
  DigestFromColumn(q.getColumn(3), &e.prev_hash);
  DigestFromColumn(q.getColumn(4), &e.hash);
  return e;
}

std::string EntryName(int64_t seq, const std::string& kind) {
  return "entry " + std::to_string(seq) + " (" + kind + ")";
}

}  // namespace internal

using namespace internal;  // NOLINT: this file implements them

Ledger::Ledger(std::unique_ptr<Impl> impl, std::string path)
    : impl_(std::move(impl)), path_(std::move(path)) {}

Ledger::~Ledger() = default;

Result<std::unique_ptr<Ledger>> Ledger::Create(const std::string& path, std::string_view actor,
                                               std::string_view genesis_fields) {
  struct stat st;
  if (::stat(path.c_str(), &st) == 0) {
    return Status::AlreadyExists(path + ": a file already exists here; refusing to overwrite it");
  }
  std::string tmp = path + ".creating-" + std::to_string(::getpid());
  ::unlink(tmp.c_str());
  auto impl = std::make_unique<Impl>();
  try {
    impl->creating_path = tmp;
    impl->db = std::make_unique<SQLite::Database>(tmp, SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE);
    impl->writable = true;
    impl->db->exec("PRAGMA page_size = 16384");
    impl->db->exec("PRAGMA journal_mode = DELETE");
    impl->db->exec("PRAGMA application_id = " + std::to_string(kApplicationId));
    impl->db->exec("PRAGMA user_version = " + std::to_string(kLedgerFormatVersion));
    impl->db->exec(kSchema);
  } catch (const std::exception& e) {
    return Status::IOError(path + ": cannot create the ledger: " + e.what());
  }
  std::unique_ptr<Ledger> ledger(new Ledger(std::move(impl), path));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  json fields;
  try {
    fields = json::parse(genesis_fields);
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("genesis fields are not JSON: ") + e.what());
  }
  if (!fields.is_object()) return Status::InvalidArgument("genesis fields must be a JSON object");
  fields["format"] = kLedgerFormatVersion;
  auto entry = ledger->Append("ledger", actor, fields.dump());
  if (!entry.ok()) return entry.status();
  return ledger;
}

Result<std::unique_ptr<Ledger>> Ledger::Open(const std::string& path, LedgerMode mode) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) {
    return Status::NotFound(path + ": no ledger here (create one with `unseen init`)");
  }
  auto impl = std::make_unique<Impl>();
  try {
    int flags = mode == LedgerMode::kReadWrite ? SQLite::OPEN_READWRITE : SQLite::OPEN_READONLY;
    impl->db = std::make_unique<SQLite::Database>(path, flags);
    impl->writable = mode == LedgerMode::kReadWrite;
    int app = impl->db->execAndGet("PRAGMA application_id").getInt();
    int version = impl->db->execAndGet("PRAGMA user_version").getInt();
    if (app != kApplicationId) {
      return Status::Corruption(path + ": not an unseen ledger (SQLite application_id " +
                                std::to_string(app) + ")");
    }
    if (version >= 1 && version < kLedgerFormatVersion) {
      return Status::InvalidArgument(
          path + ": ledger format " + std::to_string(version) + " was written by an older unseen; " +
          "this version reads format " + std::to_string(kLedgerFormatVersion) +
          " only (format 1 kept plain per-row digests that a reader could match against guessed "
          "rows). Finish that evaluation with the version that wrote it, or register the source "
          "again in a new ledger (`unseen init`) and seal it (`unseen seal`)");
    }
    if (version > kLedgerFormatVersion) {
      return Status::InvalidArgument(path + ": ledger format " + std::to_string(version) +
                                     " was written by a newer unseen; this version reads format " +
                                     std::to_string(kLedgerFormatVersion) +
                                     " only. Use a newer unseen");
    }
    if (version != kLedgerFormatVersion) {
      return Status::Corruption(path + ": ledger format " + std::to_string(version) +
                                " is not a known format (this version reads format " +
                                std::to_string(kLedgerFormatVersion) + ")");
    }
    UNSEEN_RETURN_IF_ERROR(impl->LoadHead());
  } catch (const std::exception& e) {
    return Status::Corruption(path + ": cannot read the ledger: " + e.what());
  }
  return std::unique_ptr<Ledger>(new Ledger(std::move(impl), path));
}

Status Ledger::Begin() {
  if (!impl_->writable) return Status::Internal("Begin() on a read-only ledger");
  if (impl_->in_transaction) return Status::Internal("Begin() inside a transaction");
  try {
    impl_->db->exec("BEGIN IMMEDIATE");
    impl_->in_transaction = true;
    // Another writer may have appended since Open().
    return impl_->LoadHead();
  } catch (const std::exception& e) {
    return Status::IOError(path_ + ": cannot start a transaction: " + e.what());
  }
}

Status Ledger::Commit() {
  if (!impl_->in_transaction) return Status::Internal("Commit() without Begin()");
  try {
    impl_->db->exec("COMMIT");
    impl_->in_transaction = false;
  } catch (const std::exception& e) {
    Rollback();
    return Status::IOError(path_ + ": commit failed: " + e.what());
  }
  if (impl_->creating_path.empty()) return Status::OK();
  // Move a freshly created ledger into place without ever overwriting:
  // link() fails with EEXIST where rename() would replace.
  std::string tmp = impl_->creating_path;
  impl_->db.reset();
  if (::link(tmp.c_str(), path_.c_str()) != 0) {
    int err = errno;
    if (err == EEXIST) return Status::AlreadyExists(path_ + ": a file appeared here meanwhile");
    return Status::IOError(path_ + ": cannot move the new ledger into place: " + std::strerror(err));
  }
  ::unlink(tmp.c_str());
  impl_->creating_path.clear();
  try {
    impl_->db = std::make_unique<SQLite::Database>(path_, SQLite::OPEN_READWRITE);
  } catch (const std::exception& e) {
    return Status::IOError(path_ + ": cannot reopen the new ledger: " + e.what());
  }
  return Status::OK();
}

void Ledger::Rollback() {
  if (!impl_->in_transaction) return;
  try {
    impl_->db->exec("ROLLBACK");
  } catch (...) {  // nothing more can be done; the journal restores the file on next open
  }
  impl_->in_transaction = false;
  (void)impl_->LoadHead();
}

Result<BlobRef> Ledger::PutBlob(std::string_view kind, std::string_view data) {
  if (!impl_->in_transaction) return Status::Internal("PutBlob() outside a transaction");
  BlobRef ref;
  ref.digest = Sha256Of(data);
  ref.kind = std::string(kind);
  ref.size = data.size();
  try {
    SQLite::Statement q(*impl_->db, "SELECT kind FROM blobs WHERE digest = ?");
    q.bind(1, ref.digest.data(), 32);
    if (q.executeStep()) {
      if (q.getColumn(0).getString() != ref.kind) {
        return Status::Internal("blob " + ToHex(ref.digest) + " is already stored as kind " +
                                q.getColumn(0).getString());
      }
      return ref;
    }
    SQLite::Statement ins(*impl_->db,
                          "INSERT INTO blobs (digest, kind, size, data) VALUES (?, ?, ?, ?)");
    ins.bind(1, ref.digest.data(), 32);
    ins.bind(2, ref.kind);
    ins.bind(3, static_cast<int64_t>(ref.size));
    ins.bindNoCopy(4, data.data(), static_cast<int>(data.size()));
    ins.exec();
  } catch (const std::exception& e) {
    return Status::IOError(path_ + ": cannot store a blob: " + e.what());
  }
  return ref;
}

Result<std::string> Ledger::GetBlob(const Digest256& digest) const {
  try {
    SQLite::Statement q(*impl_->db, "SELECT rowid, length(data) FROM blobs WHERE digest = ?");
    q.bind(1, digest.data(), 32);
    if (!q.executeStep()) return Status::NotFound("blob " + ToHex(digest) + " is not in the ledger");
    // Read straight into the result: selecting the column would first assemble the whole blob
    // in SQLite's memory and then copy it (twice the memory for the digest lists, 16 bytes a row).
    const int64_t rowid = q.getColumn(0).getInt64();
    const int64_t size = q.getColumn(1).getInt64();
    std::string data(static_cast<size_t>(size), '\0');
    sqlite3_blob* handle = nullptr;
    int rc = sqlite3_blob_open(impl_->db->getHandle(), "main", "blobs", "data", rowid, 0, &handle);
    for (int64_t at = 0; rc == SQLITE_OK && at < size;) {
      const int n = static_cast<int>(std::min<int64_t>(size - at, int64_t{1} << 30));
      rc = sqlite3_blob_read(handle, data.data() + at, n, static_cast<int>(at));
      at += n;
    }
    if (handle != nullptr) sqlite3_blob_close(handle);
    if (rc != SQLITE_OK) {
      return Status::IOError(path_ + ": cannot read blob " + ToHex(digest) + ": " +
                             sqlite3_errstr(rc));
    }
    if (Sha256Of(data) != digest) {
      return Status::Corruption("blob " + ToHex(digest) + ": its bytes do not match its digest");
    }
    return data;
  } catch (const std::exception& e) {
    return Status::IOError(path_ + ": cannot read a blob: " + e.what());
  }
}

Result<Entry> Ledger::Append(std::string_view kind, std::string_view actor,
                             std::string_view fields, const std::vector<BlobRef>& blobs) {
  if (!impl_->in_transaction) return Status::Internal("Append() outside a transaction");
  json body;
  try {
    body = json::parse(fields);
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("entry fields are not JSON: ") + e.what());
  }
  if (!body.is_object()) return Status::InvalidArgument("entry fields must be a JSON object");
  for (const char* key : kReservedKeys) {
    if (body.contains(key)) return Status::InvalidArgument(std::string("reserved entry key: ") + key);
  }
  Entry e;
  e.seq = impl_->last_seq + 1;
  e.kind = std::string(kind);
  body["seq"] = e.seq;
  body["kind"] = e.kind;
  body["time"] = UtcNow();
  body["actor"] = std::string(actor);
  body["tool"] = std::string("unseen ") + kVersion;
  json refs = json::array();
  try {
    for (const BlobRef& b : blobs) {
      SQLite::Statement q(*impl_->db, "SELECT kind, size FROM blobs WHERE digest = ?");
      q.bind(1, b.digest.data(), 32);
      if (!q.executeStep() || q.getColumn(0).getString() != b.kind ||
          static_cast<uint64_t>(q.getColumn(1).getInt64()) != b.size) {
        return Status::Internal("entry refers to blob " + ToHex(b.digest) + " that is not stored");
      }
      refs.push_back({{"digest", ToHex(b.digest)}, {"kind", b.kind}, {"size", b.size}});
    }
  } catch (const std::exception& ex) {
    return Status::IOError(path_ + ": " + ex.what());
  }
  body["blobs"] = std::move(refs);
  try {
    e.body = body.dump(-1, ' ', false, json::error_handler_t::strict);
  } catch (const std::exception& ex) {
    return Status::InvalidArgument(std::string("entry fields are not valid UTF-8: ") + ex.what());
  }
  e.prev_hash = impl_->head.value_or(Digest256{});
  e.hash = ChainHash(e.prev_hash, e.body);
  try {
    SQLite::Statement ins(*impl_->db, "INSERT INTO entries (seq, kind, body, prev_hash, hash) "
                                      "VALUES (?, ?, ?, ?, ?)");
    ins.bind(1, e.seq);
    ins.bind(2, e.kind);
    ins.bind(3, e.body);
    ins.bind(4, e.prev_hash.data(), 32);
    ins.bind(5, e.hash.data(), 32);
    ins.exec();
  } catch (const std::exception& ex) {
    return Status::IOError(path_ + ": cannot append an entry: " + ex.what());
  }
  impl_->last_seq = e.seq;
  impl_->head = e.hash;
  return e;
}

Result<std::vector<Entry>> Ledger::Entries() const {
  std::vector<Entry> out;
  try {
    SQLite::Statement q(*impl_->db,
                        "SELECT seq, kind, body, prev_hash, hash FROM entries ORDER BY seq");
    while (q.executeStep()) out.push_back(ReadEntry(q));
  } catch (const std::exception& e) {
    return Status::Corruption(path_ + ": cannot read entries: " + e.what());
  }
  return out;
}

Result<std::vector<Entry>> Ledger::EntriesOfKind(std::string_view kind) const {
  std::vector<Entry> out;
  try {
    SQLite::Statement q(*impl_->db, "SELECT seq, kind, body, prev_hash, hash FROM entries "
                                    "WHERE kind = ? ORDER BY seq");
    q.bind(1, std::string(kind));
    while (q.executeStep()) out.push_back(ReadEntry(q));
  } catch (const std::exception& e) {
    return Status::Corruption(path_ + ": cannot read entries: " + e.what());
  }
  return out;
}

Result<std::optional<Entry>> Ledger::LastOfKind(std::string_view kind) const {
  try {
    SQLite::Statement q(*impl_->db, "SELECT seq, kind, body, prev_hash, hash FROM entries "
                                    "WHERE kind = ? ORDER BY seq DESC LIMIT 1");
    q.bind(1, std::string(kind));
    if (q.executeStep()) return std::optional<Entry>(ReadEntry(q));
    return std::optional<Entry>();
  } catch (const std::exception& e) {
    return Status::Corruption(path_ + ": cannot read entries: " + e.what());
  }
}

Result<Digest256> Ledger::Head() const {
  if (!impl_->head) return Status::Corruption(path_ + ": the ledger has no entries");
  return *impl_->head;
}

Result<bool> Ledger::ContainsHash(const Digest256& hash) const {
  try {
    SQLite::Statement q(*impl_->db, "SELECT 1 FROM entries WHERE hash = ?");
    q.bind(1, hash.data(), 32);
    return q.executeStep();
  } catch (const std::exception& e) {
    return Status::Corruption(path_ + ": " + e.what());
  }
}

Result<std::string> CanonicalJson(std::string_view text) {
  try {
    return json::parse(text).dump(-1, ' ', false, json::error_handler_t::strict);
  } catch (const std::exception& e) {
    return Status::InvalidArgument(std::string("not JSON: ") + e.what());
  }
}

std::string UtcNow() {
  if (const char* fixed = std::getenv("UNSEEN_FIXED_TIME"); fixed && *fixed) return fixed;
  std::time_t t = std::time(nullptr);
  std::tm tm{};
  gmtime_r(&t, &tm);
  char buf[32];
  std::strftime(buf, sizeof buf, "%Y-%m-%dT%H:%M:%SZ", &tm);
  return buf;
}

}  // namespace unseen
