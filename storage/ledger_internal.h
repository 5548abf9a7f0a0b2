// Internal to storage/: the ledger's connection state and the helpers that
// ledger.cc and ledger_verify.cc share. Not installed; not for harness/.
#ifndef UNSEEN_STORAGE_LEDGER_INTERNAL_H_
#define UNSEEN_STORAGE_LEDGER_INTERNAL_H_

#include <SQLiteCpp/SQLiteCpp.h>
#include <unistd.h>

#include <memory>
#include <optional>
#include <string>
#include <vector>

#include "storage/ledger.h"

namespace unseen {
namespace internal {

bool DigestFromColumn(const SQLite::Column& col, Digest256* out);
Digest256 ChainHash(const Digest256& prev, std::string_view body);
std::vector<std::string> SchemaRows(SQLite::Database& db);
std::vector<std::string> ExpectedSchemaRows();
Entry ReadEntry(SQLite::Statement& q);
std::string EntryName(int64_t seq, const std::string& kind);
extern const int kApplicationId;

}  // namespace internal

struct Ledger::Impl {
  std::unique_ptr<SQLite::Database> db;
  bool writable = false;
  bool in_transaction = false;
  std::string creating_path;  // non-empty while a Create()d ledger is not yet in place
  std::optional<Digest256> head;
  int64_t last_seq = 0;

  ~Impl() {
    if (in_transaction) {
      try {
        db->exec("ROLLBACK");
      } catch (...) {  // a destructor only reports; nothing to report to here
      }
    }
    db.reset();
    if (!creating_path.empty()) {
      ::unlink(creating_path.c_str());
      ::unlink((creating_path + "-journal").c_str());
    }
  }

  Status LoadHead() {
    SQLite::Statement q(*db, "SELECT seq, hash FROM entries ORDER BY seq DESC LIMIT 1");
    if (q.executeStep()) {
      last_seq = q.getColumn(0).getInt64();
      Digest256 h{};
      if (!internal::DigestFromColumn(q.getColumn(1), &h)) {
        return Status::Corruption(internal::EntryName(last_seq, "?") + ": hash is not 32 bytes");
      }
      head = h;
    } else {
      last_seq = 0;
      head.reset();
    }
    return Status::OK();
  }
};

}  // namespace unseen

#endif  // UNSEEN_STORAGE_LEDGER_INTERNAL_H_
