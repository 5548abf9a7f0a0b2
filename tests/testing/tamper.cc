#include "tests/testing/tamper.h"

#include <SQLiteCpp/SQLiteCpp.h>

#include <utility>
#include <vector>

namespace unseen::testing {

void TamperLedger(const std::string& ledger_path, const std::string& sql) {
  SQLite::Database db(ledger_path, SQLite::OPEN_READWRITE);
  std::vector<std::pair<std::string, std::string>> triggers;
  SQLite::Statement q(db, "SELECT name, sql FROM sqlite_master WHERE type = 'trigger'");
  while (q.executeStep()) {
    triggers.emplace_back(q.getColumn(0).getString(), q.getColumn(1).getString());
  }
  for (const auto& [name, _] : triggers) db.exec("DROP TRIGGER " + name);
  db.exec(sql);
  for (const auto& [_, text] : triggers) db.exec(text);
}

}  // namespace unseen::testing
