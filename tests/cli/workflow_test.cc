// The first vertical slice end to end through the binary: keygen, init,
// seal, verify, head, history, status; refusals leave the ledger
// byte-identical; seals are deterministic; bad CSVs give FILE:LINE:COL.
#include <gtest/gtest.h>
#include <stdlib.h>
#include <sys/stat.h>

#include <nlohmann/json.hpp>
#include <set>
#include <sstream>
#include <string>

#include "tests/testing/sample_data.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using json = nlohmann::json;
using testing::ReadFile;
using testing::RunResult;
using testing::RunUnseen;
using testing::ShellQuote;
using testing::TempDir;
using testing::WriteFile;

class WorkflowTest : public ::testing::Test {
 protected:
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  bool Exists(const std::string& name) {
    struct stat st;
    return ::stat(dir_.File(name).c_str(), &st) == 0;
  }
  RunResult Init(const std::string& data, const std::string& ledger, const std::string& extra = "") {
    return RunUnseen("init --json --ledger " + Q(ledger) + " --data " + Q(data) +
                     " --target label " + extra);
  }
  RunResult Seal(const std::string& ledger, const std::string& key, const std::string& extra) {
    return RunUnseen("seal --json --ledger " + Q(ledger) + " --key-file " + Q(key) + " " + extra);
  }
  void Keygen(const std::string& name) { ASSERT_EQ(RunUnseen("keygen --out " + Q(name)).exit_code, 0); }

  TempDir dir_;
};

// Column `col` of every data row of a CSV without quoted fields.
std::vector<std::string> Column(const std::string& csv, size_t col) {
  std::vector<std::string> out;
  std::istringstream in(csv);
  std::string line;
  std::getline(in, line);
  while (std::getline(in, line)) {
    std::istringstream fields(line);
    std::string f;
    for (size_t i = 0; i <= col; ++i) std::getline(fields, f, ',');
    out.push_back(f);
  }
  return out;
}

TEST_F(WorkflowTest, InitSealVerifyEndToEnd) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(400, 10, 2));
  Keygen("k");
  struct stat st;
  ASSERT_EQ(::stat(dir_.File("k").c_str(), &st), 0);
  EXPECT_EQ(st.st_mode & 0777, 0600u);
  EXPECT_EQ(st.st_size, 32);

  RunResult init = Init("d.csv", "l", "--id id --group site --time day");
  ASSERT_EQ(init.exit_code, 0) << init.err;
  json src = json::parse(init.out);
  EXPECT_EQ(src["rows"], 400);
  EXPECT_EQ(src["task"], "classification");
  EXPECT_EQ(src["columns"].size(), 6u);
  EXPECT_EQ(src["columns"][0]["role"], "id");
  EXPECT_EQ(src["columns"][1]["role"], "group");
  EXPECT_EQ(src["columns"][2]["role"], "time");
  EXPECT_EQ(src["columns"][3]["type"], "numeric");
  EXPECT_EQ(src["columns"][5]["type"], "categorical");
  EXPECT_EQ(src["file"]["size"], ReadFile(dir_.File("d.csv")).size());

  RunResult seal = Seal("l", "k", "--fraction 0.2 --strategy stratified --seed 9 --dev-out " + Q("dev.csv"));
  ASSERT_EQ(seal.exit_code, 0) << seal.err;
  json s = json::parse(seal.out);
  EXPECT_EQ(s["holdout_rows"], 80);
  EXPECT_EQ(s["dev_rows"], 320);
  EXPECT_EQ(Column(ReadFile(dir_.File("dev.csv")), 0).size(), 320u);
  EXPECT_EQ(ReadFile(dir_.File("dev.csv")).substr(0, 22), "id,site,day,a,b,label\n");

  RunResult head = RunUnseen("head --ledger " + Q("l"));
  ASSERT_EQ(head.exit_code, 0);
  EXPECT_EQ(head.out, s["head"].get<std::string>() + "\n");

  RunResult verify = RunUnseen("verify --json --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --expect-head " + s["head"].get<std::string>());
  ASSERT_EQ(verify.exit_code, 0) << verify.err;
  json v = json::parse(verify.out);
  EXPECT_EQ(v["entries"], 3);
  EXPECT_EQ(v["holdout_rows_checked"], 80);
  EXPECT_EQ(v["expected_head_found"], true);

  json status = json::parse(RunUnseen("status --json --ledger " + Q("l")).out);
  EXPECT_EQ(status["sealed"], true);
  EXPECT_EQ(status["holdout_rows"], 80);
  EXPECT_EQ(status["holdout_queries"], 0);
  EXPECT_EQ(status["budget_remaining"], 100);

  json history = json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
  ASSERT_EQ(history.size(), 3u);
  EXPECT_EQ(history[0]["kind"], "ledger");
  EXPECT_EQ(history[1]["kind"], "source");
  EXPECT_EQ(history[2]["kind"], "seal");
  EXPECT_EQ(history[2]["prev_hash"], history[1]["hash"]);
  RunResult table = RunUnseen("history --ledger " + Q("l"));
  EXPECT_NE(table.out.find("stratified split, seed 9: holdout 80 rows, dev 320 rows"), std::string::npos)
      << table.out;
}

TEST_F(WorkflowTest, UnsealedStatusAndLedgerFromEnvironment) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(50));
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  ::setenv("UNSEEN_LEDGER", dir_.File("l").c_str(), 1);
  RunResult r = RunUnseen("status");
  ::unsetenv("UNSEEN_LEDGER");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("not sealed yet"), std::string::npos);
}

TEST_F(WorkflowTest, InitRefusesToOverwriteAndLeavesTheFileByteIdentical) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(50));
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  RunResult again = Init("d.csv", "l");
  EXPECT_EQ(again.exit_code, 2);
  EXPECT_NE(again.err.find("refusing to overwrite"), std::string::npos) << again.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
}

TEST_F(WorkflowTest, SecondSealIsRefusedAndLeavesTheFileByteIdentical) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(100));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  ASSERT_EQ(Seal("l", "k", "--seed 1 --dev-out " + Q("dev.csv")).exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  std::string dev_before = ReadFile(dir_.File("dev.csv"));
  RunResult again = Seal("l", "k", "--seed 2 --dev-out " + Q("dev.csv"));
  EXPECT_EQ(again.exit_code, 1);
  EXPECT_NE(again.err.find("already sealed at entry 3"), std::string::npos) << again.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
  EXPECT_EQ(ReadFile(dir_.File("dev.csv")), dev_before);
}

TEST_F(WorkflowTest, SealIsDeterministicWhateverTheKey) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(500, 20, 4));
  Keygen("k1");
  Keygen("k2");
  std::vector<json> seals;
  for (const char* n : {"1", "2"}) {
    ASSERT_EQ(Init("d.csv", std::string("l") + n, "--id id --group site").exit_code, 0);
    RunResult r = Seal(std::string("l") + n, std::string("k") + n,
                       std::string("--strategy group --fraction 0.3 --seed 42 --dev-out ") +
                           Q(std::string("dev") + n + ".csv"));
    ASSERT_EQ(r.exit_code, 0) << r.err;
    seals.push_back(json::parse(r.out));
  }
  EXPECT_EQ(seals[0]["holdout_set"], seals[1]["holdout_set"]);
  EXPECT_EQ(seals[0]["dev_set"], seals[1]["dev_set"]);
  EXPECT_EQ(seals[0]["dev_out"]["sha256"], seals[1]["dev_out"]["sha256"]);
  EXPECT_EQ(ReadFile(dir_.File("dev1.csv")), ReadFile(dir_.File("dev2.csv")));
  // A different seed gives a different partition.
  ASSERT_EQ(Init("d.csv", "l3", "--id id --group site").exit_code, 0);
  RunResult other = Seal("l3", "k1", "--strategy group --fraction 0.3 --seed 43 --dev-out " + Q("dev3.csv"));
  ASSERT_EQ(other.exit_code, 0);
  EXPECT_NE(json::parse(other.out)["holdout_set"], seals[0]["holdout_set"]);
}

TEST_F(WorkflowTest, GroupStrategyKeepsEveryGroupOnOneSide) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(6000, 700, 8));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l", "--id id --group site").exit_code, 0);
  RunResult r = Seal("l", "k", "--strategy group --fraction 0.2 --seed 5 --dev-out " + Q("dev.csv"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json s = json::parse(r.out);
  EXPECT_EQ(s["group_violations"], 0);
  // Independently: the holdout's rows are those missing from the dev file.
  std::vector<std::string> ids = Column(ReadFile(dir_.File("d.csv")), 0);
  std::vector<std::string> sites = Column(ReadFile(dir_.File("d.csv")), 1);
  std::vector<std::string> dev_ids = Column(ReadFile(dir_.File("dev.csv")), 0);
  std::set<std::string> dev_id_set(dev_ids.begin(), dev_ids.end());
  std::set<std::string> dev_sites, holdout_sites;
  for (size_t i = 0; i < ids.size(); ++i) {
    (dev_id_set.count(ids[i]) ? dev_sites : holdout_sites).insert(sites[i]);
  }
  EXPECT_FALSE(holdout_sites.empty());
  for (const std::string& g : holdout_sites) EXPECT_EQ(dev_sites.count(g), 0u) << g;
  EXPECT_EQ(dev_ids.size() + s["holdout_rows"].get<size_t>(), 6000u);
  EXPECT_NEAR(s["holdout_rows"].get<double>(), 1200.0, 40.0);  // groups average 8.6 rows
}

TEST_F(WorkflowTest, TimeStrategyHoldsOutTheLatestRows) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(3000, 10, 9));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l", "--id id --time day").exit_code, 0);
  RunResult r = Seal("l", "k", "--strategy time --fraction 0.25 --seed 1 --dev-out " + Q("dev.csv"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["time_violations"], 0);
  std::vector<std::string> ids = Column(ReadFile(dir_.File("d.csv")), 0);
  std::vector<std::string> days = Column(ReadFile(dir_.File("d.csv")), 2);
  std::vector<std::string> dev_ids = Column(ReadFile(dir_.File("dev.csv")), 0);
  std::set<std::string> dev(dev_ids.begin(), dev_ids.end());
  int latest_dev = 0, earliest_holdout = 1000;
  for (size_t i = 0; i < ids.size(); ++i) {
    int day = std::stoi(days[i]);
    if (dev.count(ids[i])) latest_dev = std::max(latest_dev, day);
    else earliest_holdout = std::min(earliest_holdout, day);
  }
  EXPECT_LT(latest_dev, earliest_holdout);
}

TEST_F(WorkflowTest, RandomSplitReportsGroupAndTimeViolations) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(1000, 5, 3));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l", "--id id --group site --time day").exit_code, 0);
  RunResult r = Seal("l", "k", "--seed 1 --dev-out " + Q("dev.csv"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json s = json::parse(r.out);
  EXPECT_EQ(s["group_violations"], 5);  // five sites, all on both sides of a random cut
  EXPECT_GT(s["time_violations"].get<int>(), 0);
}

TEST_F(WorkflowTest, CrossDuplicatesAreReportedAndCanBeDropped) {
  // Rows 0..99 and an exact copy of each under another id: same content digest.
  std::string csv = "id,a,b,label\n";
  for (int copy = 0; copy < 2; ++copy) {
    for (int i = 0; i < 100; ++i) {
      csv += "c" + std::to_string(copy) + "-" + std::to_string(i) + "," + std::to_string(i) + "," +
             std::to_string(i % 7) + "," + (i % 3 ? "x" : "y") + "\n";
    }
  }
  WriteFile(dir_.File("d.csv"), csv);
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l1", "--id id").exit_code, 0);
  RunResult plain = Seal("l1", "k", "--seed 4 --dev-out " + Q("dev1.csv"));
  ASSERT_EQ(plain.exit_code, 0) << plain.err;
  json p = json::parse(plain.out);
  int dup = p["cross_duplicates"]["holdout_rows"];
  EXPECT_GT(dup, 0);
  EXPECT_EQ(p["cross_duplicates"]["dev_rows"], dup);  // each holdout row has exactly one copy
  EXPECT_EQ(p["holdout_rows"], 40);
  EXPECT_FALSE(p["cross_duplicates"]["first_lines"].empty());

  ASSERT_EQ(Init("d.csv", "l2", "--id id").exit_code, 0);
  RunResult dropped = Seal("l2", "k", "--seed 4 --drop-cross-duplicates --dev-out " + Q("dev2.csv"));
  ASSERT_EQ(dropped.exit_code, 0) << dropped.err;
  json d = json::parse(dropped.out);
  EXPECT_EQ(d["cross_duplicates"]["moved_to_dev"], true);
  EXPECT_EQ(d["holdout_rows"], 40 - dup);
  EXPECT_EQ(d["dev_rows"], 160 + dup);
}

TEST_F(WorkflowTest, WrongKeyIsExitTwoAndNotAnIntegrityFailure) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(100));
  Keygen("k");
  Keygen("other");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  ASSERT_EQ(Seal("l", "k", "--dev-out " + Q("dev.csv")).exit_code, 0);
  RunResult r = RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("other"));
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("does not open this ledger's holdout"), std::string::npos) << r.err;
}

TEST_F(WorkflowTest, PassphraseFromTheEnvironment) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(100));
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  ::setenv("UNSEEN_PASSPHRASE", "correct horse", 1);
  RunResult seal = RunUnseen("seal --ledger " + Q("l") + " --dev-out " + Q("dev.csv"));
  RunResult ok = RunUnseen("verify --passphrase --ledger " + Q("l"));
  ::setenv("UNSEEN_PASSPHRASE", "wrong horse", 1);
  RunResult bad = RunUnseen("verify --passphrase --ledger " + Q("l"));
  ::unsetenv("UNSEEN_PASSPHRASE");
  ASSERT_EQ(seal.exit_code, 0) << seal.err;
  EXPECT_EQ(ok.exit_code, 0) << ok.err;
  EXPECT_NE(ok.out.find("its 20 rows match their digests"), std::string::npos) << ok.out;
  EXPECT_EQ(bad.exit_code, 2);
  json h = json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
  EXPECT_EQ(h[2]["body"]["key"]["source"], "passphrase");
  EXPECT_EQ(h[2]["body"]["key"]["scrypt"]["N"], 32768);
  EXPECT_EQ(h[2]["body"]["key"]["salt"].get<std::string>().size(), 32u);
}

TEST_F(WorkflowTest, SealRefusesAChangedDataFile) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(100));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(100, 10, 99));
  RunResult r = Seal("l", "k", "--dev-out " + Q("dev.csv"));
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("expected the same file"), std::string::npos) << r.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
  EXPECT_FALSE(Exists("dev.csv"));
}

// Seal cuts the dev rows at their line ends without parsing them, trusting the digest check: a
// file changed into one that is cut differently (an unclosed quote swallows every later row)
// must still be refused as a changed file, not read.
TEST_F(WorkflowTest, SealRefusesAChangedFileThatIsCutDifferently) {
  const std::string original = testing::SampleCsv(100);
  WriteFile(dir_.File("d.csv"), original);
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  std::string changed = original;
  changed.insert(changed.find('\n', changed.find('\n') + 1) + 1, "\"");
  WriteFile(dir_.File("d.csv"), changed);
  RunResult r = Seal("l", "k", "--dev-out " + Q("dev.csv"));
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("expected the same file"), std::string::npos) << r.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
  EXPECT_FALSE(Exists("dev.csv"));
}

// --- malformed input: exit 2, FILE:LINE:COL, no ledger ----------------------

struct BadCsv {
  const char* name;
  std::string content;
  std::string extra;     // init options
  std::string where;     // expected "LINE:COL" after the file name
  std::string message;   // a fragment of what was expected
};

void PrintTo(const BadCsv& c, std::ostream* os) { *os << c.name; }

class BadCsvTest : public WorkflowTest, public ::testing::WithParamInterface<BadCsv> {};

TEST_P(BadCsvTest, ExitTwoNamesTheSpotAndCreatesNoLedger) {
  const BadCsv& c = GetParam();
  WriteFile(dir_.File("bad.csv"), c.content);
  RunResult r = Init("bad.csv", "l", c.extra);
  EXPECT_EQ(r.exit_code, 2) << r.err;
  std::string prefix = "unseen: error: " + dir_.File("bad.csv") + ":" + c.where + ": ";
  EXPECT_EQ(r.err.substr(0, prefix.size()), prefix) << r.err;
  EXPECT_NE(r.err.find(c.message), std::string::npos) << r.err;
  EXPECT_FALSE(Exists("l"));
}

INSTANTIATE_TEST_SUITE_P(
    Kinds, BadCsvTest,
    ::testing::Values(
        BadCsv{"Empty", "", "", "1:1", "empty"},
        BadCsv{"UnterminatedQuote", "a,label\n1,x\n\"2,y\n", "", "3:1", "unterminated"},
        BadCsv{"Ragged", "a,label\n1,x\n2,y,z\n", "", "3:5", "expected 2 fields, found 3"},
        BadCsv{"DuplicateHeader", "a,label,a\n1,x,2\n", "", "1:9", "duplicate"},
        BadCsv{"EmptyHeaderName", "a,,label\n1,2,x\n", "", "1:3", "empty"},
        BadCsv{"InvalidUtf8", "a,label\n1,x\n2,\xff\n", "", "3:3", "UTF-8"},
        BadCsv{"NonNumericRegressionTarget", "a,label\n1,2.5\n2,3.5\n3,high\n",
               "--task regression", "4:3", "regression task expects numbers"},
        BadCsv{"MissingTarget", "a,label\n1,x\n2,\n3,y\n", "", "3:3", "missing target"},
        BadCsv{"DuplicateId", "id,label\nr1,x\nr2,y\nr1,x\n", "--id id", "4:1", "duplicate id 'r1'"}),
    [](const ::testing::TestParamInfo<BadCsv>& p) { return std::string(p.param.name); });

TEST_F(WorkflowTest, DelimiterOptionReadsOtherSeparators) {
  WriteFile(dir_.File("semi.csv"), "a;b;label\n1;2;x\n3;4;y\n5;6;x\n");
  RunResult semi = Init("semi.csv", "l1", "--delimiter ';'");
  ASSERT_EQ(semi.exit_code, 0) << semi.err;
  EXPECT_EQ(json::parse(semi.out)["delimiter"], ";");
  EXPECT_EQ(json::parse(semi.out)["columns"][0]["type"], "numeric");
  WriteFile(dir_.File("tab.csv"), "a\tb\tlabel\n1\t2\tx\n3\t4\ty\n");
  RunResult tab = Init("tab.csv", "l2", "--delimiter tab");
  ASSERT_EQ(tab.exit_code, 0) << tab.err;
  EXPECT_EQ(json::parse(tab.out)["columns"].size(), 3u);
  RunResult bad = Init("semi.csv", "l3", "--delimiter ';;'");
  EXPECT_EQ(bad.exit_code, 2);
  EXPECT_NE(bad.err.find("--delimiter: expected one ASCII character"), std::string::npos) << bad.err;
  EXPECT_FALSE(Exists("l3"));
}

TEST_F(WorkflowTest, SealReadsAMovedDataFileWhenItsDigestMatches) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(60));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  WriteFile(dir_.File("moved.csv"), ReadFile(dir_.File("d.csv")));
  WriteFile(dir_.File("d.csv"), "replaced\n");
  RunResult r = Seal("l", "k", "--data " + Q("moved.csv") + " --dev-out " + Q("dev.csv"));
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["holdout_rows"], 12);
}

TEST_F(WorkflowTest, UnknownColumnForARoleIsExitTwo) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(20));
  RunResult r = Init("d.csv", "l", "--group nowhere");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--group: no column named 'nowhere'"), std::string::npos) << r.err;
  EXPECT_FALSE(Exists("l"));
}

TEST_F(WorkflowTest, BadSealOptionsAreExitTwoAndLeaveTheLedgerUnchanged) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(50));
  Keygen("k");
  ASSERT_EQ(Init("d.csv", "l").exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  for (const std::string& bad : {std::string("--fraction 1.5"), std::string("--strategy sideways"),
                                 std::string("--strategy group"), std::string("--budget 0")}) {
    RunResult r = Seal("l", "k", bad + " --dev-out " + Q("dev.csv"));
    EXPECT_EQ(r.exit_code, 2) << bad << ": " << r.err;
    EXPECT_EQ(ReadFile(dir_.File("l")), before) << bad;
  }
}

}  // namespace
}  // namespace unseen
