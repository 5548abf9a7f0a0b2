// Named partitions and blends through the binary: carve (determinism, class
// shares, bad options leave the ledger byte-identical), fit --exclude, a
// blend's fit, predict and models --show checked against the members'
// own predictions, and the blend's refusals (multiclass, unknown member,
// --exclude with a blend). The leak test, a blend fitted on its members'
// training rows, is with the other classic leaks in fit_test.cc.
#include <fmt/core.h>
#include <gtest/gtest.h>

#include <Eigen/Dense>
#include <map>
#include <nlohmann/json.hpp>
#include <sstream>
#include <string>
#include <vector>

#include "harness/sampling/random.h"
#include "harness/workflow/carve.h"
#include "storage/ledger.h"
#include "storage/row_set.h"
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

constexpr const char* kLogisticSpec =
    "[[transform]]\nkind = \"onehot\"\n[[transform]]\nkind = \"standardize\"\n"
    "[learner]\nkind = \"logistic\"\nl2 = 1.0\n";
constexpr const char* kKnnSpec =
    "[[transform]]\nkind = \"onehot\"\n[[transform]]\nkind = \"minmax\"\n"
    "[learner]\nkind = \"knn\"\nk = 15\n";

// CSV rows as maps from column name to text (no quoted fields).
std::vector<std::map<std::string, std::string>> ReadCsv(const std::string& text) {
  std::vector<std::map<std::string, std::string>> rows;
  std::istringstream in(text);
  std::string line;
  std::getline(in, line);
  std::vector<std::string> header;
  std::stringstream hs(line);
  for (std::string f; std::getline(hs, f, ',');) header.push_back(f);
  while (std::getline(in, line)) {
    std::map<std::string, std::string> row;
    std::stringstream ls(line);
    size_t i = 0;
    for (std::string f; std::getline(ls, f, ',') && i < header.size(); ++i) row[header[i]] = f;
    rows.push_back(row);
  }
  return rows;
}

// A regression source: y = 3a - 2b + noise, 12 sites.
std::string RegressionCsv(uint64_t rows, uint64_t seed) {
  Random rng(seed);
  std::string out = "id,site,a,b,y\n";
  for (uint64_t i = 0; i < rows; ++i) {
    double a = rng.NextDouble() * 10, b = rng.NextDouble() * 5;
    double y = 3 * a - 2 * b + (rng.NextDouble() - 0.5) * 4;
    out += fmt::format("r{},s{},{:.4f},{:.4f},{:.4f}\n", i, rng.Bounded(12), a, b, y);
  }
  return out;
}

class BlendTest : public ::testing::Test {
 protected:
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  void MakeLedger(const std::string& csv, const std::string& init_extra,
                  const std::string& seal_extra) {
    WriteFile(dir_.File("d.csv"), csv);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    RunResult init =
        RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") + " " + init_extra);
    ASSERT_EQ(init.exit_code, 0) << init.err;
    RunResult seal = RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") + " --seed 1 " +
                               seal_extra + " --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
  }
  void MakeClassificationLedger() {
    MakeLedger(testing::SampleCsv(400, 20, 6), "--target label --id id --group site --time day",
               "--strategy group");
  }
  RunResult Carve(const std::string& args) {
    return RunUnseen("carve --json --ledger " + Q("l") + " " + args);
  }
  RunResult Fit(const std::string& name, const std::string& spec_text,
                const std::string& extra = "") {
    WriteFile(dir_.File(name + ".toml"), spec_text);
    return RunUnseen("fit --json --ledger " + Q("l") + " --spec " + Q(name + ".toml") + " --name " +
                     name + " " + extra);
  }
  json History() { return json::parse(RunUnseen("history --json --ledger " + Q("l")).out); }
  RowSet Partition(const std::string& name) {
    auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadOnly);
    EXPECT_TRUE(ledger.ok());
    auto p = FindPartition(**ledger, name);
    EXPECT_TRUE(p.ok()) << p.status().ToString();
    return p.ok() ? p->rows : RowSet();
  }
  RowSet BlobRows(const std::string& hex) {
    auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadOnly);
    auto bytes = (*ledger)->GetBlob(*Digest256FromHex(hex));
    EXPECT_TRUE(bytes.ok());
    return *RowSet::Deserialize(*bytes);
  }
  // Predictions of `model` on the dev file, by id.
  std::map<std::string, std::map<std::string, std::string>> Predict(const std::string& model) {
    RunResult r = RunUnseen("predict --ledger " + Q("l") + " --model " + model + " --data " +
                            Q("dev.csv") + " --out " + Q(model + ".csv"));
    EXPECT_EQ(r.exit_code, 0) << r.err;
    std::map<std::string, std::map<std::string, std::string>> out;
    for (auto& row : ReadCsv(ReadFile(dir_.File(model + ".csv")))) out[row["id"]] = row;
    return out;
  }
  TempDir dir_;
};

uint32_t RowOf(const std::string& id) { return static_cast<uint32_t>(std::stoul(id.substr(1))); }

TEST_F(BlendTest, CarveIsDeterministicGroupAwareAndRecorded) {
  MakeClassificationLedger();
  RunResult a = Carve("--name blendset --fraction 0.3 --seed 4");
  ASSERT_EQ(a.exit_code, 0) << a.err;
  json ja = json::parse(a.out);
  EXPECT_EQ(ja["strategy"], "group");  // the source has a group column
  // The same seed under another name gives the same rows; another seed does not.
  json jb = json::parse(Carve("--name again --fraction 0.3 --seed 4").out);
  json jc = json::parse(Carve("--name other --fraction 0.3 --seed 5").out);
  EXPECT_EQ(ja["row_set"], jb["row_set"]);
  EXPECT_NE(ja["row_set"], jc["row_set"]);
  // Every partition row is a dev row, and whole sites were taken.
  RowSet p = Partition("blendset");
  EXPECT_EQ(p.Cardinality(), ja["rows"].get<uint64_t>());
  std::map<std::string, int> side;  // site -> 1 in the partition, 0 outside, -1 both
  for (auto& row : ReadCsv(ReadFile(dir_.File("dev.csv")))) {
    int in = p.Contains(RowOf(row["id"])) ? 1 : 0;
    auto [it, fresh] = side.emplace(row["site"], in);
    if (!fresh && it->second != in) it->second = -1;
  }
  size_t dev_rows = ReadCsv(ReadFile(dir_.File("dev.csv"))).size();
  EXPECT_EQ(ja["dev_rows"], dev_rows);
  for (auto& [site, s] : side) EXPECT_NE(s, -1) << "site " << site << " is on both sides";
  json h = History();
  EXPECT_EQ(h.back()["kind"], "partition");
  EXPECT_EQ(h.back()["body"]["name"], "other");
  json status = json::parse(RunUnseen("status --json --ledger " + Q("l")).out);
  ASSERT_EQ(status["partitions"].size(), 3u);
  EXPECT_EQ(status["partitions"][0]["name"], "blendset");
  EXPECT_EQ(status["partitions"][0]["rows"], ja["rows"]);
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

TEST_F(BlendTest, StratifiedCarveKeepsClassShares) {
  MakeLedger(testing::SampleCsv(400, 20, 6), "--target label --id id", "--strategy random");
  RunResult r = Carve("--name s --fraction 0.25 --seed 9 --stratified");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_EQ(json::parse(r.out)["strategy"], "stratified");
  RowSet p = Partition("s");
  std::map<std::string, int> dev, in;
  for (auto& row : ReadCsv(ReadFile(dir_.File("dev.csv")))) {
    ++dev[row["label"]];
    if (p.Contains(RowOf(row["id"]))) ++in[row["label"]];
  }
  // Largest-remainder apportionment (docs/splits.md): each class within one row of its quota.
  for (auto& [label, n] : dev) {
    double quota = static_cast<double>(p.Cardinality()) * n / 320.0;
    EXPECT_LE(std::abs(in[label] - quota), 1.0) << label;
  }
}

TEST_F(BlendTest, BadCarveOptionsAreExitTwoAndLeaveTheLedgerAlone) {
  MakeClassificationLedger();
  ASSERT_EQ(Carve("--name taken --fraction 0.3").exit_code, 0);
  const std::string before = ReadFile(dir_.File("l"));
  for (const std::string& args :
       {std::string("--name p --fraction 0"), std::string("--name p --fraction 1.5"),
        std::string("--name p --fraction x"), std::string("--fraction 0.3"),
        std::string("--name dev --fraction 0.3"), std::string("--name taken --fraction 0.3"),
        std::string("--name 'a b' --fraction 0.3"),
        std::string("--name p --fraction 0.3 --seed -1")}) {
    RunResult r = Carve(args);
    EXPECT_EQ(r.exit_code, 2) << args << "\n" << r.err;
    EXPECT_EQ(r.err.rfind("unseen: error: ", 0), 0u) << r.err;
    EXPECT_TRUE(ReadFile(dir_.File("l")) == before) << args;
  }
}

TEST_F(BlendTest, CarveBeforeSealIsRefused) {
  WriteFile(dir_.File("d.csv"), testing::SampleCsv(50, 5, 2));
  ASSERT_EQ(
      RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") + " --target label").exit_code,
      0);
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r = Carve("--name p --fraction 0.3");
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("seal the holdout first"), std::string::npos) << r.err;
  EXPECT_TRUE(ReadFile(dir_.File("l")) == before);
}

TEST_F(BlendTest, StratifiedOnARegressionSourceIsExitTwo) {
  MakeLedger(RegressionCsv(200, 3), "--target y --id id", "--strategy random");
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r = Carve("--name p --fraction 0.3 --stratified");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("--stratified"), std::string::npos) << r.err;
  EXPECT_TRUE(ReadFile(dir_.File("l")) == before);
}

TEST_F(BlendTest, FitExcludeLeavesThePartitionOut) {
  MakeClassificationLedger();
  ASSERT_EQ(Carve("--name blendset --fraction 0.3 --seed 4").exit_code, 0);
  RowSet p = Partition("blendset");
  RunResult r = Fit("m", kLogisticSpec, "--exclude blendset");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(r.out);
  size_t dev_rows = ReadCsv(ReadFile(dir_.File("dev.csv"))).size();
  EXPECT_EQ(j["excluded"]["partition"], "blendset");
  EXPECT_EQ(j["excluded"]["rows_dropped"], p.Cardinality());
  EXPECT_EQ(j["rows"].get<uint64_t>(), dev_rows - p.Cardinality());
  json h = History();
  json fit = h.back(), partition = h[3];
  ASSERT_EQ(fit["kind"], "fit");
  ASSERT_EQ(partition["kind"], "partition");
  EXPECT_EQ(fit["body"]["excluded"]["partition"], "blendset");
  EXPECT_EQ(fit["body"]["excluded"]["row_set"], partition["body"]["row_set"]);
  RowSet read = BlobRows(fit["body"]["rows_read"].get<std::string>());
  EXPECT_EQ(read.Cardinality(), dev_rows - p.Cardinality());
  EXPECT_FALSE(read.Intersects(p));
  // The partition entry is a parent of the fit.
  EXPECT_EQ(fit["body"]["parents"][1], partition["seq"]);
  // An unknown partition is exit 2, and nothing changes.
  const std::string before = ReadFile(dir_.File("l"));
  RunResult bad = Fit("m2", kLogisticSpec, "--exclude nowhere");
  EXPECT_EQ(bad.exit_code, 2) << bad.err;
  EXPECT_NE(bad.err.find("--exclude: no partition named 'nowhere' (partitions: blendset)"),
            std::string::npos)
      << bad.err;
  EXPECT_TRUE(ReadFile(dir_.File("l")) == before);
}

TEST_F(BlendTest, ClassificationBlendFitsPredictsAndShows) {
  MakeClassificationLedger();
  ASSERT_EQ(Carve("--name blendset --fraction 0.3 --seed 4").exit_code, 0);
  ASSERT_EQ(Fit("logit", kLogisticSpec, "--exclude blendset").exit_code, 0);
  ASSERT_EQ(Fit("near", kKnnSpec, "--exclude blendset").exit_code, 0);
  RunResult r = Fit("mix",
                    "[learner]\nkind = \"blend\"\nmembers = [\"logit\", \"near\"]\n"
                    "partition = \"blendset\"\n[select]\nfolds = 3\nseed = 2\n");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(r.out);
  RowSet p = Partition("blendset");
  EXPECT_EQ(j["learner"], "blend");
  EXPECT_EQ(j["rows"], p.Cardinality());
  EXPECT_EQ(j["metric"], "brier");
  EXPECT_EQ(j["folds"], 3);
  ASSERT_EQ(j["members"].size(), 2u);
  for (const json& m : j["members"]) {
    EXPECT_NEAR(m["contribution"].get<double>(),
                m["loss_without"].get<double>() - j["loss_all"].get<double>(), 1e-15);
  }

  // The weights are the least-squares fit of the label on the members'
  // probabilities over the partition rows: check by the normal equations.
  auto logit = Predict("logit"), near = Predict("near");
  std::map<std::string, std::string> label;
  for (auto& row : ReadCsv(ReadFile(dir_.File("dev.csv")))) label[row["id"]] = row["label"];
  Eigen::MatrixXd x(static_cast<Eigen::Index>(p.Cardinality()), 3);
  Eigen::VectorXd y(x.rows());
  Eigen::Index n = 0;
  for (auto& [id, row] : logit) {
    if (!p.Contains(RowOf(id))) continue;
    x.row(n) << 1.0, std::stod(row["p_yes"]), std::stod(near[id]["p_yes"]);
    y(n++) = label[id] == "yes" ? 1.0 : 0.0;
  }
  ASSERT_EQ(n, x.rows());
  Eigen::VectorXd beta = (x.transpose() * x).ldlt().solve(x.transpose() * y);
  EXPECT_NEAR(j["intercept"].get<double>(), beta(0), 1e-8);
  EXPECT_NEAR(j["members"][0]["weight"].get<double>(), beta(1), 1e-8);
  EXPECT_NEAR(j["members"][1]["weight"].get<double>(), beta(2), 1e-8);

  // The fit entry names the members' fits and the partition as parents.
  json h = History();
  json fit;
  for (const json& e : h) {
    if (e["kind"] == "fit") fit = e["body"];
  }
  EXPECT_EQ(fit["learner"], "blend");
  EXPECT_EQ(fit["parents"], json({h[4]["seq"], h[5]["seq"], h[3]["seq"]}));
  EXPECT_EQ(fit["blend"]["members"][0]["model_digest"], j["members"][0]["model_digest"]);
  EXPECT_EQ(BlobRows(fit["rows_read"].get<std::string>()), p);
  EXPECT_EQ(fit["blend"]["contributions"]["fold_row_sets"].size(), 3u);

  // predict applies the members from the ledger and combines them.
  auto mix = Predict("mix");
  ASSERT_EQ(mix.size(), logit.size());
  for (auto& [id, row] : mix) {
    double s = j["intercept"].get<double>() +
               j["members"][0]["weight"].get<double>() * std::stod(logit[id]["p_yes"]) +
               j["members"][1]["weight"].get<double>() * std::stod(near[id]["p_yes"]);
    double q = std::min(1.0, std::max(0.0, s));
    EXPECT_NEAR(std::stod(row["p_yes"]), q, 1e-12) << id;
    EXPECT_NEAR(std::stod(row["p_no"]), 1 - q, 1e-12) << id;
    EXPECT_EQ(row["prediction"], q >= 0.5 ? "yes" : "no") << id;
  }
  EXPECT_EQ(History().back()["kind"], "apply");

  // models: listed as a blend; --show prints weights, intercept and contributions.
  json models = json::parse(RunUnseen("models --json --ledger " + Q("l")).out);
  ASSERT_EQ(models.size(), 3u);
  EXPECT_EQ(models[2]["learner"], "blend");
  EXPECT_EQ(models[2]["rows_read"], p.Cardinality());
  RunResult shown = RunUnseen("models --ledger " + Q("l") + " --show mix");
  ASSERT_EQ(shown.exit_code, 0) << shown.err;
  for (const char* s : {"blend mix", "partition blendset", "logit", "near", "intercept",
                        "contribution", "weight", "3-fold cross-validation"}) {
    EXPECT_NE(shown.out.find(s), std::string::npos) << s << "\n" << shown.out;
  }
  json whole = json::parse(RunUnseen("models --json --ledger " + Q("l") + " --show mix").out);
  EXPECT_EQ(whole["blend"]["members"][1]["weight"], j["members"][1]["weight"]);
  EXPECT_EQ(whole["blend"]["positive_class"], "yes");
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

TEST_F(BlendTest, NonNegativeRegressionBlend) {
  MakeLedger(RegressionCsv(300, 3), "--target y --id id --group site", "--strategy group");
  ASSERT_EQ(Carve("--name bs --fraction 0.35 --seed 1").exit_code, 0);
  ASSERT_EQ(Fit("lin", "[learner]\nkind = \"linear\"\n", "--exclude bs").exit_code, 0);
  ASSERT_EQ(Fit("knn", "[learner]\nkind = \"knn\"\nk = 3\n", "--exclude bs").exit_code, 0);
  RunResult r =
      Fit("nn",
          "[learner]\nkind = \"blend\"\nmembers = [\"lin\", \"knn\"]\nnonnegative = true\n"
          "partition = \"bs\"\n[select]\nfolds = 2\n");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json j = json::parse(r.out);
  EXPECT_EQ(j["metric"], "mse");
  EXPECT_TRUE(j["nonnegative"].get<bool>());
  for (const json& m : j["members"]) EXPECT_GE(m["weight"].get<double>(), 0.0);
  // The linear member is the better one here (y is linear in a and b).
  EXPECT_GT(j["members"][0]["contribution"].get<double>(), 0.0);
  auto lin = Predict("lin"), knn = Predict("knn"), nn = Predict("nn");
  for (auto& [id, row] : nn) {
    double s = j["intercept"].get<double>() +
               j["members"][0]["weight"].get<double>() * std::stod(lin[id]["prediction"]) +
               j["members"][1]["weight"].get<double>() * std::stod(knn[id]["prediction"]);
    EXPECT_NEAR(std::stod(row["prediction"]), s, 1e-9 * (1 + std::abs(s))) << id;
  }
}

TEST_F(BlendTest, MulticlassBlendIsExitTwo) {
  Random rng(5);
  std::string csv = "id,a,b,kind\n";
  for (int i = 0; i < 150; ++i) {
    csv += fmt::format("r{},{:.3f},{:.3f},{}\n", i, rng.NextDouble(), rng.NextDouble(),
                       "xyz"[rng.Bounded(3)]);
  }
  MakeLedger(csv, "--target kind --id id", "--strategy random");
  ASSERT_EQ(Carve("--name bs --fraction 0.3").exit_code, 0);
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r =
      Fit("mix", "[learner]\nkind = \"blend\"\nmembers = [\"a\", \"b\"]\npartition = \"bs\"\n");
  EXPECT_EQ(r.exit_code, 2) << r.err;
  EXPECT_NE(r.err.find("mix.toml:1:1: blend: the source has 3 classes"), std::string::npos)
      << r.err;
  EXPECT_TRUE(ReadFile(dir_.File("l")) == before);
}

TEST_F(BlendTest, UnknownMemberPartitionOrExcludeIsExitTwo) {
  MakeClassificationLedger();
  ASSERT_EQ(Carve("--name blendset --fraction 0.3 --seed 4").exit_code, 0);
  ASSERT_EQ(Fit("logit", kLogisticSpec, "--exclude blendset").exit_code, 0);
  const std::string before = ReadFile(dir_.File("l"));
  struct Case {
    std::string spec, extra, says;
  };
  for (const Case& c : {
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"logit\", \"ghost\"]\npartition = "
                "\"blendset\"\n",
                "", "b.toml:3:1: blend: no frozen model named 'ghost' (models: logit)"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"logit\", \"logit2\"]\npartition = "
                "\"nope\"\n",
                "", "b.toml:4:1: blend: no partition named 'nope' (partitions: blendset)"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"logit\", \"x\"]\npartition = "
                "\"blendset\"\n",
                "--exclude blendset", "--exclude: a blend reads only the rows of its partition"},
           Case{"[learner]\nkind = \"blend\"\nmembers = [\"logit\", \"x\"]\npartition = "
                "\"blendset\"\n"
                "[select]\nmetric = \"accuracy\"\n",
                "", "b.toml:5: blend: contributions are differences of a loss"},
       }) {
    RunResult r = Fit("b", c.spec, c.extra);
    EXPECT_EQ(r.exit_code, 2) << c.spec << r.err;
    EXPECT_NE(r.err.find(c.says), std::string::npos) << r.err;
    EXPECT_TRUE(ReadFile(dir_.File("l")) == before) << c.spec;
  }
}

}  // namespace
}  // namespace unseen
