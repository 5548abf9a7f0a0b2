// The ledger file: creation that appears only at commit, transactions that leave the file
// byte-identical when abandoned, the hash chain, canonical bodies, blobs, Verify() on damaged
// files, and the head.
#include "storage/ledger.h"

#include <SQLiteCpp/SQLiteCpp.h>
#include <gtest/gtest.h>

#include <cstdlib>
#include <filesystem>
#include <memory>
#include <string>
#include <utility>
#include <vector>

#include "storage/digest.h"
#include "storage/version.h"
#include "tests/testing/tamper.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using testing::ReadFile;
using testing::TempDir;
using testing::WriteFile;

bool Exists(const std::string& path) { return std::filesystem::exists(path); }

// SHA-256(prev || body), computed here from the digest functions alone.
Digest256 ExpectedHash(const Digest256& prev, const std::string& body) {
  return Sha256Of(std::string(prev.begin(), prev.end()) + body);
}

class LedgerTest : public ::testing::Test {
 protected:
  std::string Path() const { return dir_.File("l"); }

  // A committed ledger: the genesis entry, a note, a blob and an entry referring to it, and a
  // last note with no blobs.
  void MakeLedger() {
    auto ledger = Ledger::Create(Path(), "ann", R"({"name":"test"})");
    ASSERT_OK(ledger);
    ASSERT_OK((*ledger)->Append("note", "ann", R"({"text":"needle-abcdef"})"));
    auto ref = (*ledger)->PutBlob("rows", blob_);
    ASSERT_OK(ref);
    ASSERT_OK((*ledger)->Append("rows", "ann", R"({"n":3})", {*ref}));
    ASSERT_OK((*ledger)->Append("note", "bob", R"({"text":"last"})"));
    ASSERT_OK((*ledger)->Commit());
  }

  std::unique_ptr<Ledger> OpenLedger(LedgerMode mode = LedgerMode::kReadWrite) {
    auto ledger = Ledger::Open(Path(), mode);
    EXPECT_TRUE(ledger.ok()) << ledger.status().ToString();
    return ledger.ok() ? std::move(*ledger) : nullptr;
  }

  // Runs SQL on the ledger file directly, with the append-only triggers lifted, then puts the
  // triggers back exactly as they were (as tests/cli/tamper_test.cc does).
  void Tamper(const std::string& sql) { testing::TamperLedger(Path(), sql); }

  // Verify() on the file as it is now; expects Corruption whose message contains `message`.
  void ExpectCorruption(const std::string& message) {
    auto ledger = Ledger::Open(Path(), LedgerMode::kReadOnly);
    ASSERT_OK(ledger);
    auto report = (*ledger)->Verify();
    ASSERT_FALSE(report.ok()) << "Verify() passed";
    EXPECT_TRUE(report.status().IsCorruption()) << report.status().ToString();
    EXPECT_NE(report.status().message().find(message), std::string::npos)
        << report.status().ToString();
  }

  TempDir dir_;
  const std::string blob_ = std::string("row\0one\xff\x01 two", 13);
};

// --- creation and transactions ---------------------------------------------

TEST_F(LedgerTest, CreatedLedgerAppearsOnlyAtCommit) {
  auto ledger = Ledger::Create(Path(), "ann", R"({"name":"test"})");
  ASSERT_OK(ledger);
  EXPECT_FALSE(Exists(Path()));
  ASSERT_OK((*ledger)->Append("note", "ann", R"({"text":"hi"})"));
  EXPECT_FALSE(Exists(Path()));
  ASSERT_OK((*ledger)->Commit());
  EXPECT_TRUE(Exists(Path()));
  ledger->reset();

  auto reopened = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(reopened, nullptr);
  auto entries = reopened->Entries();
  ASSERT_OK(entries);
  ASSERT_EQ(entries->size(), 2u);
  EXPECT_EQ((*entries)[0].seq, 1);
  EXPECT_EQ((*entries)[0].kind, "ledger");
  // Format 2 since the per-row digests moved out of reach (docs/ledger-schema.md).
  EXPECT_NE((*entries)[0].body.find(R"("format":2,)"), std::string::npos) << (*entries)[0].body;
  EXPECT_NE((*entries)[0].body.find(R"("name":"test")"), std::string::npos);
  EXPECT_EQ((*entries)[1].seq, 2);
  EXPECT_EQ((*entries)[1].kind, "note");
}

TEST_F(LedgerTest, CreateWithoutCommitLeavesNothingBehind) {
  {
    auto ledger = Ledger::Create(Path(), "ann", "{}");
    ASSERT_OK(ledger);
    ASSERT_OK((*ledger)->PutBlob("rows", blob_));
    ASSERT_OK((*ledger)->Append("note", "ann", R"({"text":"hi"})"));
  }
  EXPECT_FALSE(Exists(Path()));
  // No temporary file or journal is left in the directory either.
  EXPECT_TRUE(std::filesystem::is_empty(dir_.path()));
}

TEST_F(LedgerTest, CreateNeverOverwrites) {
  WriteFile(Path(), "someone's file");
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_FALSE(ledger.ok());
  EXPECT_TRUE(ledger.status().IsAlreadyExists()) << ledger.status().ToString();
  EXPECT_EQ(ReadFile(Path()), "someone's file");
}

TEST_F(LedgerTest, CreateRefusesGenesisFieldsThatAreNotAnObject) {
  EXPECT_TRUE(Ledger::Create(Path(), "ann", "[1]").status().IsInvalidArgument());
  EXPECT_TRUE(Ledger::Create(Path(), "ann", "{oops").status().IsInvalidArgument());
  EXPECT_FALSE(Exists(Path()));
}

TEST_F(LedgerTest, AbandonedTransactionLeavesTheFileByteIdentical) {
  MakeLedger();
  const std::string before = ReadFile(Path());
  {
    auto ledger = OpenLedger();
    ASSERT_NE(ledger, nullptr);
    ASSERT_OK(ledger->Begin());
    auto ref = ledger->PutBlob("rows", std::string(100000, 'x'));
    ASSERT_OK(ref);
    ASSERT_OK(ledger->Append("rows", "ann", R"({"n":1})", {*ref}));
    ASSERT_OK(ledger->Append("note", "ann", R"({"text":"gone"})"));
  }  // destroyed without Commit()
  EXPECT_EQ(ReadFile(Path()), before);
  EXPECT_FALSE(Exists(Path() + "-journal"));
}

TEST_F(LedgerTest, RollbackRestoresTheHeadAndTheFile) {
  MakeLedger();
  const std::string before = ReadFile(Path());
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto head = ledger->Head();
  ASSERT_OK(head);
  ASSERT_OK(ledger->Begin());
  auto added = ledger->Append("note", "ann", R"({"text":"gone"})");
  ASSERT_OK(added);
  EXPECT_EQ(added->seq, 5);
  ledger->Rollback();

  auto after = ledger->Head();
  ASSERT_OK(after);
  EXPECT_EQ(ToHex(*after), ToHex(*head));
  auto contains = ledger->ContainsHash(added->hash);
  ASSERT_OK(contains);
  EXPECT_FALSE(*contains);
  // Append() needs a transaction again; the next entry reuses sequence number 5.
  EXPECT_FALSE(ledger->Append("note", "ann", R"({"text":"x"})").ok());
  ASSERT_OK(ledger->Begin());
  auto next = ledger->Append("note", "ann", R"({"text":"kept"})");
  ASSERT_OK(next);
  EXPECT_EQ(next->seq, 5);
  ledger->Rollback();
  ledger.reset();
  EXPECT_EQ(ReadFile(Path()), before);
}

TEST_F(LedgerTest, ReadOnlyLedgerRefusesToBegin) {
  MakeLedger();
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  EXPECT_FALSE(ledger->Begin().ok());
}

TEST_F(LedgerTest, OpenReportsMissingAndForeignFiles) {
  EXPECT_TRUE(Ledger::Open(Path(), LedgerMode::kReadOnly).status().IsNotFound());

  WriteFile(Path(), "this is not a database, just forty-odd bytes of text\n");
  auto text = Ledger::Open(Path(), LedgerMode::kReadOnly);
  ASSERT_FALSE(text.ok());
  EXPECT_TRUE(text.status().IsCorruption()) << text.status().ToString();

  const std::string other = dir_.File("other.db");
  {
    SQLite::Database db(other, SQLite::OPEN_READWRITE | SQLite::OPEN_CREATE);
    db.exec("CREATE TABLE t (x INTEGER)");
  }
  auto foreign = Ledger::Open(other, LedgerMode::kReadOnly);
  ASSERT_FALSE(foreign.ok());
  EXPECT_TRUE(foreign.status().IsCorruption());
  EXPECT_NE(foreign.status().message().find("not an unseen ledger"), std::string::npos)
      << foreign.status().ToString();
}

// --- the chain and the bodies ----------------------------------------------

TEST_F(LedgerTest, EveryEntryHashesThePreviousHashAndItsBody) {
  MakeLedger();
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  auto entries = ledger->Entries();
  ASSERT_OK(entries);
  ASSERT_EQ(entries->size(), 4u);
  Digest256 prev{};  // the first entry's prev_hash is all zero
  for (size_t i = 0; i < entries->size(); ++i) {
    const Entry& e = (*entries)[i];
    EXPECT_EQ(e.seq, static_cast<int64_t>(i + 1));
    EXPECT_EQ(ToHex(e.prev_hash), ToHex(prev)) << "entry " << e.seq;
    EXPECT_EQ(ToHex(e.hash), ToHex(ExpectedHash(prev, e.body))) << "entry " << e.seq;
    prev = e.hash;
  }
  auto head = ledger->Head();
  ASSERT_OK(head);
  EXPECT_EQ(ToHex(*head), ToHex(prev));
}

TEST_F(LedgerTest, AppendReturnsTheEntryAsStored) {
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_OK(ledger);
  auto genesis_head = (*ledger)->Head();
  ASSERT_OK(genesis_head);
  auto e = (*ledger)->Append("note", "ann", R"({"text":"hi"})");
  ASSERT_OK(e);
  EXPECT_EQ(e->seq, 2);
  EXPECT_EQ(ToHex(e->prev_hash), ToHex(*genesis_head));
  EXPECT_EQ(ToHex(e->hash), ToHex(ExpectedHash(*genesis_head, e->body)));
  ASSERT_OK((*ledger)->Commit());

  auto last = (*ledger)->LastOfKind("note");
  ASSERT_OK(last);
  ASSERT_TRUE(last->has_value());
  EXPECT_EQ((*last)->body, e->body);
  EXPECT_EQ(ToHex((*last)->hash), ToHex(e->hash));
}

TEST_F(LedgerTest, BodiesAreCanonicalWithSortedKeys) {
  ASSERT_EQ(setenv("UNSEEN_FIXED_TIME", "2026-12-01T22:10:25Z", 1), 0);
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_OK(ledger);
  auto e = (*ledger)->Append(
      "note", "ann", R"({ "zeta": 1, "alpha": {"b": [2.5, 0.1, "x"], "a": null}, "mid": true })");
  unsetenv("UNSEEN_FIXED_TIME");
  ASSERT_OK(e);
  EXPECT_EQ(e->body, std::string(R"({"actor":"ann","alpha":{"a":null,"b":[2.5,0.1,"x"]},)") +
                         R"("blobs":[],"kind":"note","mid":true,"seq":2,)" +
                         R"("time":"2026-12-01T22:10:25Z","tool":"unseen )" + kVersion +
                         R"(","zeta":1})");
  auto canonical = CanonicalJson(e->body);
  ASSERT_OK(canonical);
  EXPECT_EQ(*canonical, e->body);
}

TEST_F(LedgerTest, CanonicalJsonSortsKeysAndDropsSpaces) {
  auto c = CanonicalJson(R"( {"b" : [ 1, 0.5 ], "a" : {"y": "é", "x": false}} )");
  ASSERT_OK(c);
  EXPECT_EQ(*c, R"({"a":{"x":false,"y":"é"},"b":[1,0.5]})");
  EXPECT_TRUE(CanonicalJson("{not json").status().IsInvalidArgument());
}

TEST_F(LedgerTest, ReservedKeysAndNonObjectsAreRejected) {
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_OK(ledger);
  auto head = (*ledger)->Head();
  ASSERT_OK(head);
  for (const char* key : {"seq", "kind", "time", "actor", "tool", "blobs"}) {
    auto e = (*ledger)->Append("note", "ann", std::string(R"({")") + key + R"(":1})");
    ASSERT_FALSE(e.ok()) << key;
    EXPECT_TRUE(e.status().IsInvalidArgument()) << e.status().ToString();
    EXPECT_EQ(e.status().message(), std::string("reserved entry key: ") + key);
  }
  EXPECT_TRUE((*ledger)->Append("note", "ann", "[1,2]").status().IsInvalidArgument());
  EXPECT_TRUE((*ledger)->Append("note", "ann", "{oops").status().IsInvalidArgument());
  // Nothing was appended.
  auto after = (*ledger)->Head();
  ASSERT_OK(after);
  EXPECT_EQ(ToHex(*after), ToHex(*head));
  auto entries = (*ledger)->Entries();
  ASSERT_OK(entries);
  EXPECT_EQ(entries->size(), 1u);
}

// --- blobs -----------------------------------------------------------------

TEST_F(LedgerTest, BlobRoundTripsByItsDigest) {
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_OK(ledger);
  auto ref = (*ledger)->PutBlob("rows", blob_);
  ASSERT_OK(ref);
  EXPECT_EQ(ToHex(ref->digest), ToHex(Sha256Of(blob_)));
  EXPECT_EQ(ref->kind, "rows");
  EXPECT_EQ(ref->size, 13u);
  // Storing the same bytes again is a no-op that gives the same reference.
  auto again = (*ledger)->PutBlob("rows", blob_);
  ASSERT_OK(again);
  EXPECT_EQ(ToHex(again->digest), ToHex(ref->digest));

  auto e = (*ledger)->Append("rows", "ann", "{}", {*ref});
  ASSERT_OK(e);
  EXPECT_NE(e->body.find(R"("blobs":[{"digest":")" + ToHex(ref->digest) +
                         R"(","kind":"rows","size":13}])"),
            std::string::npos)
      << e->body;
  ASSERT_OK((*ledger)->Commit());

  auto read = (*ledger)->GetBlob(ref->digest);
  ASSERT_OK(read);
  EXPECT_EQ(*read, blob_);
  EXPECT_TRUE((*ledger)->GetBlob(Sha256Of("not stored")).status().IsNotFound());
  auto report = (*ledger)->Verify();
  ASSERT_OK(report);
  EXPECT_EQ(report->blobs, 1);
  EXPECT_EQ(report->blob_bytes, 13u);
}

TEST_F(LedgerTest, AppendRefusesAReferenceToAnUnstoredBlob) {
  auto ledger = Ledger::Create(Path(), "ann", "{}");
  ASSERT_OK(ledger);
  BlobRef missing{Sha256Of("never stored"), "rows", 12};
  EXPECT_FALSE((*ledger)->Append("rows", "ann", "{}", {missing}).ok());
  auto ref = (*ledger)->PutBlob("rows", blob_);
  ASSERT_OK(ref);
  BlobRef wrong_size = *ref;
  wrong_size.size = 14;
  EXPECT_FALSE((*ledger)->Append("rows", "ann", "{}", {wrong_size}).ok());
}

TEST_F(LedgerTest, GetBlobChecksTheDigest) {
  MakeLedger();
  const std::string hex = ToHex(Sha256Of(blob_));
  std::string changed = blob_;
  changed[0] = 's';  // was 'r'
  Tamper("UPDATE blobs SET data = X'" + ToHex(changed.data(), changed.size()) +
         "' WHERE digest = X'" + hex + "'");
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  auto read = ledger->GetBlob(Sha256Of(blob_));
  ASSERT_FALSE(read.ok());
  EXPECT_TRUE(read.status().IsCorruption()) << read.status().ToString();
  ExpectCorruption("entry 3 (rows): blob " + hex + " (rows): bytes do not match the digest");
}

// --- Verify() --------------------------------------------------------------

TEST_F(LedgerTest, VerifyPassesOnAGoodLedger) {
  MakeLedger();
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  auto report = ledger->Verify();
  ASSERT_OK(report);
  EXPECT_EQ(report->entries, 4);
  EXPECT_EQ(report->blobs, 1);
  EXPECT_EQ(report->blob_bytes, 13u);
  auto head = ledger->Head();
  ASSERT_OK(head);
  EXPECT_EQ(ToHex(report->head), ToHex(*head));
}

TEST_F(LedgerTest, VerifyNamesTheEntryWhoseBodyChanged) {
  MakeLedger();
  Tamper("UPDATE entries SET body = replace(body, 'needle-abcdef', 'needle-abcdeg') WHERE seq = 2");
  ExpectCorruption("entry 2 (note): hash does not match SHA-256(prev_hash || body)");
}

TEST_F(LedgerTest, ByteFlippedInTheFileIsCorruptionNamingTheEntry) {
  MakeLedger();
  std::string bytes = ReadFile(Path());
  const std::string needle = "needle-abcdef";
  const size_t at = bytes.find(needle);
  ASSERT_NE(at, std::string::npos);
  ASSERT_EQ(bytes.find(needle, at + 1), std::string::npos) << "the body is stored once";
  bytes[at + needle.size() - 1] ^= 0x01;  // 'f' (0x66) becomes 'g' (0x67)
  WriteFile(Path(), bytes);
  ExpectCorruption("entry 2 (note): hash does not match SHA-256(prev_hash || body)");
}

TEST_F(LedgerTest, VerifyDetectsTheNewestEntryDeleted) {
  // Verify() promises to catch deletions from the end that SQLite's record of the highest
  // sequence number handed out still shows.
  MakeLedger();
  Tamper("DELETE FROM entries WHERE seq = 4");
  ExpectCorruption("entries after entry 3 were deleted");
}

TEST_F(LedgerTest, DeletionThatRewindsTheSequenceNeedsThePinnedHead) {
  // When the sequence record is rewound too, the shorter chain is self-consistent and Verify()
  // passes; what catches it is a head printed earlier, which ContainsHash() no longer finds.
  MakeLedger();
  Digest256 pinned{};
  {
    auto ledger = OpenLedger(LedgerMode::kReadOnly);
    ASSERT_NE(ledger, nullptr);
    auto head = ledger->Head();
    ASSERT_OK(head);
    pinned = *head;
  }
  Tamper("DELETE FROM entries WHERE seq = 4; UPDATE sqlite_sequence SET seq = 3 "
         "WHERE name = 'entries'");
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  auto report = ledger->Verify();
  ASSERT_OK(report);
  EXPECT_EQ(report->entries, 3);
  auto contains = ledger->ContainsHash(pinned);
  ASSERT_OK(contains);
  EXPECT_FALSE(*contains);
}

TEST_F(LedgerTest, VerifyDetectsAMiddleEntryDeleted) {
  MakeLedger();
  Tamper("DELETE FROM entries WHERE seq = 2");
  ExpectCorruption("entry 2: missing or out of order (found sequence number 3)");
}

// --- head ------------------------------------------------------------------

TEST_F(LedgerTest, HeadIsTheNewestHashAndContainsHashFindsEveryEntry) {
  MakeLedger();
  auto ledger = OpenLedger();
  ASSERT_NE(ledger, nullptr);
  auto entries = ledger->Entries();
  ASSERT_OK(entries);
  for (const Entry& e : *entries) {
    auto contains = ledger->ContainsHash(e.hash);
    ASSERT_OK(contains);
    EXPECT_TRUE(*contains) << "entry " << e.seq;
  }
  auto absent = ledger->ContainsHash(Sha256Of("no entry has this hash"));
  ASSERT_OK(absent);
  EXPECT_FALSE(*absent);

  auto head = ledger->Head();
  ASSERT_OK(head);
  EXPECT_EQ(ToHex(*head), ToHex(entries->back().hash));
  ASSERT_OK(ledger->Begin());
  auto e = ledger->Append("note", "ann", R"({"text":"newer"})");
  ASSERT_OK(e);
  ASSERT_OK(ledger->Commit());
  auto moved = ledger->Head();
  ASSERT_OK(moved);
  EXPECT_EQ(ToHex(*moved), ToHex(e->hash));
  EXPECT_EQ(ToHex(e->prev_hash), ToHex(*head));
}

TEST_F(LedgerTest, EntriesOfKindKeepsTheOrder) {
  MakeLedger();
  auto ledger = OpenLedger(LedgerMode::kReadOnly);
  ASSERT_NE(ledger, nullptr);
  auto notes = ledger->EntriesOfKind("note");
  ASSERT_OK(notes);
  ASSERT_EQ(notes->size(), 2u);
  EXPECT_EQ((*notes)[0].seq, 2);
  EXPECT_EQ((*notes)[1].seq, 4);
  auto none = ledger->LastOfKind("seal");
  ASSERT_OK(none);
  EXPECT_FALSE(none->has_value());
}

}  // namespace
}  // namespace unseen
