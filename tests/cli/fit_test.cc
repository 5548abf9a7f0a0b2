// fit, models and predict through the binary, and the classic leaks: each
// is refused (exit 1, a refusal entry) or impossible by construction.
#include <gtest/gtest.h>

#include <map>
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

constexpr const char* kSpec = R"(
[[transform]]
kind = "onehot"
[[transform]]
kind = "standardize"
[learner]
kind = "logistic"
l2 = [0.1, 10.0]
[select]
folds = 4
metric = "error_rate"
seed = 2
)";

class FitTest : public ::testing::Test {
 protected:
  void SetUp() override {
    WriteFile(dir_.File("d.csv"), testing::SampleCsv(400, 20, 6));
    WriteFile(dir_.File("spec.toml"), kSpec);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                        " --target label --id id --group site --time day")
                  .exit_code,
              0);
    RunResult seal = RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --strategy group --seed 1 --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
  }
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  RunResult Fit(const std::string& name, const std::string& extra = "") {
    return RunUnseen("fit --json --ledger " + Q("l") + " --spec " + Q("spec.toml") + " --name " +
                     name + " " + extra);
  }
  json History() { return json::parse(RunUnseen("history --json --ledger " + Q("l")).out); }
  // The source rows that are not in the dev file: the holdout, as a modeller
  // holding the original file could rebuild it.
  std::string HoldoutRows(bool new_ids, bool drop_target) {
    std::set<std::string> dev;
    std::istringstream devin(ReadFile(dir_.File("dev.csv")));
    std::string line;
    while (std::getline(devin, line)) dev.insert(line.substr(0, line.find(',')));
    std::istringstream in(ReadFile(dir_.File("d.csv")));
    std::getline(in, line);
    std::string out = drop_target ? "id,site,day,a,b\n" : line + "\n";
    int n = 0;
    while (std::getline(in, line)) {
      std::string id = line.substr(0, line.find(','));
      if (dev.count(id)) continue;
      std::string rest = line.substr(line.find(','));
      if (drop_target) rest = rest.substr(0, rest.rfind(','));
      out += (new_ids ? "copy" + std::to_string(n++) : id) + rest + "\n";
    }
    return out;
  }
  TempDir dir_;
};

TEST_F(FitTest, FitSelectsByGroupAwareCrossValidationAndFreezes) {
  RunResult r = Fit("m1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(r.out);
  EXPECT_EQ(j["selection"], "k-fold");
  EXPECT_EQ(j["folds"], 4);
  EXPECT_EQ(j["candidates"].size(), 2u);
  EXPECT_EQ(j["candidates"][0]["fold_scores"].size(), 4u);
  EXPECT_NE(j["caution"].get<std::string>().find("optimistic"), std::string::npos);
  EXPECT_EQ(j["model_digest"].get<std::string>().size(), 64u);

  json h = History();
  ASSERT_EQ(h.size(), 5u);
  EXPECT_EQ(h[3]["kind"], "select");
  EXPECT_EQ(h[4]["kind"], "fit");
  EXPECT_EQ(h[4]["body"]["model"], "m1");
  EXPECT_EQ(h[4]["body"]["candidates_compared"], 2);
  EXPECT_EQ(h[4]["body"]["parents"], json({3, 4}));
  EXPECT_EQ(h[4]["body"]["rows"], j["rows"]);
  // Settings were tuned on folds the transforms never saw: the fold row sets
  // are recorded, four of them, and each is a stored blob.
  EXPECT_EQ(h[3]["body"]["fold_row_sets"].size(), 4u);

  json models = json::parse(RunUnseen("models --json --ledger " + Q("l")).out);
  ASSERT_EQ(models.size(), 1u);
  EXPECT_EQ(models[0]["name"], "m1");
  EXPECT_EQ(models[0]["candidates_compared"], 2);
  EXPECT_EQ(models[0]["tainted"], false);
  json shown = json::parse(RunUnseen("models --json --ledger " + Q("l") + " --show m1").out);
  EXPECT_EQ(shown["pipeline"]["learner"]["kind"], "logistic");
  EXPECT_EQ(shown["pipeline"]["transforms"][1]["kind"], "standardize");
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

TEST_F(FitTest, SameSpecDataAndSeedGiveTheSameModelDigest) {
  RunResult a = Fit("a"), b = Fit("b");
  ASSERT_EQ(a.exit_code, 0) << a.err;
  ASSERT_EQ(b.exit_code, 0) << b.err;
  // The name is part of the model, so compare the pipelines.
  json ma = json::parse(RunUnseen("models --json --ledger " + Q("l") + " --show a").out);
  json mb = json::parse(RunUnseen("models --json --ledger " + Q("l") + " --show b").out);
  EXPECT_EQ(ma["pipeline"].dump(), mb["pipeline"].dump());
  EXPECT_EQ(json::parse(a.out)["candidates"], json::parse(b.out)["candidates"]);
}

TEST_F(FitTest, DuplicateModelNameIsExitTwo) {
  ASSERT_EQ(Fit("m").exit_code, 0);
  std::string before = ReadFile(dir_.File("l"));
  RunResult again = Fit("m");
  EXPECT_EQ(again.exit_code, 2);
  EXPECT_NE(again.err.find("already exists"), std::string::npos) << again.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
}

TEST_F(FitTest, ScalerFittedOnDevPlusHoldoutRowsIsRefused) {
  // The whole source file holds the holdout rows too.
  // Without the key a holdout row is refused as what fit can tell: not a development row
  // (ledger format 2; whether it is a holdout row is no longer recorded or said).
  RunResult r = Fit("leaky", "--data " + Q("d.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("rows are not development rows"), std::string::npos) << r.err;
  EXPECT_EQ(r.err.find("holdout"), std::string::npos) << r.err;
  json h = History();
  EXPECT_EQ(h.back()["kind"], "refusal");
  EXPECT_EQ(h.back()["body"]["command"], "fit");
  EXPECT_GT(h.back()["body"]["details"]["not_dev_rows"].get<int>(), 0);
  EXPECT_FALSE(h.back()["body"]["details"].contains("holdout_rows"));
  EXPECT_TRUE(json::parse(RunUnseen("models --json --ledger " + Q("l")).out).empty());
}

TEST_F(FitTest, FeaturesChosenOnAllRowsAreRefused) {
  WriteFile(dir_.File("spec.toml"),
            "[[transform]]\nkind = \"select_topk\"\nk = 1\ncolumns = [\"a\", \"b\"]\n"
            "[[transform]]\nkind = \"onehot\"\n[learner]\nkind = \"logistic\"\n");
  RunResult r = Fit("chosen-on-all", "--data " + Q("d.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
}

TEST_F(FitTest, HoldoutCopiedInUnderAnotherNameIsRefused) {
  WriteFile(dir_.File("innocent.csv"), HoldoutRows(/*new_ids=*/true, /*drop_target=*/false));
  RunResult r = Fit("copied", "--data " + Q("innocent.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("rows are not development rows of this ledger's source (first lines: "
                       "2, 3, 4, 5, 6)"),
            std::string::npos)
      << r.err;
  // Unlabelled, the copy is new rows to predict: a frozen model's predictions say nothing about
  // holdout labels, and refusing them would say which rows are holdout rows (ledger format 2:
  // predict no longer matches rows against the holdout; eval, with the key, still does).
  ASSERT_EQ(Fit("m").exit_code, 0);
  WriteFile(dir_.File("unlabelled.csv"), HoldoutRows(true, /*drop_target=*/true));
  RunResult p = RunUnseen("predict --ledger " + Q("l") + " --model m --data " +
                          Q("unlabelled.csv") + " --out " + Q("p.csv"));
  EXPECT_EQ(p.exit_code, 0) << p.err;
  EXPECT_EQ(History().back()["kind"], "apply");
}

TEST_F(FitTest, HoldoutRowsAreRefusedEvenWhenTheFileHasABadValue) {
  ASSERT_EQ(Fit("m").exit_code, 0);
  // A bad value alone is a clear error (exit 2) naming the file, line and column.
  WriteFile(dir_.File("bad.csv"), "id,site,day,a,b\nn1,s1,3,not-a-number,2\n");
  RunResult bad = RunUnseen("predict --ledger " + Q("l") + " --model m --data " + Q("bad.csv") +
                            " --out " + Q("p.csv"));
  EXPECT_EQ(bad.exit_code, 2) << bad.err;
  EXPECT_NE(bad.err.find("bad.csv:2:"), std::string::npos) << bad.err;
  EXPECT_NE(bad.err.find("expected a number"), std::string::npos) << bad.err;
  // The same bad row ahead of holdout rows given to fit: the rows that are not development
  // rows (the bad row among them) are what is refused and recorded. (Ledger format 2: predict
  // no longer matches rows against the holdout, so this is fit's case now.)
  std::string rows = HoldoutRows(/*new_ids=*/true, /*drop_target=*/false);
  rows.insert(rows.find('\n') + 1, "n1,s1,3,not-a-number,2,yes\n");
  WriteFile(dir_.File("mixed.csv"), rows);
  RunResult mixed = Fit("mixed", "--data " + Q("mixed.csv"));
  EXPECT_EQ(mixed.exit_code, 1) << mixed.err;
  EXPECT_NE(mixed.err.find("rows are not development rows of this ledger's source (first lines: "
                           "2, 3, 4, 5, 6)"),
            std::string::npos)
      << mixed.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
}

TEST_F(FitTest, BlendFittedOnItsMembersTrainingRowsIsRefused) {
  // Both members read every dev row; the blend's partition is carved afterwards.
  ASSERT_EQ(Fit("m1").exit_code, 0);
  WriteFile(dir_.File("knn.toml"), "[learner]\nkind = \"knn\"\nk = 9\n");
  auto fit_knn = [&](const std::string& name, const std::string& extra) {
    return RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("knn.toml") + " --name " + name +
                     " " + extra);
  };
  ASSERT_EQ(fit_knn("m2", "").exit_code, 0);
  RunResult carve =
      RunUnseen("carve --json --ledger " + Q("l") + " --name blendset --fraction 0.3 --seed 4");
  ASSERT_EQ(carve.exit_code, 0) << carve.err;
  const uint64_t partition_rows = json::parse(carve.out)["rows"].get<uint64_t>();
  auto blend = [&](const std::string& name, const std::string& a, const std::string& b) {
    WriteFile(dir_.File("blend.toml"), "[learner]\nkind = \"blend\"\nmembers = [\"" + a + "\", \"" +
                                           b +
                                           "\"]\npartition = \"blendset\"\n[select]\nfolds = 3\n");
    return RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("blend.toml") + " --name " + name);
  };
  const size_t entries = History().size();
  RunResult r = blend("leaky", "m1", "m2");
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("member 'm1' was fitted on " + std::to_string(partition_rows) +
                       " of its rows (first source rows: "),
            std::string::npos)
      << r.err;
  EXPECT_NE(r.err.find("member 'm2' was fitted on"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("fit --exclude blendset"), std::string::npos) << r.err;
  // One refusal entry, naming each member, its overlap and a few of the rows.
  json h = History();
  ASSERT_EQ(h.size(), entries + 1);
  json refusal = h.back()["body"];
  EXPECT_EQ(h.back()["kind"], "refusal");
  EXPECT_EQ(refusal["command"], "fit");
  EXPECT_EQ(refusal["details"]["partition"], "blendset");
  ASSERT_EQ(refusal["details"]["members"].size(), 2u);
  EXPECT_EQ(refusal["details"]["members"][0]["rows_in_partition"], partition_rows);
  EXPECT_EQ(refusal["details"]["members"][0]["first_rows"].size(), 5u);
  EXPECT_EQ(json::parse(RunUnseen("models --json --ledger " + Q("l")).out).size(), 2u);
  // Members refitted without the partition pass the guard.
  ASSERT_EQ(Fit("m1x", "--exclude blendset").exit_code, 0);
  ASSERT_EQ(fit_knn("m2x", "--exclude blendset").exit_code, 0);
  RunResult ok = blend("clean", "m1x", "m2x");
  EXPECT_EQ(ok.exit_code, 0) << ok.err;
  // One leaky member is enough to refuse.
  RunResult mixed = blend("half", "m1x", "m2");
  EXPECT_EQ(mixed.exit_code, 1) << mixed.err;
  EXPECT_EQ(mixed.err.find("member 'm1x'"), std::string::npos) << mixed.err;
}

// The dev file seal wrote is known by its digest and is not matched row by row; the same rows
// in another order are matched one by one. Both read exactly the seal's dev rows.
TEST_F(FitTest, TheDevFileAndItsRowsReorderedReadTheSealsDevRows) {
  std::string dev = ReadFile(dir_.File("dev.csv"));
  const size_t header_end = dev.find('\n') + 1;
  std::vector<std::string> rows;
  for (size_t at = header_end; at < dev.size();) {
    const size_t end = dev.find('\n', at) + 1;
    rows.push_back(dev.substr(at, end - at));
    at = end;
  }
  std::string reversed = dev.substr(0, header_end);
  for (size_t i = rows.size(); i-- > 0;) reversed += rows[i];
  WriteFile(dir_.File("reversed.csv"), reversed);
  RunResult a = Fit("a"), b = Fit("b", "--data " + Q("reversed.csv"));
  ASSERT_EQ(a.exit_code, 0) << a.err;
  ASSERT_EQ(b.exit_code, 0) << b.err;
  json h = History();
  json seal;
  int fits = 0;
  for (const json& e : h) {
    if (e["kind"] == "seal") seal = e["body"];
    if (e["kind"] != "fit") continue;
    ++fits;
    EXPECT_EQ(e["body"]["rows_read"], seal["dev"]["row_set"]) << e.dump();
    EXPECT_EQ(e["body"]["rows"], seal["dev"]["rows"]) << e.dump();
  }
  EXPECT_EQ(fits, 2);
}

TEST_F(FitTest, AFileOfTheDevFilesSizeWithAHoldoutRowInItIsRefused) {
  // A dev row swapped for a holdout row of the same length: the file has the dev file's
  // size, so its rows are matched only once its digest shows it is another file.
  const std::string dev = ReadFile(dir_.File("dev.csv"));
  std::istringstream held(HoldoutRows(false, false));
  std::string header, line;
  std::getline(held, header);
  std::map<size_t, std::string> holdout_of_length;
  while (std::getline(held, line)) holdout_of_length.emplace(line.size(), line);
  std::istringstream in(dev);
  std::string swapped;
  bool done = false;
  size_t swapped_line = 0;
  for (size_t n = 1; std::getline(in, line); ++n) {
    auto it = holdout_of_length.find(line.size());
    if (!done && n > 1 && it != holdout_of_length.end()) {
      line = it->second;
      done = true;
      swapped_line = n;
    }
    swapped += line + "\n";
  }
  ASSERT_TRUE(done) << "no holdout row has the length of a dev row";
  ASSERT_EQ(swapped.size(), dev.size());
  WriteFile(dir_.File("swapped.csv"), swapped);
  RunResult r = Fit("swapped", "--data " + Q("swapped.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("1 rows are not development rows of this ledger's source (first lines: " +
                       std::to_string(swapped_line) + ")"),
            std::string::npos)
      << r.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
}

TEST_F(FitTest, RowsThatAreNotDevRowsAreRefused) {
  WriteFile(dir_.File("other.csv"), testing::SampleCsv(50, 5, 77));
  RunResult r = Fit("other", "--data " + Q("other.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("are not development rows"), std::string::npos) << r.err;
}

TEST_F(FitTest, PredictWritesIdsPredictionsAndProbabilities) {
  ASSERT_EQ(Fit("m").exit_code, 0);
  RunResult p = RunUnseen("predict --json --ledger " + Q("l") + " --model m --data " +
                          Q("dev.csv") + " --out " + Q("p.csv"));
  ASSERT_EQ(p.exit_code, 0) << p.err;
  std::string out = ReadFile(dir_.File("p.csv"));
  EXPECT_EQ(out.substr(0, out.find('\n')), "id,prediction,p_no,p_yes");
  json j = json::parse(p.out);
  std::istringstream dev(ReadFile(dir_.File("dev.csv")));
  std::string line;
  size_t dev_rows = 0;
  std::getline(dev, line);
  while (std::getline(dev, line)) ++dev_rows;
  EXPECT_EQ(j["rows"], dev_rows);
  EXPECT_EQ(History().back()["kind"], "apply");
  // New rows that are not in the source at all are fine to predict.
  WriteFile(dir_.File("new.csv"), "id,site,day,a,b\nn1,s1,3,12.5,2\nn2,s9,9,99.0,6\n");
  RunResult n = RunUnseen("predict --ledger " + Q("l") + " --model m --data " + Q("new.csv") +
                          " --out " + Q("n.csv"));
  EXPECT_EQ(n.exit_code, 0) << n.err;
  EXPECT_EQ(ReadFile(dir_.File("n.csv")).substr(0, 23), "id,prediction,p_no,p_ye");
}

TEST_F(FitTest, PredictOnRowsWithoutIdsCountsEveryRowAndNumbersThem) {
  ASSERT_EQ(Fit("m").exit_code, 0);
  // No id column: each row is named by its data row number, and the apply
  // entry counts every row (it once counted the ids, none here).
  WriteFile(dir_.File("new.csv"), "site,day,a,b\ns1,3,12.5,2\ns9,9,99.0,6\ns2,4,1.5,3\n");
  RunResult n = RunUnseen("predict --json --ledger " + Q("l") + " --model m --data " +
                          Q("new.csv") + " --out " + Q("n.csv"));
  ASSERT_EQ(n.exit_code, 0) << n.err;
  EXPECT_EQ(json::parse(n.out)["rows"], 3);
  EXPECT_EQ(History().back()["body"]["rows"], 3);
  std::istringstream out(ReadFile(dir_.File("n.csv")));
  std::string line;
  std::vector<std::string> ids;
  std::getline(out, line);
  while (std::getline(out, line)) ids.push_back(line.substr(0, line.find(',')));
  EXPECT_EQ(ids, (std::vector<std::string>{"0", "1", "2"}));
}

TEST_F(FitTest, ExportWritesDevRowsAndGroupAwareFolds) {
  RunResult r = RunUnseen("export --json --ledger " + Q("l") + " --out " + Q("all.csv") +
                          " --folds 3 --out-dir " + ShellQuote(dir_.path()) + " --seed 5");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  // The source has an id column, so the export is exactly the dev file.
  EXPECT_EQ(ReadFile(dir_.File("all.csv")), ReadFile(dir_.File("dev.csv")));
  json j = json::parse(r.out);
  ASSERT_EQ(j["folds"].size(), 3u);
  size_t total = 0;
  std::map<std::string, int> fold_of_site;
  for (int k = 0; k < 3; ++k) {
    std::istringstream in(ReadFile(dir_.File("fold_" + std::to_string(k + 1) + ".csv")));
    std::string line;
    std::getline(in, line);
    while (std::getline(in, line)) {
      ++total;
      std::string site = line.substr(line.find(',') + 1);
      site = site.substr(0, site.find(','));
      auto [it, fresh] = fold_of_site.emplace(site, k);
      EXPECT_EQ(it->second, k) << "site " << site << " is in two folds";
    }
  }
  EXPECT_EQ(total, j["rows"].get<size_t>());
  json h = History();
  EXPECT_EQ(h.back()["kind"], "export");
  EXPECT_EQ(h.back()["body"]["rows"], j["rows"]);
  EXPECT_EQ(h.back()["body"]["folds"].size(), 3u);
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l")).exit_code, 0);
}

TEST_F(FitTest, ScoreRatesExportedRowsAndRefusesOthers) {
  ASSERT_EQ(Fit("m").exit_code, 0);
  ASSERT_EQ(RunUnseen("predict --ledger " + Q("l") + " --model m --data " + Q("dev.csv") +
                      " --out " + Q("p.csv"))
                .exit_code,
            0);
  // Nothing exported yet: refused.
  RunResult early =
      RunUnseen("score --ledger " + Q("l") + " --predictions " + Q("p.csv") + " --on outside");
  EXPECT_EQ(early.exit_code, 1) << early.err;
  EXPECT_NE(early.err.find("was never exported"), std::string::npos) << early.err;
  ASSERT_EQ(RunUnseen("export --ledger " + Q("l") + " --out " + Q("all.csv")).exit_code, 0);
  RunResult ok = RunUnseen("score --json --ledger " + Q("l") + " --predictions " + Q("p.csv") +
                           " --on outside");
  ASSERT_EQ(ok.exit_code, 0) << ok.err;
  json j = json::parse(ok.out);
  EXPECT_EQ(j["metric"], "error_rate");
  // Recompute the error rate by hand from the two files.
  std::map<std::string, std::string> truth;
  std::istringstream dev(ReadFile(dir_.File("dev.csv")));
  std::string line;
  std::getline(dev, line);
  while (std::getline(dev, line))
    truth[line.substr(0, line.find(','))] = line.substr(line.rfind(',') + 1);
  std::istringstream pred(ReadFile(dir_.File("p.csv")));
  std::getline(pred, line);
  double wrong = 0, n = 0;
  while (std::getline(pred, line)) {
    std::string id = line.substr(0, line.find(','));
    std::string rest = line.substr(line.find(',') + 1);
    wrong += truth[id] != rest.substr(0, rest.find(','));
    n += 1;
  }
  EXPECT_NEAR(j["value"].get<double>(), wrong / n, 1e-12);
  EXPECT_EQ(j["rows"], n);
  EXPECT_EQ(History().back()["kind"], "score");
  // Predictions for holdout rows are refused and recorded.
  std::string holdout = HoldoutRows(/*new_ids=*/false, /*drop_target=*/false);
  std::istringstream hin(holdout);
  std::getline(hin, line);
  std::string preds = "id,prediction\n";
  while (std::getline(hin, line)) preds += line.substr(0, line.find(',')) + ",yes\n";
  WriteFile(dir_.File("hp.csv"), preds);
  RunResult bad =
      RunUnseen("score --ledger " + Q("l") + " --predictions " + Q("hp.csv") + " --on outside");
  EXPECT_EQ(bad.exit_code, 1) << bad.err;
  EXPECT_NE(bad.err.find("sealed holdout rows"), std::string::npos) << bad.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
}

TEST_F(FitTest, BadSpecsAreExitTwoWithTheSpecLine) {
  struct Case {
    std::string text, where;
  };
  for (const Case& c : {Case{"[learner]\nkind = \"forest\"\n", ":2:"},
                        Case{"[learner]\nkind = \"ridge\"\nl2 = \"high\"\n", ":3:"},
                        Case{"[[transform]]\nkind = \"standardize\"\ncolumns = [\"nowhere\"]\n"
                             "[learner]\nkind = \"logistic\"\n",
                             ":3:"}}) {
    WriteFile(dir_.File("bad.toml"), c.text);
    RunResult r = RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("bad.toml") + " --name x");
    EXPECT_EQ(r.exit_code, 2) << c.text << r.err;
    EXPECT_NE(r.err.find(dir_.File("bad.toml") + c.where), std::string::npos) << c.text << r.err;
  }
}

}  // namespace
}  // namespace unseen
