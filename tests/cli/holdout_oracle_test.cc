// The ledger is no oracle for the holdout. A modeller holds the ledger file and the dev rows
// and no key; each test here is an attack such a modeller could run, and checks that it learns
// nothing about holdout rows or labels:
//   - enumerating the candidate rows of a low-entropy source, and every feature vector of
//     twenty binary features, against every byte of the ledger finds dev rows only;
//   - the figures the ledger publishes are the dev rows'; the source-wide ones are sealed;
//   - fit refuses a holdout row exactly as it refuses a row never seen; predict applies a model
//     to either alike;
//   - a ledger of the old format, whose digests were plain, is refused with a clear error.
#include <SQLiteCpp/SQLiteCpp.h>
#include <gtest/gtest.h>
#include <sys/stat.h>

#include <cmath>
#include <cstdio>
#include <map>
#include <nlohmann/json.hpp>
#include <set>
#include <sstream>
#include <string>
#include <unordered_set>
#include <vector>

#include "harness/data/row_digest.h"
#include "harness/ledger/keys.h"
#include "harness/ledger/ledger_state.h"
#include "harness/ledger/sealed_figures.h"
#include "storage/ledger.h"
#include "storage/seal_crypto.h"
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

using Row = std::vector<std::string>;

// Rows of a CSV without quoted fields; the header is dropped.
std::vector<Row> Rows(const std::string& csv) {
  std::vector<Row> rows;
  std::istringstream in(csv);
  std::string line;
  std::getline(in, line);
  while (std::getline(in, line)) {
    Row r;
    std::istringstream cells(line);
    std::string c;
    while (std::getline(cells, c, ',')) r.push_back(c);
    if (!line.empty() && line.back() == ',') r.push_back("");
    rows.push_back(r);
  }
  return rows;
}

std::string Key16(const RowDigest& d) {
  return std::string(reinterpret_cast<const char*>(d.data()), 16);
}

// Every 16 bytes anything in the ledger file could hold a digest as: each window of the raw file,
// of every blob and of every entry body, and each 16-byte window of every run of hex digits in
// an entry body, decoded.
std::unordered_set<std::string> LedgerWindows(const std::string& path) {
  std::unordered_set<std::string> w;
  auto add_windows = [&w](const std::string& bytes) {
    for (size_t i = 0; i + 16 <= bytes.size(); ++i) w.insert(bytes.substr(i, 16));
  };
  add_windows(ReadFile(path));
  SQLite::Database db(path, SQLite::OPEN_READONLY);
  SQLite::Statement blobs(db, "SELECT data FROM blobs");
  while (blobs.executeStep()) {
    const SQLite::Column c = blobs.getColumn(0);
    add_windows(
        std::string(static_cast<const char*>(c.getBlob()), static_cast<size_t>(c.getBytes())));
  }
  SQLite::Statement bodies(db, "SELECT body FROM entries");
  while (bodies.executeStep()) {
    const std::string body = bodies.getColumn(0).getString();
    add_windows(body);
    for (size_t i = 0; i < body.size();) {
      size_t j = i;
      while (j < body.size() && std::isxdigit(static_cast<unsigned char>(body[j]))) ++j;
      for (size_t parity = 0; j - i >= 32 && parity < 2; ++parity) {
        std::string bytes;
        for (size_t k = i + parity; k + 1 < j; k += 2) {
          bytes.push_back(static_cast<char>(std::stoi(body.substr(k, 2), nullptr, 16)));
        }
        add_windows(bytes);
      }
      i = j + 1;
    }
  }
  return w;
}

class HoldoutOracleTest : public ::testing::Test {
 protected:
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  // init and seal `csv` (random split, the given fraction and seed); the dev rows as written.
  void InitAndSeal(const std::string& csv, const std::string& init_extra, double fraction,
                   int seed) {
    WriteFile(dir_.File("d.csv"), csv);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    RunResult init = RunUnseen("init --json --ledger " + Q("l") + " --data " + Q("d.csv") +
                               " --target label " + init_extra);
    ASSERT_EQ(init.exit_code, 0) << init.err;
    init_json_ = json::parse(init.out);
    RunResult seal = RunUnseen("seal --json --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --fraction " + std::to_string(fraction) + " --seed " +
                               std::to_string(seed) + " --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
    seal_json_ = json::parse(seal.out);
  }
  json Status() { return json::parse(RunUnseen("status --json --ledger " + Q("l")).out); }
  json History() { return json::parse(RunUnseen("history --json --ledger " + Q("l")).out); }

  TempDir dir_;
  json init_json_, seal_json_;
};

// The attack on a source of three binary features and a binary label: 16 possible rows. Rows
// whose label is a XOR b are common; each of the 8 others occurs once, so some of them are in
// the holdout only. Every candidate row's digest (row, content, feature: no id, so row and
// content agree) is looked for in every byte of the ledger.
TEST_F(HoldoutOracleTest, EnumeratingEveryRowOfALowEntropySourceFindsDevRowsOnly) {
  std::string csv = "a,b,c,label\n";
  for (int i = 0; i < 240; ++i) {
    const int a = i % 2, b = (i / 2) % 2, c = (i / 4) % 2;
    csv += std::to_string(a) + "," + std::to_string(b) + "," + std::to_string(c) + "," +
           std::to_string(a ^ b) + "\n";
  }
  for (int v = 0; v < 8; ++v) {  // the rare rows, label flipped
    const int a = v % 2, b = (v / 2) % 2, c = (v / 4) % 2;
    csv += std::to_string(a) + "," + std::to_string(b) + "," + std::to_string(c) + "," +
           std::to_string(1 - (a ^ b)) + "\n";
  }
  InitAndSeal(csv, "", 0.5, 3);
  std::set<Row> dev;
  for (const Row& r : Rows(ReadFile(dir_.File("dev.csv")))) dev.insert(r);
  std::set<Row> holdout_only;
  for (const Row& r : Rows(csv)) {
    if (!dev.count(r)) holdout_only.insert(r);
  }
  ASSERT_FALSE(holdout_only.empty()) << "choose a seed that leaves a rare row in the holdout only";

  const std::unordered_set<std::string> windows = LedgerWindows(dir_.File("l"));
  RowDigester all, features({3});
  size_t dev_found = 0;
  for (int v = 0; v < 16; ++v) {
    const Row r = {std::to_string(v % 2), std::to_string((v / 2) % 2), std::to_string((v / 4) % 2),
                   std::to_string(v / 8)};
    std::vector<std::string_view> f(r.begin(), r.end());
    const bool found = windows.count(Key16(all.Digest(f))) > 0;
    if (holdout_only.count(r)) {
      EXPECT_FALSE(found) << "holdout-only row " << r[0] << r[1] << r[2] << " label " << r[3]
                          << " is recognisable in the ledger";
    } else {
      EXPECT_TRUE(dev.count(r) == 0 || found) << "a dev row's digest is stored plain";
      dev_found += found;
    }
    if (v < 8) {  // the feature vector: no feature digest is stored without the key
      EXPECT_EQ(windows.count(Key16(features.Digest({f.begin(), f.begin() + 3}))), 0u);
    }
  }
  EXPECT_EQ(dev_found, dev.size());  // the search itself works: it finds every dev row
}

// Twenty binary features: 2^20 feature vectors, enumerated in about a second. No feature digest
// of any of them, nor the content digest of any of them with either label other than the dev
// rows', is anywhere in the ledger.
TEST_F(HoldoutOracleTest, BruteForcingTwentyBinaryFeaturesAgainstTheLedgerFindsNothing) {
  std::string csv;
  for (int j = 0; j < 20; ++j) csv += "f" + std::to_string(j) + ",";
  csv += "label\n";
  uint64_t state = 12345;
  for (int i = 0; i < 300; ++i) {
    state = state * 6364136223846793005ull + 1442695040888963407ull;
    const uint32_t bits = static_cast<uint32_t>(state >> 40) & 0xFFFFF;
    for (int j = 0; j < 20; ++j) csv += std::to_string((bits >> j) & 1) + ",";
    csv += std::to_string((state >> 20) & 1) + "\n";
  }
  InitAndSeal(csv, "", 0.3, 1);
  std::set<std::string> dev_contents;
  RowDigester all, features({20});
  for (const Row& r : Rows(ReadFile(dir_.File("dev.csv")))) {
    std::vector<std::string_view> f(r.begin(), r.end());
    dev_contents.insert(Key16(all.Digest(f)));
  }
  const std::unordered_set<std::string> windows = LedgerWindows(dir_.File("l"));
  std::vector<std::string> cells(21);
  std::vector<std::string_view> f(21);
  uint64_t feature_hits = 0, content_hits = 0, dev_hits = 0;
  for (uint32_t v = 0; v < (1u << 20); ++v) {
    for (int j = 0; j < 20; ++j) cells[j] = (v >> j) & 1 ? "1" : "0";
    for (const char* label : {"0", "1"}) {
      cells[20] = label;
      for (int j = 0; j < 21; ++j) f[j] = cells[j];
      const std::string d = Key16(all.Digest(f));
      if (windows.count(d)) (dev_contents.count(d) ? dev_hits : content_hits)++;
    }
    if (windows.count(Key16(features.Digest(f)))) ++feature_hits;
  }
  EXPECT_EQ(feature_hits, 0u);
  EXPECT_EQ(content_hits, 0u);               // no row that is not a dev row
  EXPECT_EQ(dev_hits, dev_contents.size());  // and the search finds what is there
}

// A source with an id, missing cells and three classes: what status and the seal publish is the
// dev rows' figures, computed here from the dev file; the source entry and init publish none;
// the source-wide figures open with the key and are nowhere in the ledger in the clear.
TEST_F(HoldoutOracleTest, PublishedFiguresAreTheDevRowsAndSourceWideOnesAreSealed) {
  std::string csv = "id,x,w,label\n";
  for (int i = 0; i < 200; ++i) {
    csv += "r" + std::to_string(i) + "," + (i % 7 == 0 ? "NA" : std::to_string(i % 13)) + "," +
           (i % 11 == 0 ? "" : "w" + std::to_string(i % 3)) + "," +
           std::string(i % 5 == 0 ? "c"
                       : i % 2    ? "a"
                                  : "b") +
           "\n";
  }
  InitAndSeal(csv, "--id id", 0.25, 5);
  // Nothing over rows before the seal.
  EXPECT_FALSE(init_json_.contains("target")) << init_json_.dump();
  for (const json& c : init_json_["columns"]) EXPECT_FALSE(c.contains("missing")) << c.dump();

  auto figures = [](const std::vector<Row>& rows) {
    json j = {{"rows", rows.size()},
              {"missing", {0, 0, 0, 0}},
              {"target", {{"classes", json::object()}}}};
    for (const Row& r : rows) {
      for (size_t c = 0; c < 4; ++c) {
        const std::string cell = c < r.size() ? r[c] : "";
        if (cell.empty() || cell == "NA" || cell == "NaN")
          j["missing"][c] = j["missing"][c].get<int>() + 1;
      }
      json& n = j["target"]["classes"][r[3]];
      n = n.is_null() ? 1 : n.get<int>() + 1;
    }
    return j;
  };
  const json dev = figures(Rows(ReadFile(dir_.File("dev.csv"))));
  const json whole = figures(Rows(csv));
  EXPECT_EQ(Status()["dev_summary"], dev);
  EXPECT_EQ(seal_json_["dev_summary"], dev);
  ASSERT_NE(dev, whole);
  for (const json& e : History()) {
    if (e["kind"] == "source") {
      EXPECT_FALSE(e["body"].contains("target"));
      for (const json& c : e["body"]["columns"]) EXPECT_FALSE(c.contains("missing"));
    }
    EXPECT_EQ(e.dump().find(whole["target"]["classes"].dump()), std::string::npos);
  }
  // The key holder reads the source-wide figures (eval's source-wide target range comes from
  // here).
  auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadOnly);
  ASSERT_OK(ledger);
  auto st = ReadLedgerState(**ledger);
  ASSERT_OK(st);
  auto key = KeyForSeal(KeySpec{dir_.File("k"), std::nullopt}, *st->seal, st->ledger_id);
  ASSERT_OK(key);
  auto sealed = ReadSourceSummary(**ledger, *st, *key);
  ASSERT_OK(sealed);
  EXPECT_EQ(json::parse(RowsSummaryToJson(*sealed)), whole);
  // The cross-duplicate counts seal showed the key holder are sealed too, not in the entry.
  auto figures_sealed = ReadSealedFigures(**ledger, *st, *key);
  ASSERT_OK(figures_sealed);
  EXPECT_EQ(figures_sealed->cross_duplicate_holdout_rows,
            seal_json_["cross_duplicates"]["holdout_rows"].get<uint64_t>());
  EXPECT_EQ(figures_sealed->cross_duplicate_dev_rows,
            seal_json_["cross_duplicates"]["dev_rows"].get<uint64_t>());
  for (const json& e : History()) {
    if (e["kind"] == "seal") {
      EXPECT_EQ(e["body"]["cross_duplicates"], json({{"moved_to_dev", false}}));
    }
  }
  Key wrong = *key;
  wrong[0] ^= 1;
  EXPECT_FALSE(ReadSourceSummary(**ledger, *st, wrong).ok());
}

// Regression: the dev rows' range and mean are published; the source-wide mean, as JSON would
// print it, is nowhere in the ledger file.
TEST_F(HoldoutOracleTest, RegressionPublishesTheDevRangeAndMeanOnly) {
  std::string csv = "x,label\n";
  for (int i = 0; i < 120; ++i) {
    csv += std::to_string(i % 9) + "," + std::to_string(0.25 * i + (i % 4 ? 0.5 : 0.125)) + "\n";
  }
  InitAndSeal(csv, "--task regression", 0.3, 2);
  auto summary = [](const std::vector<Row>& rows) {
    double lo = INFINITY, hi = -INFINITY, sum = 0;
    for (const Row& r : rows) {
      const double v = std::stod(r[1]);
      lo = std::min(lo, v);
      hi = std::max(hi, v);
      sum += v;
    }
    return json{{"min", lo}, {"max", hi}, {"mean", sum / static_cast<double>(rows.size())}};
  };
  const json dev = summary(Rows(ReadFile(dir_.File("dev.csv"))));
  const json whole = summary(Rows(csv));
  const json published = Status()["dev_summary"]["target"];
  EXPECT_EQ(published["min"], dev["min"]);
  EXPECT_EQ(published["max"], dev["max"]);
  EXPECT_NEAR(published["mean"].get<double>(), dev["mean"].get<double>(), 1e-12);
  ASSERT_GT(std::abs(whole["mean"].get<double>() - dev["mean"].get<double>()), 1e-6);
  const std::string ledger = ReadFile(dir_.File("l"));
  EXPECT_EQ(ledger.find(whole["mean"].dump()), std::string::npos) << whole["mean"].dump();
}

// fit on the dev rows plus one holdout row, and on the dev rows plus one row never seen: the
// same refusal, word for word but for the file name, and the same refusal entry. predict
// applies a model to either file alike.
TEST_F(HoldoutOracleTest, FitAndPredictCannotTellAHoldoutRowFromAnUnseenOne) {
  std::string csv = "id,a,b,label\n";
  for (int i = 0; i < 300; ++i) {
    csv += "r" + std::to_string(i) + "," + std::to_string(i % 17) + "," + std::to_string(i % 5) +
           "," + (i % 3 ? "yes" : "no") + "\n";
  }
  InitAndSeal(csv, "--id id", 0.2, 4);
  WriteFile(dir_.File("spec.toml"), "[learner]\nkind = \"logistic\"\nl2 = 1.0\n");
  const std::string dev_text = ReadFile(dir_.File("dev.csv"));
  std::set<std::string> dev_ids;
  for (const Row& r : Rows(dev_text)) dev_ids.insert(r[0]);
  Row held;
  for (const Row& r : Rows(csv)) {
    if (!dev_ids.count(r[0])) {
      held = r;
      break;
    }
  }
  ASSERT_FALSE(held.empty());
  const std::string holdout_line = held[0] + "," + held[1] + "," + held[2] + "," + held[3] + "\n";
  // Never in the source: a value of a no row has, same shape, same label.
  const std::string unseen_line = held[0] + ",99," + held[2] + "," + held[3] + "\n";
  WriteFile(dir_.File("with_holdout.csv"), dev_text + holdout_line);
  WriteFile(dir_.File("with_unseen.csv"), dev_text + unseen_line);

  auto fit = [&](const std::string& file) {
    return RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("spec.toml") + " --name m --data " +
                     Q(file));
  };
  RunResult a = fit("with_holdout.csv");
  json refusal_a = History().back();
  RunResult b = fit("with_unseen.csv");
  json refusal_b = History().back();
  EXPECT_EQ(a.exit_code, 1) << a.err;
  EXPECT_EQ(b.exit_code, a.exit_code);
  auto without_path = [&](std::string s, const std::string& file) {
    for (size_t at; (at = s.find(dir_.File(file))) != std::string::npos;) {
      s.replace(at, dir_.File(file).size(), "FILE");
    }
    return s;
  };
  EXPECT_EQ(without_path(a.err, "with_holdout.csv"), without_path(b.err, "with_unseen.csv"));
  EXPECT_NE(a.err.find("not development rows"), std::string::npos) << a.err;
  EXPECT_EQ(without_path(a.err, "with_holdout.csv").find("holdout"), std::string::npos) << a.err;
  for (json* e : {&refusal_a, &refusal_b}) {  // what differs between any two entries
    e->at("body").erase("seq");
    e->at("body").erase("time");
  }
  EXPECT_EQ(refusal_a["kind"], "refusal");
  EXPECT_EQ(without_path(refusal_a["body"].dump(), "with_holdout.csv"),
            without_path(refusal_b["body"].dump(), "with_unseen.csv"));

  // A model from the dev rows, applied to each file: both are predicted, neither is refused.
  ASSERT_EQ(fit("dev.csv").exit_code, 0);
  for (const std::string file : {"with_holdout.csv", "with_unseen.csv"}) {
    RunResult p = RunUnseen("predict --json --ledger " + Q("l") + " --model m --data " + Q(file) +
                            " --out " + Q(file + ".pred"));
    EXPECT_EQ(p.exit_code, 0) << p.err;
    EXPECT_EQ(History().back()["kind"], "apply");
  }
}

// A class carried by one row: a seal that would put it in the holdout only is refused (exit 2,
// nothing written), since the published class list would name a class no dev row has; a seal
// that keeps it in dev lists it.
TEST_F(HoldoutOracleTest, ASealThatLeavesAClassInTheHoldoutOnlyIsRefused) {
  std::string csv = "x,label\n";
  for (int i = 0; i < 40; ++i) csv += std::to_string(i) + "," + (i % 2 ? "pear" : "apple") + "\n";
  csv += "40,quince\n";
  WriteFile(dir_.File("d.csv"), csv);
  ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
  ASSERT_EQ(
      RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") + " --target label").exit_code,
      0);
  const std::string fresh = ReadFile(dir_.File("l"));
  bool refused = false, kept = false;
  for (int seed = 1; seed <= 40 && !(refused && kept); ++seed) {
    WriteFile(dir_.File("l"), fresh);
    std::remove(dir_.File("dev.csv").c_str());
    RunResult r =
        RunUnseen("seal --json --ledger " + Q("l") + " --key-file " + Q("k") +
                  " --fraction 0.5 --seed " + std::to_string(seed) + " --dev-out " + Q("dev.csv"));
    if (r.exit_code == 0) {
      kept = true;
      EXPECT_EQ(json::parse(r.out)["dev_summary"]["target"]["classes"]["quince"], 1);
      continue;
    }
    refused = true;
    EXPECT_EQ(r.exit_code, 2) << r.err;
    EXPECT_NE(r.err.find("class 'quince' (1 rows) would be in the holdout only"), std::string::npos)
        << r.err;
    EXPECT_EQ(ReadFile(dir_.File("l")), fresh);
    struct stat st;
    EXPECT_NE(::stat(dir_.File("dev.csv").c_str(), &st), 0);
  }
  EXPECT_TRUE(refused && kept) << "some seed should put the quince row on each side";
}

// A ledger that says it is of format 1 (plain per-row digests) is refused by every command with
// the format named and what to do; the file is left as it was.
TEST_F(HoldoutOracleTest, ALedgerOfTheOldFormatIsRefusedWithWhatToDo) {
  WriteFile(dir_.File("d.csv"), "a,label\n1,0\n2,1\n3,0\n4,1\n");
  ASSERT_EQ(
      RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") + " --target label").exit_code,
      0);
  {
    SQLite::Database db(dir_.File("l"), SQLite::OPEN_READWRITE);
    db.exec("PRAGMA user_version = 1");
  }
  const std::string before = ReadFile(dir_.File("l"));
  for (const std::string command : {"status", "verify", "history"}) {
    RunResult r = RunUnseen(command + " --ledger " + Q("l"));
    EXPECT_EQ(r.exit_code, 2) << command << r.err;
    EXPECT_NE(r.err.find("ledger format 1 was written by an older unseen"), std::string::npos)
        << r.err;
    EXPECT_NE(r.err.find("reads format 2"), std::string::npos) << r.err;
    EXPECT_NE(r.err.find("`unseen init`"), std::string::npos) << r.err;
  }
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
}

}  // namespace
}  // namespace unseen
