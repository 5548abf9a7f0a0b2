// Editing a ledger behind the tool's back, as an attacker with write access
// to the file would: SQL run directly on it with the append-only triggers
// lifted, and the triggers put back exactly as they were.
#ifndef UNSEEN_TESTS_TESTING_TAMPER_H_
#define UNSEEN_TESTS_TESTING_TAMPER_H_

#include <string>

namespace unseen::testing {

// Runs `sql` on the SQLite file at `ledger_path`; throws SQLite::Exception on
// bad SQL (a test bug).
void TamperLedger(const std::string& ledger_path, const std::string& sql);

}  // namespace unseen::testing

#endif  // UNSEEN_TESTS_TESTING_TAMPER_H_
