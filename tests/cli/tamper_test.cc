// Tamper evidence: for every table and column the ledger has, changing one
// cell through SQLite makes `unseen verify` fail with exit code 3 and a
// message naming what is wrong. Deleting and reordering entries likewise.
#include <SQLiteCpp/SQLiteCpp.h>
#include <gtest/gtest.h>

#include <map>
#include <string>
#include <vector>

#include "storage/digest.h"
#include "tests/testing/sample_data.h"
#include "tests/testing/tamper.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using testing::ReadFile;
using testing::RunUnseen;
using testing::ShellQuote;
using testing::TempDir;
using testing::WriteFile;

class TamperTest : public ::testing::Test {
 protected:
  void SetUp() override {
    WriteFile(dir_.File("data.csv"), testing::SampleCsv(300, 12, 5));
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    auto init = RunUnseen("init --ledger " + Q("l") + " --data " + Q("data.csv") +
                          " --target label --id id --group site --time day");
    ASSERT_EQ(init.exit_code, 0) << init.err;
    auto seal = RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                          " --fraction 0.25 --seed 3 --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
    auto ok = RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k"));
    ASSERT_EQ(ok.exit_code, 0) << ok.err;
  }

  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }

  // Runs SQL on the ledger with the append-only triggers lifted, then puts
  // the triggers back exactly as they were.
  void Tamper(const std::string& sql) { testing::TamperLedger(dir_.File("l"), sql); }

  testing::RunResult Verify(const std::string& extra = "") {
    return RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k") + extra);
  }

  void ExpectIntegrityFailure(const std::string& sql, const std::string& message) {
    Tamper(sql);
    auto r = Verify();
    EXPECT_EQ(r.exit_code, 3) << sql << "\n" << r.out << r.err;
    EXPECT_NE(r.err.find(message), std::string::npos) << sql << "\nstderr: " << r.err;
  }

  TempDir dir_;
};

// --- entries: one test per column -----------------------------------------

TEST_F(TamperTest, EntrySeqChanged) {
  ExpectIntegrityFailure("UPDATE entries SET seq = 7 WHERE seq = 2",
                         "entry 2: missing or out of order");
}

TEST_F(TamperTest, EntryKindChanged) {
  ExpectIntegrityFailure("UPDATE entries SET kind = 'note' WHERE seq = 2",
                         "entry 2 (note): the seq or kind column disagrees with the body");
}

TEST_F(TamperTest, EntryBodyChanged) {
  // One character of the seal entry's body: the seed.
  ExpectIntegrityFailure("UPDATE entries SET body = replace(body, '\"seed\":3', '\"seed\":4') "
                         "WHERE seq = 3",
                         "entry 3 (seal): hash does not match SHA-256(prev_hash || body)");
}

TEST_F(TamperTest, EntryPrevHashChanged) {
  ExpectIntegrityFailure("UPDATE entries SET prev_hash = zeroblob(32) WHERE seq = 3",
                         "entry 3 (seal): prev_hash does not match");
}

TEST_F(TamperTest, EntryHashChanged) {
  ExpectIntegrityFailure("UPDATE entries SET hash = randomblob(32) WHERE seq = 2",
                         "entry 2 (source): hash does not match");
}

TEST_F(TamperTest, EntryBodyRewrittenWithMatchingHashBreaksTheNextLink) {
  // A forger who recomputes entry 2's hash still breaks entry 3's prev_hash.
  std::string prev, body;
  {
    SQLite::Database db(dir_.File("l"), SQLite::OPEN_READONLY);
    SQLite::Statement q(db, "SELECT prev_hash, body FROM entries WHERE seq = 2");
    ASSERT_TRUE(q.executeStep());
    prev.assign(static_cast<const char*>(q.getColumn(0).getBlob()), 32);
    body = q.getColumn(1).getString();
  }
  size_t at = body.find("\"rows\":300");
  ASSERT_NE(at, std::string::npos);
  body.replace(at, 10, "\"rows\":301");
  Sha256 h;
  h.Update(prev);
  h.Update(body);
  std::string hex = ToHex(h.Finish());
  Tamper("UPDATE entries SET body = '" + body + "', hash = x'" + hex + "' WHERE seq = 2");
  auto r = Verify();
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.err.find("entry 3 (seal): prev_hash does not match"), std::string::npos) << r.err;
}

// --- blobs: one test per column -------------------------------------------

TEST_F(TamperTest, BlobDigestChanged) {
  ExpectIntegrityFailure("UPDATE blobs SET digest = randomblob(32) WHERE kind = 'row-digests'",
                         "is not referenced by any entry");
}

TEST_F(TamperTest, BlobKindChanged) {
  ExpectIntegrityFailure("UPDATE blobs SET kind = 'row-set' WHERE kind = 'sealed-digests'",
                         "(sealed-digests): kind changed");
}

TEST_F(TamperTest, BlobSizeChanged) {
  ExpectIntegrityFailure("UPDATE blobs SET size = size + 1 WHERE kind = 'sealed-rows'",
                         "(sealed-rows): size changed");
}

TEST_F(TamperTest, BlobDataChanged) {
  for (const char* kind : {"row-digests", "content-digests", "row-set", "sealed-rows",
                           "sealed-digests", "sealed-summary"}) {
    SCOPED_TRACE(kind);
    std::string bytes = ReadFile(dir_.File("l"));
    ExpectIntegrityFailure(std::string("UPDATE blobs SET data = randomblob(length(data)) "
                                       "WHERE rowid = (SELECT min(rowid) FROM blobs WHERE kind = '") +
                               kind + "')",
                           std::string("(") + kind + "): bytes do not match the digest");
    WriteFile(dir_.File("l"), bytes);  // restore for the next kind
    ASSERT_EQ(Verify().exit_code, 0);
  }
}

TEST_F(TamperTest, BlobDeleted) {
  ExpectIntegrityFailure("DELETE FROM blobs WHERE kind = 'sealed-rows'", "(sealed-rows) is missing");
}

TEST_F(TamperTest, BlobAdded) {
  ExpectIntegrityFailure("INSERT INTO blobs (digest, kind, size, data) "
                         "VALUES (randomblob(32), 'note', 1, x'00')",
                         "is not referenced by any entry");
}

// --- SQLite's own bookkeeping and the schema -------------------------------

TEST_F(TamperTest, SequenceCounterChanged) {
  ExpectIntegrityFailure("UPDATE sqlite_sequence SET seq = 9 WHERE name = 'entries'",
                         "were deleted");
}

TEST_F(TamperTest, TriggerDropped) {
  SQLite::Database db(dir_.File("l"), SQLite::OPEN_READWRITE);
  db.exec("DROP TRIGGER entries_append_only_update");
  auto r = Verify();
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.err.find("schema was changed"), std::string::npos) << r.err;
}

TEST_F(TamperTest, ApplicationIdChanged) {
  SQLite::Database db(dir_.File("l"), SQLite::OPEN_READWRITE);
  db.exec("PRAGMA application_id = 1");
  auto r = Verify();
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.err.find("not an unseen ledger"), std::string::npos) << r.err;
}

// --- deleting and reordering entries ---------------------------------------

TEST_F(TamperTest, MiddleEntryDeleted) {
  ExpectIntegrityFailure("DELETE FROM entries WHERE seq = 2", "entry 2: missing or out of order");
}

TEST_F(TamperTest, LastEntryDeleted) {
  ExpectIntegrityFailure("DELETE FROM entries WHERE seq = 3",
                         "entries after entry 2 were deleted");
}

TEST_F(TamperTest, TruncationHiddenFromSqliteIsCaughtByAPinnedHead) {
  std::string head = RunUnseen("head --ledger " + Q("l")).out;
  head.erase(head.find_last_not_of('\n') + 1);
  ASSERT_EQ(head.size(), 64u);
  Tamper("DELETE FROM entries WHERE seq = 3; UPDATE sqlite_sequence SET seq = 2; "
         "DELETE FROM blobs WHERE kind IN ('row-set', 'sealed-rows', 'sealed-digests', "
         "'sealed-summary', 'row-digests', 'content-digests')");
  // Without the pin the shortened chain is self-consistent...
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l")).exit_code, 0);
  // ...with it, the rewrite is caught.
  auto r = RunUnseen("verify --ledger " + Q("l") + " --expect-head " + head);
  EXPECT_EQ(r.exit_code, 3);
  EXPECT_NE(r.err.find("no longer contains head " + head), std::string::npos) << r.err;
}

TEST_F(TamperTest, EntriesReordered) {
  // Swap entries 2 and 3 wholesale (all columns but seq).
  // Swap entries 2 and 3 wholesale by exchanging their sequence numbers.
  ExpectIntegrityFailure("UPDATE entries SET seq = -seq WHERE seq IN (2, 3);"
                         "UPDATE entries SET seq = 5 + seq WHERE seq IN (-2, -3);",
                         "entry 2 (seal): prev_hash does not match");
}

TEST_F(TamperTest, UnchangedLedgerPassesAndAppendOnlyTriggersRefuseEdits) {
  auto r = Verify(" --json");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("\"entries\":3"), std::string::npos) << r.out;
  EXPECT_NE(r.out.find("\"holdout_rows_checked\":75"), std::string::npos) << r.out;
  SQLite::Database db(dir_.File("l"), SQLite::OPEN_READWRITE);
  EXPECT_THROW(db.exec("UPDATE entries SET kind = 'x' WHERE seq = 1"), SQLite::Exception);
  EXPECT_THROW(db.exec("DELETE FROM blobs"), SQLite::Exception);
}

}  // namespace
}  // namespace unseen
