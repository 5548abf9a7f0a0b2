// eval and budget through the binary: estimates checked against the frozen
// model applied independently to the holdout rows, the adaptivity count read
// from the ledger, repeats, the budget, every refusal of the guard, external
// predictors and their failures.
#include <gtest/gtest.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <set>
#include <sstream>
#include <string>

#include "harness/bounds/bounds.h"
#include "harness/ledger/models.h"
#include "storage/ledger.h"
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
[learner]
kind = "logistic"
l2 = 1.0
)";

class EvalTest : public ::testing::Test {
 protected:
  void SetUp() override { Seal(""); }
  void Seal(const std::string& extra) {
    WriteFile(dir_.File("d.csv"), testing::SampleCsv(400, 20, 6));
    WriteFile(dir_.File("spec.toml"), kSpec);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                        " --target label --id id --group site --time day")
                  .exit_code,
              0);
    RunResult seal = RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --strategy random --fraction 0.25 --seed 1 --dev-out " +
                               Q("dev.csv") + " " + extra);
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
  }
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  void Fit(const std::string& name, const std::string& spec = kSpec) {
    WriteFile(dir_.File(name + ".toml"), spec);
    RunResult r =
        RunUnseen("fit --ledger " + Q("l") + " --spec " + Q(name + ".toml") + " --name " + name);
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  RunResult Eval(const std::string& args) {
    return RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") + " " + args);
  }
  json History() { return json::parse(RunUnseen("history --json --ledger " + Q("l")).out); }
  json Status() { return json::parse(RunUnseen("status --json --ledger " + Q("l")).out); }
  size_t Count(const std::string& kind) {
    size_t n = 0;
    for (const json& e : History()) n += e.at("kind") == kind;
    return n;
  }
  // The holdout rows, rebuilt from the source and the dev file.
  std::vector<std::vector<std::string>> HoldoutRows() {
    std::set<std::string> dev;
    std::istringstream devin(ReadFile(dir_.File("dev.csv")));
    std::string line;
    while (std::getline(devin, line)) dev.insert(line.substr(0, line.find(',')));
    std::istringstream in(ReadFile(dir_.File("d.csv")));
    std::getline(in, line);
    std::vector<std::vector<std::string>> rows;
    while (std::getline(in, line)) {
      if (dev.count(line.substr(0, line.find(',')))) continue;
      std::vector<std::string> f;
      std::istringstream cells(line);
      std::string c;
      while (std::getline(cells, c, ',')) f.push_back(c);
      rows.push_back(f);
    }
    return rows;
  }
  // The errors of model `name` on the holdout, computed outside the guard:
  // the frozen pipeline applied to the rebuilt holdout rows.
  std::pair<uint64_t, uint64_t> HoldoutErrors(const std::string& name) {
    auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadOnly);
    EXPECT_TRUE(ledger.ok());
    auto model = LoadModel(**ledger, name);
    EXPECT_TRUE(model.ok());
    auto rows = HoldoutRows();
    Frame x;
    x.columns = {FrameColumn{"a", true, {}, {}}, FrameColumn{"b", true, {}, {}}};
    std::vector<std::string> classes = model->json.at("target").at("classes");
    for (const auto& r : rows) {
      x.columns[0].num.push_back(std::stod(r[3]));
      x.columns[1].num.push_back(std::stod(r[4]));
    }
    auto p = model->model->Predict(x);
    EXPECT_TRUE(p.ok());
    uint64_t errors = 0;
    for (size_t i = 0; i < rows.size(); ++i) {
      errors += classes[static_cast<size_t>(p->value(static_cast<Eigen::Index>(i)))] != rows[i][5];
    }
    return {errors, rows.size()};
  }
  TempDir dir_;
};

TEST_F(EvalTest, BatchReportsEachModelWithItsEstimateAndBound) {
  Fit("alpha");
  Fit("beta", "[learner]\nkind = \"knn\"\nk = 7\n");
  RunResult r = Eval("alpha beta");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json out = json::parse(r.out);
  ASSERT_EQ(out.size(), 2u);
  EXPECT_EQ(out[0]["queries_spent"], 2);
  for (size_t j = 1; j <= out.size(); ++j) {
    const json& a = out[j - 1];
    for (const char* key :
         {"model", "metric", "estimate", "lower", "upper", "method", "delta", "n", "queries"}) {
      EXPECT_TRUE(a.contains(key)) << key;
    }
    EXPECT_EQ(a["metric"], "error_rate");
    EXPECT_EQ(a["method"], "clopper-pearson");
    EXPECT_EQ(a["n"], Status()["holdout_rows"]);
    EXPECT_EQ(a["queries"], 2);
    // Answers 1 and 2 of a ledger sealed with a budget of 100, asked before
    // any answer was shown: each gets delta_j = delta/2 (1/(j(j+1)) + 1/100)
    // (docs/bounds.md, "One accounting"), and nothing more.
    const double share = std::log(2 / (1.0 / (j * (j + 1.0)) + 0.01));
    EXPECT_EQ(a["answer_index"], j);
    EXPECT_NEAR(a["log_share"].get<double>(), share, 1e-12);
    EXPECT_NEAR(a["log_hypotheses"].get<double>(), share, 1e-12);
    EXPECT_EQ(a["reveals_before"], 0);
    auto [errors, n] = HoldoutErrors(a["model"]);
    ASSERT_EQ(n, a["n"].get<uint64_t>());
    // The shown estimate is the error rate on the reveal grid (step 0.001).
    EXPECT_NEAR(a["estimate"].get<double>(), std::round(1000.0 * errors / n) / 1000, 1e-12);
    // The interval: Clopper–Pearson at delta_j, rounded outwards (with
    // n = 100 no other count rounds to the same estimate).
    BoundRequest b;
    b.method = BoundMethod::kClopperPearson;
    b.n = n;
    b.successes = errors;
    b.mean = static_cast<double>(errors) / n;
    b.log_hypotheses = share;
    auto want = ComputeBound(b);
    ASSERT_TRUE(want.ok());
    EXPECT_LE(a["lower"].get<double>(), want->lower);
    EXPECT_GT(a["lower"].get<double>(), want->lower - 0.001);
    EXPECT_GE(a["upper"].get<double>(), want->upper);
    EXPECT_LT(a["upper"].get<double>(), want->upper + 0.001);
  }
  EXPECT_EQ(Status()["holdout_queries"], 2);
  EXPECT_EQ(Count("eval"), 1u);
}

TEST_F(EvalTest, BlendIsEvaluatedLikeAnyFrozenModel) {
  ASSERT_EQ(RunUnseen("carve --ledger " + Q("l") + " --name bs --fraction 0.3 --seed 5").exit_code,
            0);
  for (const char* name : {"m1", "m2"}) {
    WriteFile(dir_.File(std::string(name) + ".toml"),
              std::string("[learner]\nkind = \"") + (name[1] == '1' ? "logistic" : "knn") + "\"\n");
    RunResult r = RunUnseen("fit --ledger " + Q("l") + " --spec " + Q(std::string(name) + ".toml") +
                            " --name " + name + " --exclude bs");
    ASSERT_EQ(r.exit_code, 0) << r.err;
  }
  WriteFile(dir_.File("blend.toml"),
            "[learner]\nkind = \"blend\"\nmembers = [\"m1\", \"m2\"]\npartition = \"bs\"\n");
  RunResult fit =
      RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("blend.toml") + " --name mix");
  ASSERT_EQ(fit.exit_code, 0) << fit.err;
  RunResult r = Eval("mix m1");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json a = json::parse(r.out)[0];
  EXPECT_EQ(a["kind"], "frozen");
  EXPECT_TRUE(a["taints"].empty());
  auto [errors, n] = HoldoutErrors("mix");
  EXPECT_NEAR(a["estimate"].get<double>(), std::round(1000.0 * errors / n) / 1000, 1e-12);
}

TEST_F(EvalTest, TextOutputNamesTheCaution) {
  Fit("alpha");
  RunResult r = RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("k") + " alpha");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  EXPECT_NE(r.out.find("alpha"), std::string::npos);
  EXPECT_NE(r.out.find("independent sample of the population"), std::string::npos);
  EXPECT_NE(r.out.find("Holdout queries: 1 of 100 used"), std::string::npos);
}

TEST_F(EvalTest, RepeatedQueryIsAnsweredFromTheLedgerWithoutBudgetOrKey) {
  Fit("alpha");
  json first = json::parse(Eval("alpha").out)[0];
  RunResult again = RunUnseen("eval --json --ledger " + Q("l") + " alpha");  // no key needed
  ASSERT_EQ(again.exit_code, 0) << again.err;
  json second = json::parse(again.out);
  EXPECT_EQ(second[0]["queries_spent"], 0);
  EXPECT_EQ(second[0]["repeated"], true);
  EXPECT_EQ(second[0]["estimate"], first["estimate"]);
  EXPECT_EQ(second[0]["lower"], first["lower"]);
  EXPECT_EQ(Status()["holdout_queries"], 1);
  // A different metric is a new question.
  json third = json::parse(Eval("alpha --metric accuracy").out);
  EXPECT_EQ(third[0]["queries_spent"], 1);
  EXPECT_NEAR(third[0]["estimate"].get<double>(), 1 - first["estimate"].get<double>(), 1e-9);
}

TEST_F(EvalTest, QuestionAskedAfterARevealIsChargedForIt) {
  // alpha and gamma are frozen before any answer; gamma and delta are asked
  // after one, delta frozen after it too.
  Fit("alpha");
  Fit("gamma", "[learner]\nkind = \"logistic\"\nl2 = 5.0\n");
  json first = json::parse(Eval("alpha").out)[0];
  const double n = first["n"];
  EXPECT_EQ(first["reveals_before"], 0);
  EXPECT_NEAR(first["log_transcript"].get<double>(), 0, 1e-12);
  EXPECT_NEAR(first["log_question"].get<double>(), 0, 1e-12);
  json second = json::parse(Eval("gamma").out)[0];
  EXPECT_EQ(second["reveals_before"], 1);
  EXPECT_EQ(second["answer_index"], 2);
  // The first answer (Clopper–Pearson on n = 100 rows) is a function of its
  // shown rate: one of n + 1 values; and it did not fail (ln(1001/1000),
  // docs/bounds.md "One accounting").
  const double transcript = std::log(n + 1) + std::log(1001.0 / 1000);
  EXPECT_NEAR(second["log_transcript"].get<double>(), transcript, 1e-9);
  // gamma's question is either coded by that transcript or, since gamma was
  // frozen before the first answer, as one of 2 models x 13 default
  // questions of a two-class task (error_rate and accuracy by 3 methods,
  // balanced_accuracy, log_loss and brier by 2, auc by 1); one bit picks the code.
  const double advance = std::log(2.0 * 13);
  ASSERT_LT(advance, transcript);
  EXPECT_NEAR(second["log_question"].get<double>(), std::log(2.0) + advance, 1e-9);
  const double share2 = std::log(2 / (1.0 / 6 + 0.01));
  EXPECT_NEAR(second["log_hypotheses"].get<double>(), share2 + std::log(2.0) + advance, 1e-9);
  EXPECT_EQ(second["queries"], 2);
  // delta, frozen after the first answer, can only be coded by the transcript.
  Fit("delta", "[learner]\nkind = \"logistic\"\nl2 = 9.0\n");
  json third = json::parse(Eval("delta").out)[0];
  EXPECT_NEAR(third["log_transcript"].get<double>(), 2 * transcript, 1e-9);
  EXPECT_NEAR(third["log_question"].get<double>(), std::log(2.0) + 2 * transcript, 1e-9);
  // So can gamma asked with a declared range or another default: a question
  // not fixed in advance.
  json other = json::parse(Eval("gamma --metric brier --prob-floor 0.01").out)[0];
  EXPECT_NEAR(other["log_question"].get<double>(),
              std::log(2.0) + other["log_transcript"].get<double>(), 1e-9);
  // Asking alpha again returns its first interval unchanged: it was final.
  json again = json::parse(Eval("alpha").out)[0];
  EXPECT_EQ(again["repeated"], true);
  EXPECT_EQ(again["lower"], first["lower"]);
  EXPECT_EQ(again["upper"], first["upper"]);
  EXPECT_EQ(again["log_hypotheses"], first["log_hypotheses"]);
}

TEST_F(EvalTest, BudgetIsEnforcedAndRaisingItIsAnEntry) {
  // A fresh ledger sealed with a budget of one query.
  TempDir other;
  WriteFile(other.File("d.csv"), testing::SampleCsv(200, 10, 3));
  std::string L = ShellQuote(other.File("l"));
  ASSERT_EQ(RunUnseen("init --ledger " + L + " --data " + ShellQuote(other.File("d.csv")) +
                      " --target label --id id --group site --time day")
                .exit_code,
            0);
  ASSERT_EQ(RunUnseen("seal --ledger " + L + " --key-file " + Q("k") +
                      " --strategy random --fraction 0.3 "
                      "--seed 4 --budget 1 --dev-out " +
                      ShellQuote(other.File("dev.csv")))
                .exit_code,
            0);
  WriteFile(other.File("s.toml"), "[learner]\nkind = \"knn\"\n");
  for (const char* name : {"m1", "m2"}) {
    ASSERT_EQ(RunUnseen("fit --ledger " + L + " --spec " + ShellQuote(other.File("s.toml")) +
                        " --name " + name)
                  .exit_code,
              0);
  }
  std::string eval = "eval --json --ledger " + L + " --key-file " + Q("k") + " ";
  RunResult over = RunUnseen(eval + "m1 m2");
  EXPECT_EQ(over.exit_code, 1) << over.err;
  EXPECT_NE(over.err.find("budget is spent"), std::string::npos) << over.err;
  json hist = json::parse(RunUnseen("history --json --ledger " + L).out);
  EXPECT_EQ(hist.back()["kind"], "refusal");
  ASSERT_EQ(RunUnseen(eval + "m1").exit_code, 0);
  EXPECT_EQ(RunUnseen(eval + "m2").exit_code, 1);
  RunResult raise =
      RunUnseen("budget --ledger " + L + " --raise 1 --reason 'second candidate agreed in review'");
  ASSERT_EQ(raise.exit_code, 0) << raise.err;
  json st = json::parse(RunUnseen("status --json --ledger " + L).out);
  EXPECT_EQ(st["budget_queries"], 2);
  EXPECT_EQ(st["budget_raises"], 1);
  EXPECT_EQ(RunUnseen(eval + "m2").exit_code, 0);
  EXPECT_EQ(RunUnseen("budget --ledger " + L + " --raise 0 --reason x").exit_code, 2);
}

// Appends a forged fit entry (through the library, so the chain stays
// valid) for a copy of model `from` whose lineage read the holdout.
void ForgeTaintedModel(const std::string& ledger_path, const std::string& from,
                       const std::string& name) {
  auto ledger = Ledger::Open(ledger_path, LedgerMode::kReadWrite);
  ASSERT_TRUE(ledger.ok());
  ASSERT_TRUE((*ledger)->Begin().ok());
  auto loaded = LoadModel(**ledger, from);
  ASSERT_TRUE(loaded.ok());
  const ModelSummary& summary = loaded->summary;
  json* model = &loaded->json;
  json fit;
  auto fits = (*ledger)->EntriesOfKind("fit");
  ASSERT_TRUE(fits.ok());
  for (const Entry& e : *fits) {
    if (e.seq == summary.fit_entry) fit = json::parse(e.body);
  }
  auto seal_entry = (*ledger)->LastOfKind("seal");
  ASSERT_TRUE(seal_entry.ok() && seal_entry->has_value());
  json seal = json::parse((*seal_entry)->body);
  (*model)["name"] = name;
  auto text = CanonicalJson(model->dump());
  ASSERT_TRUE(text.ok());
  auto ref = (*ledger)->PutBlob("model", *text);
  ASSERT_TRUE(ref.ok());
  json forged = {{"model", name},
                 {"model_digest", ToHex(ref->digest)},
                 {"rows_read", seal["holdout"]["row_set"]},
                 {"parents", fit["parents"]},
                 {"learner", "logistic"},
                 {"rows", 1},
                 {"tainted", false}};
  ASSERT_TRUE((*ledger)->Append("fit", "test", forged.dump(), {*ref}).ok());
  ASSERT_TRUE((*ledger)->Commit().ok());
}

TEST_F(EvalTest, ModelWhoseLineageReadTheHoldoutIsRefusedUnlessAccepted) {
  Fit("alpha");
  ForgeTaintedModel(dir_.File("l"), "alpha", "peeked");
  const size_t evals = Count("eval");
  RunResult r = Eval("peeked");
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("tainted"), std::string::npos) << r.err;
  EXPECT_NE(r.err.find("holdout rows"), std::string::npos) << r.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
  EXPECT_EQ(Count("eval"), evals);
  EXPECT_EQ(Status()["holdout_queries"], 0);
  // A clean model in the same batch does not get through either.
  EXPECT_EQ(Eval("alpha peeked").exit_code, 1);

  RunResult forced = Eval("peeked --accept-contamination 'audit of a known leak'");
  ASSERT_EQ(forced.exit_code, 0) << forced.err;
  json a = json::parse(forced.out)[0];
  EXPECT_EQ(a["contaminated"], true);
  EXPECT_FALSE(a["taints"].empty());
  json last = History().back();
  EXPECT_EQ(last["kind"], "eval");
  EXPECT_EQ(last["body"]["accept_contamination"], "audit of a known leak");
  EXPECT_EQ(last["body"]["answers"][0]["contaminated"], true);
  // Every later listing shows it.
  json models = json::parse(RunUnseen("models --json --ledger " + Q("l")).out);
  for (const json& m : models) EXPECT_EQ(m["contaminated"], m["name"] == "peeked") << m["name"];
  EXPECT_NE(RunUnseen("models --ledger " + Q("l")).out.find("CONTAMINATED"), std::string::npos);
}

TEST_F(EvalTest, ModelFromAnotherSourceIsRefused) {
  Fit("alpha");
  auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadWrite);
  ASSERT_TRUE(ledger.ok());
  ASSERT_TRUE((*ledger)->Begin().ok());
  auto loaded = LoadModel(**ledger, "alpha");
  ASSERT_TRUE(loaded.ok());
  json* model = &loaded->json;
  (*model)["source_sha256"] = std::string(64, 'a');
  auto ref = (*ledger)->PutBlob("model", *CanonicalJson(model->dump()));
  ASSERT_TRUE(ref.ok());
  json forged = {
      {"model", "moved"}, {"model_digest", ToHex(ref->digest)}, {"parents", json::array()}};
  ASSERT_TRUE((*ledger)->Append("fit", "test", forged.dump(), {*ref}).ok());
  ASSERT_TRUE((*ledger)->Commit().ok());
  ledger->reset();
  RunResult r = Eval("moved");
  EXPECT_EQ(r.exit_code, 1);
  EXPECT_NE(r.err.find("file digest"), std::string::npos) << r.err;
}

TEST_F(EvalTest, BadOptionsAndWrongKeyAreExitTwoAndLeaveTheLedgerAlone) {
  Fit("alpha");
  ASSERT_EQ(RunUnseen("keygen --out " + Q("other")).exit_code, 0);
  const std::string before = ReadFile(dir_.File("l"));
  struct Case {
    std::string args, message;
  } cases[] = {
      {"nosuch", "no frozen model named 'nosuch'"},
      {"alpha --metric mse", "--metric"},
      {"alpha --metric rmse", "--metric"},
      {"alpha --delta 1.5", "--delta"},
      {"alpha --method mcdiarmid", "mcdiarmid"},
      {"alpha --metric brier --method clopper-pearson", "clopper-pearson"},
      {"alpha alpha", "named twice"},
  };
  for (const Case& c : cases) {
    RunResult r = Eval(c.args);
    EXPECT_EQ(r.exit_code, 2) << c.args << ": " << r.err;
    EXPECT_NE(r.err.find(c.message), std::string::npos) << c.args << ": " << r.err;
  }
  RunResult wrong = RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("other") + " alpha");
  EXPECT_EQ(wrong.exit_code, 2) << wrong.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
}

TEST_F(EvalTest, EveryMetricGivesAnIntervalInsideItsRange) {
  Fit("alpha");
  for (const char* metric : {"accuracy", "balanced_accuracy", "log_loss", "brier", "auc"}) {
    RunResult r = Eval(std::string("alpha --metric ") + metric);
    ASSERT_EQ(r.exit_code, 0) << metric << ": " << r.err;
    json a = json::parse(r.out)[0];
    EXPECT_LE(a["range"][0].get<double>(), a["lower"].get<double>()) << metric;
    EXPECT_LE(a["lower"].get<double>(), a["estimate"].get<double>()) << metric;
    EXPECT_LE(a["estimate"].get<double>(), a["upper"].get<double>()) << metric;
    EXPECT_LE(a["upper"].get<double>(), a["range"][1].get<double>()) << metric;
  }
  json ll = json::parse(Eval("alpha --metric log_loss --prob-floor 0.01").out)[0];
  EXPECT_NEAR(ll["range"][1].get<double>(), -std::log(0.01), 1e-12);
  EXPECT_EQ(json::parse(Eval("alpha --metric auc").out)[0]["method"], "mcdiarmid");
}

TEST_F(EvalTest, LadderReleasesANewValueOnlyWhenTheBoardMoves) {
  Fit("alpha");
  Fit("weak", "[learner]\nkind = \"knn\"\nk = 1\n");
  RunResult first = Eval("--ladder --ladder-step 0.05 weak");
  ASSERT_EQ(first.exit_code, 0) << first.err;
  json a = json::parse(first.out)[0];
  EXPECT_EQ(a["mode"], "ladder");
  EXPECT_EQ(a["method"], "ladder");
  EXPECT_EQ(a["improved"], true);
  EXPECT_EQ(a["leader"], "weak");
  auto [weak_errors, n] = HoldoutErrors("weak");
  const double weak = std::round(static_cast<double>(weak_errors) / n / 0.05) * 0.05;
  EXPECT_NEAR(a["estimate"].get<double>(), weak, 1e-12);
  // The same submission again is a repeat; a second one moves the board
  // only if it beats it by more than the step.
  auto [alpha_errors, n2] = HoldoutErrors("alpha");
  const double alpha = static_cast<double>(alpha_errors) / n2;
  json b = json::parse(Eval("--ladder --ladder-step 0.05 alpha").out)[0];
  const bool moves = alpha < weak - 0.05;
  EXPECT_EQ(b["improved"], moves);
  EXPECT_NEAR(b["estimate"].get<double>(), moves ? std::round(alpha / 0.05) * 0.05 : weak, 1e-12);
  EXPECT_EQ(b["leader"], moves ? "alpha" : "weak");
  EXPECT_LE(b["lower"].get<double>(), b["estimate"].get<double>());
  EXPECT_EQ(Eval("--ladder --ladder-step 0.1 alpha").exit_code, 2);  // the step is fixed
  EXPECT_EQ(Eval("--ladder alpha --metric accuracy").exit_code, 2);  // not a loss
}

TEST_F(EvalTest, LadderAfterPlainAnswersIsChargedForThem) {
  // A plain answer first; the Ladder's first answer is then charged for it
  // (one answer of n + 1 values), and its interval is Hoeffding at that level.
  Fit("alpha");
  Fit("weak", "[learner]\nkind = \"knn\"\nk = 1\n");
  json plain = json::parse(Eval("weak").out)[0];
  const double n = plain["n"];
  json l = json::parse(Eval("--ladder --ladder-step 0.05 alpha").out)[0];
  EXPECT_EQ(l["reveals_before"], 1);
  const double no_failure = std::log(1001.0 / 1000);  // it could have failed instead
  const double first = std::log(n + 1) + no_failure;
  EXPECT_NEAR(l["log_transcript"].get<double>(), first, 1e-9);
  // A Ladder question is never a default question fixed in advance.
  EXPECT_NEAR(l["log_question"].get<double>(), std::log(2.0) + first, 1e-9);
  const double level = std::log(2 / (1.0 / 6 + 0.01)) + std::log(2.0) + first;
  EXPECT_NEAR(l["log_hypotheses"].get<double>(), level, 1e-9);
  const double eps = std::sqrt((std::log(2.0) + level - std::log(0.05)) / (2 * n));
  EXPECT_NEAR(l["upper"].get<double>(), std::fmin(1.0, l["estimate"].get<double>() + 0.025 + eps),
              1e-9);
  EXPECT_NEAR(l["lower"].get<double>(), std::fmax(0.0, l["estimate"].get<double>() - 0.025 - eps),
              1e-9);
  // A later plain question pays for the Ladder answer's code: a move costs
  // ln(k G) with k = the budget (100) and G = floor(1 / 0.05) + 2 = 22.
  json after = json::parse(Eval("alpha --metric accuracy").out)[0];
  EXPECT_NEAR(after["log_transcript"].get<double>(),
              first + std::log(100.0 * 22) + no_failure, 1e-9);
}

TEST_F(EvalTest, DeltaIsTheLedgersAndCannotBeChangedPerCall) {
  Fit("alpha");
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r = Eval("--delta 0.2 alpha");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("--delta 0.200000: every answer of this ledger shares delta 0.050000"),
            std::string::npos)
      << r.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
  RunResult same = Eval("--delta 0.05 alpha");
  ASSERT_EQ(same.exit_code, 0) << same.err;
  EXPECT_EQ(json::parse(same.out)[0]["delta"], 0.05);
}

TEST(RegressionEvalTest, DefaultRangeIsTheDevRowsAndClippingIsOneBit) {
  // y = x for x = 0..399, with ids; the range without --range is the
  // development rows' (published), never the source's (which would show
  // holdout targets), and whether a holdout row was clipped is a bool.
  TempDir dir;
  auto Q = [&](const std::string& f) { return ShellQuote(dir.File(f)); };
  std::string csv = "id,x,y\n";
  for (int i = 0; i < 400; ++i) {
    csv += "r" + std::to_string(i) + "," + std::to_string(i) + "," + std::to_string(i) + "\n";
  }
  WriteFile(dir.File("d.csv"), csv);
  WriteFile(dir.File("s.toml"), "[learner]\nkind = \"linear\"\n");
  ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
  ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                      " --target y --id id --task regression")
                .exit_code,
            0);
  ASSERT_EQ(RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                      " --fraction 0.25 --seed 3 --dev-out " + Q("dev.csv"))
                .exit_code,
            0);
  double lo = 1e9, hi = -1e9;
  std::istringstream dev(ReadFile(dir.File("dev.csv")));
  std::string line;
  std::getline(dev, line);
  while (std::getline(dev, line)) {
    const double y = std::stod(line.substr(line.rfind(',') + 1));
    lo = std::fmin(lo, y);
    hi = std::fmax(hi, y);
  }
  ASSERT_EQ(RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("s.toml") + " --name lin").exit_code,
            0);
  RunResult r = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                          " lin --metric mae");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json a = json::parse(r.out)[0];
  EXPECT_EQ(a["range_source"], "dev-rows");
  EXPECT_NEAR(a["range"][1].get<double>(), hi - lo, 1e-9);
  EXPECT_TRUE(a["outside_range"].is_boolean());
  // mae by Hoeffding: one of 1001 grid values, one bit for the clipping, and
  // ln(1001/1000) for not failing.
  json hist = json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
  double code = -1;
  for (const json& e : hist) {
    if (e["kind"] == "eval") code = e["body"]["answers"][0]["code_length"];
  }
  EXPECT_NEAR(code, std::log(1001.0) + std::log(2.0) + std::log(1001.0 / 1000), 1e-12);
  // Another target range of the same width is another question, not a repeat.
  auto ask = [&](const std::string& extra) {
    RunResult e = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                            " lin --metric mae " + extra);
    EXPECT_EQ(e.exit_code, 0) << e.err;
    return json::parse(e.out)[0];
  };
  json low = ask("--range 0:3");
  json high = ask("--range 100:103");
  EXPECT_EQ(low["repeated"], false);
  EXPECT_EQ(high["repeated"], false);
  EXPECT_EQ(ask("--range 100:103")["repeated"], true);
  // Targets far outside 0:3: a plain answer says some row was clipped; a
  // Ladder answer cannot afford that bit and does not show it.
  EXPECT_EQ(low["outside_range"], true);
  json board = ask("--range 0:3 --ladder --ladder-step 0.3");
  EXPECT_EQ(board["outside_range"], false);
  EXPECT_NE(board["assumptions"].get<std::string>().find("does not say whether"),
            std::string::npos);
}

TEST(HalfWidthBudgetTest, AQueryWhoseIntervalWouldBeTooWideIsRefused) {
  TempDir dir;
  auto Q = [&](const std::string& f) { return ShellQuote(dir.File(f)); };
  WriteFile(dir.File("d.csv"), testing::SampleCsv(400, 20, 6));
  WriteFile(dir.File("s.toml"), kSpec);
  ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
  ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                      " --target label --id id "
                      "--group site --time day")
                .exit_code,
            0);
  EXPECT_EQ(RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                      " --fraction 0.25 --seed 1 "
                      "--budget-half-width 0.7 --dev-out " +
                      Q("dev.csv"))
                .exit_code,
            2);
  ASSERT_EQ(RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                      " --fraction 0.25 --seed 1 "
                      "--budget-half-width 0.2 --dev-out " +
                      Q("dev.csv"))
                .exit_code,
            0);
  json st = json::parse(RunUnseen("status --json --ledger " + Q("l")).out);
  EXPECT_EQ(st["budget_half_width"], 0.2);
  const double n = st["holdout_rows"];
  auto fit = [&](const std::string& name, const std::string& l2) {
    WriteFile(dir.File(name + ".toml"), "[learner]\nkind = \"logistic\"\nl2 = " + l2 + "\n");
    return RunUnseen("fit --ledger " + Q("l") + " --spec " + Q(name + ".toml") + " --name " + name)
        .exit_code;
  };
  ASSERT_EQ(fit("a", "1.0"), 0);
  ASSERT_EQ(fit("b", "2.0"), 0);
  std::string eval = "eval --json --ledger " + Q("l") + " --key-file " + Q("k") + " ";
  // A batch frozen before any reveal: ln H = ln 2, half-width sqrt(ln(4/0.05)/(2n)) < 0.2.
  ASSERT_LT(std::sqrt(std::log(4 / 0.05) / (2 * n)), 0.2);
  ASSERT_EQ(RunUnseen(eval + "a b").exit_code, 0);
  // A model frozen after those two reveals (n + 1 answers each): ln H = ln(2 + (n+1)^2).
  ASSERT_EQ(fit("c", "3.0"), 0);
  const double later =
      std::sqrt((std::log(2.0) + std::log(2 + (n + 1) * (n + 1)) - std::log(0.05)) / (2 * n));
  ASSERT_GT(later, 0.2);
  RunResult refused = RunUnseen(eval + "c");
  EXPECT_EQ(refused.exit_code, 1) << refused.err;
  EXPECT_NE(refused.err.find("half-width"), std::string::npos) << refused.err;
}

TEST_F(EvalTest, ThresholdoutRefusesAHoldoutTooSmallForItsTheorem) {
  Fit("alpha");
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r = Eval("--thresholdout alpha");
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("needs a holdout of at least"), std::string::npos) << r.err;
  EXPECT_EQ(ReadFile(dir_.File("l")), before);
}

TEST(ThresholdoutEvalTest, AnswersWithinTauAndKeepsItsStateSealed) {
  TempDir dir;
  auto Q = [&](const std::string& f) { return ShellQuote(dir.File(f)); };
  // 13,000 holdout rows: Theorem 25 at m = 10, B = 1 and beta = delta_1 (answer 1
  // of a budget of 10) needs 12,117.
  WriteFile(dir.File("d.csv"), testing::SampleCsv(52000, 20, 9));
  WriteFile(dir.File("s.toml"), kSpec);
  ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
  ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                      " --target label --id id --group site --time day")
                .exit_code,
            0);
  ASSERT_EQ(
      RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                " --strategy random --fraction 0.25 --seed 1 --budget 10 --dev-out " + Q("dev.csv"))
          .exit_code,
      0);
  ASSERT_EQ(
      RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("s.toml") + " --name alpha").exit_code,
      0);
  RunResult r = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                          " --thresholdout --thresholdout-budget 1 alpha");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json a = json::parse(r.out)[0];
  EXPECT_EQ(a["method"], "thresholdout");
  const double tau = a["tau"];
  EXPECT_GT(tau, 0);
  EXPECT_LT(tau, 1);
  // A second call goes on with the same run: it reads the sealed state back
  // and keeps the settings.
  WriteFile(dir.File("s2.toml"), "[learner]\nkind = \"logistic\"\nl2 = 50.0\n");
  ASSERT_EQ(
      RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("s2.toml") + " --name beta").exit_code,
      0);
  RunResult second = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --thresholdout --thresholdout-budget 1 beta");
  ASSERT_EQ(second.exit_code, 0) << second.err;
  EXPECT_EQ(json::parse(second.out)[0]["tau"], tau);
  // A call the run's overfitting budget (1 left at most) cannot cover is
  // refused before any noise is drawn: nothing to retry for fresh noise.
  const size_t evals_before = [&] {
    size_t c = 0;
    for (const json& e : json::parse(RunUnseen("history --json --ledger " + Q("l")).out)) {
      c += e["kind"] == "eval";
    }
    return c;
  }();
  RunResult both = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                             " --thresholdout --thresholdout-budget 1 alpha beta --metric brier");
  EXPECT_EQ(both.exit_code, 1) << both.err;
  EXPECT_NE(both.err.find("can answer at most"), std::string::npos) << both.err;
  size_t evals_after = 0, refusals = 0;
  for (const json& e : json::parse(RunUnseen("history --json --ledger " + Q("l")).out)) {
    evals_after += e["kind"] == "eval";
    refusals += e["kind"] == "refusal";
  }
  EXPECT_EQ(evals_after, evals_before);
  EXPECT_EQ(refusals, 1u);
  // The plain answer on the same holdout: Thresholdout's answer is within tau
  // (plus half a grid step) of it here.
  json plain = json::parse(
      RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") + " alpha").out);
  EXPECT_LT(std::fabs(a["estimate"].get<double>() - plain[0]["estimate"].get<double>()),
            tau + 0.0005);
  json hist = json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
  std::vector<json> runs;
  for (const json& e : hist) {
    if (e["kind"] == "eval" && !e["body"]["thresholdout"].is_null()) runs.push_back(e["body"]);
  }
  ASSERT_EQ(runs.size(), 2u);
  for (const json& entry : runs) {
    EXPECT_FALSE(
        entry["thresholdout"].contains("noisy_threshold"));  // secret: in the sealed state blob
    EXPECT_EQ(entry["thresholdout"]["budget"], 1);
    EXPECT_EQ(entry["thresholdout"]["run_start"], 1);
    EXPECT_EQ(entry["thresholdout"]["m"], 10);
  }
  EXPECT_EQ(runs[0]["thresholdout"]["run_answers"], 1);
  EXPECT_EQ(runs[1]["thresholdout"]["run_answers"], 2);
  // The plain answer ended the run: the next Thresholdout call starts a new
  // one whose beta is the level of answer 4, after three answers, and this
  // holdout is too small for its theorem.
  RunResult third = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                              " --thresholdout --thresholdout-budget 1 alpha --metric accuracy");
  EXPECT_EQ(third.exit_code, 2) << third.out;
  EXPECT_NE(third.err.find("needs a holdout of at least"), std::string::npos) << third.err;
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

// External predictors: a shell command reading the holdout features.
class ExternalEvalTest : public EvalTest {
 protected:
  RunResult External(const std::string& script, const std::string& extra = "") {
    WriteFile(dir_.File("p.sh"), script);
    return Eval("--name ext --command " + ShellQuote("sh " + dir_.File("p.sh")) + " " + extra);
  }
};

TEST_F(ExternalEvalTest, PredictorSeesTokensAndFeaturesOnlyAndIsScored) {
  // Predicts class "yes" for every row, once it has checked what it was shown: the header, and
  // no id (r<N>) in any field. It cannot write what it saw outside its private directory, so
  // it checks there and fails otherwise.
  RunResult r = External(
      "cat > seen.csv\n"
      "[ \"$(head -n 1 seen.csv)\" = unseen_token,a,b ] || exit 1\n"
      "grep -q -E '(^|,)r[0-9]+(,|$)' seen.csv && exit 1\n"
      "[ \"$(wc -l < seen.csv)\" -eq " + std::to_string(HoldoutRows().size() + 1) + " ] || exit 1\n"
      "awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"}' seen.csv\n");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json a = json::parse(r.out)[0];
  EXPECT_EQ(a["kind"], "external");
  uint64_t no = 0;
  auto rows = HoldoutRows();
  for (const auto& row : rows) no += row[5] != "yes";
  EXPECT_NEAR(a["estimate"].get<double>(), std::round(1000.0 * no / rows.size()) / 1000, 1e-12);
  EXPECT_EQ(Status()["holdout_queries"], 1);
}

TEST_F(ExternalEvalTest, PredictorGetsNoUnseenVariableAndNoOpenFileOfOurs) {
  // A passphrase in the environment, and the ledger open in this process: the predictor
  // checks what it can see (it fails if it sees either), then answers.
  setenv("UNSEEN_PASSPHRASE", "never-shown-to-predictors", 1);
  RunResult r = External(
      "env | grep -q UNSEEN_ && exit 1\n"
      "env | grep -q never-shown-to-predictors && exit 1\n"
      "perl -e 'for my $fd (3..1023) { exit 1 if open(my $h, \"<&=\", $fd) }' || exit 1\n"
      "awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"}'\n");
  unsetenv("UNSEEN_PASSPHRASE");
  ASSERT_EQ(r.exit_code, 0) << r.err;
}

TEST_F(ExternalEvalTest, FailedPredictorsAreRecordedAndSpendNothing) {
  // (Until predictors were confined, a failure left the ledger byte-identical and said
  // "nothing was revealed"; but the predictor had received the holdout's features. Now each
  // failure appends one `exposure` entry, and the message quotes nothing the predictor chose.)
  struct Case {
    std::string script, extra, message;
  } cases[] = {
      {"cat >/dev/null; echo boom >&2; exit 3\n", "", "exited with a non-zero status"},
      {"cat >/dev/null; sleep 5\n", "--timeout 0.3", "did not finish"},
      {"awk -F, 'NR==1{print \"token,prediction\"; next} NR<5{print $1\",yes\"}'\n", "",
       "expected"},
      {"cat >/dev/null; printf 'token,prediction\\nbogus,yes\\n'\n", "", "unknown token"},
      {"awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",maybe\"}'\n", "",
       "not one of the classes"},
      {"awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"; print $1\",yes\"}'\n",
       "", "answered twice"},
      {"cat >/dev/null; printf 'token\\nt1\\n'\n", "", "columns; expected token,prediction"},
      {"awk -F, 'NR==1{print \"token,prediction,p_yes\"; next} {print $1\",yes,0.5\"}'\n", "",
       "probabilities for some classes only"},
      {"awk -F, 'NR==1{print \"token,prediction,p_no,p_yes\"; next} "
       "{print $1\",yes,0.5,1.5\"}'\n",
       "", "is not a number in [0, 1]"},
  };
  const json before = Status();
  size_t exposures = Count("exposure");
  for (const Case& c : cases) {
    RunResult r = External(c.script, c.extra);
    EXPECT_EQ(r.exit_code, 2) << c.script << r.err;
    EXPECT_NE(r.err.find(c.message), std::string::npos) << c.script << r.err;
    EXPECT_EQ(r.err.find("nothing was revealed"), std::string::npos) << r.err;
    EXPECT_NE(r.err.find("recorded as exposure entry"), std::string::npos) << r.err;
    // Nothing the predictor wrote is quoted: not its stderr, its tokens or its predictions.
    for (const char* chosen : {"boom", "bogus", "maybe", "1.5"}) {
      EXPECT_EQ(r.err.find(chosen), std::string::npos) << chosen << ": " << r.err;
    }
    EXPECT_EQ(Count("exposure"), ++exposures) << c.script;
  }
  EXPECT_EQ(Status()["holdout_queries"], before["holdout_queries"]);
  // Each failure showed a value-free reason, which later questions pay for:
  // ln 1001 + ln(16 (C + 2)) with C = 6 source columns (docs/bounds.md).
  RunResult later = External(
      "awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"}'\n");
  ASSERT_EQ(later.exit_code, 0) << later.err;
  json a = json::parse(later.out)[0];
  EXPECT_EQ(a["reveals_before"], exposures);
  EXPECT_NEAR(a["log_transcript"].get<double>(),
              static_cast<double>(exposures) * (std::log(1001.0) + std::log(16.0 * 8)), 1e-9);
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

TEST_F(ExternalEvalTest, AttachedCopyOfTheHoldoutIsRefused) {
  std::string copy = "id,site,day,a,b,label\n";
  int i = 0;
  for (const auto& row : HoldoutRows()) {
    copy += "c" + std::to_string(i++) + "," + row[1] + "," + row[2] + "," + row[3] + "," + row[4] +
            "," + row[5] + "\n";
  }
  WriteFile(dir_.File("weights.csv"), copy);
  RunResult r = External("cat >/dev/null\n", "--attach " + Q("weights.csv"));
  EXPECT_EQ(r.exit_code, 1) << r.err;
  EXPECT_NE(r.err.find("holdout rows"), std::string::npos) << r.err;
  EXPECT_EQ(History().back()["kind"], "refusal");
}

// The holdout's digests are sealed (ledger format 2); eval holds the key, opens them and still
// recognises a single holdout row in an attached file, under a new id, and without its label
// (by its features).
TEST_F(ExternalEvalTest, OneHoldoutRowInAnAttachedFileIsFoundWithTheKey) {
  const auto rows = HoldoutRows();
  ASSERT_FALSE(rows.empty());
  const auto& h = rows[rows.size() / 2];
  WriteFile(dir_.File("labelled.csv"), "id,site,day,a,b,label\nnew-id," + h[1] + "," + h[2] + "," +
                                           h[3] + "," + h[4] + "," + h[5] + "\n");
  WriteFile(dir_.File("features.csv"),
            "site,day,a,b\n" + h[1] + "," + h[2] + "," + h[3] + "," + h[4] + "\n");
  for (const char* file : {"labelled.csv", "features.csv"}) {
    SCOPED_TRACE(file);
    RunResult r = External("cat >/dev/null\n", "--attach " + Q(file));
    EXPECT_EQ(r.exit_code, 1) << r.err;
    // Whether, never how many: a count would say which rows of the file are holdout rows.
    EXPECT_NE(r.err.find("holds holdout rows"), std::string::npos) << r.err;
    EXPECT_EQ(r.err.find("holds 1"), std::string::npos) << r.err;
    EXPECT_EQ(History().back()["body"].dump().find("holds 1"), std::string::npos);
    EXPECT_EQ(History().back()["kind"], "refusal");
  }
  EXPECT_EQ(Status()["holdout_queries"], 0);
  // Each refusal showed one bit about the holdout, which later questions pay for.
  RunResult later = External(
      "awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"}'\n");
  ASSERT_EQ(later.exit_code, 0) << later.err;
  json a = json::parse(later.out)[0];
  EXPECT_EQ(a["reveals_before"], 2);
  EXPECT_NEAR(a["log_transcript"].get<double>(), 2 * std::log(2.0), 1e-12);
  EXPECT_NEAR(a["log_question"].get<double>(), 3 * std::log(2.0), 1e-12);
}

TEST(BoundCommandTest, ClopperPearsonMatchesScipy) {
  // scipy 1.10.1: beta.ppf(0.05/3/2, 243, 683) and beta.isf(0.05/3/2, 244, 682).
  RunResult r = RunUnseen("bound --json --n 925 --errors 243 --models 3 --delta 0.05");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json b = json::parse(r.out);
  EXPECT_NEAR(b["lower"].get<double>(), 0.2286620623188258, 1e-9);
  EXPECT_NEAR(b["upper"].get<double>(), 0.29891512954472643, 1e-9);
  EXPECT_EQ(b["method"], "clopper-pearson");
  EXPECT_EQ(b["queries"], 3);
  EXPECT_EQ(b["n"], 925);
}

TEST(BoundCommandTest, HoeffdingMatchesItsClosedFormAndCountsReveals) {
  // sqrt(ln(2 * 5 / 0.05) / (2 * 400)) = 0.08138118153593646 (closed form, Python math).
  RunResult r = RunUnseen("bound --json --n 400 --mean 0.3 --models 5 --delta 0.05");
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json b = json::parse(r.out);
  EXPECT_NEAR(b["lower"].get<double>(), 0.3 - 0.08138118153593646, 1e-12);
  EXPECT_NEAR(b["upper"].get<double>(), 0.3 + 0.08138118153593646, 1e-12);
  // As answer 6 of a ledger sealed with a budget of 10, asked after 2 answers
  // of 11 values each: ln(2 / (1/42 + 1/10)) + ln 2 + 2 ln 11.
  json adaptive = json::parse(
      RunUnseen("bound --json --n 400 --mean 0.3 --answer 6 --budget 10 --reveals 2 "
                "--resolution-values 11")
          .out);
  EXPECT_NEAR(adaptive["log_hypotheses"].get<double>(),
              std::log(2 / (1.0 / 42 + 0.1)) + std::log(2.0) + 2 * std::log(11.0), 1e-12);
  EXPECT_EQ(RunUnseen("bound --n 10 --errors 11").exit_code, 2);
  EXPECT_EQ(RunUnseen("bound --n 10 --mean 0.5 --models 2 --reveals 3").exit_code, 2);
}

}  // namespace
}  // namespace unseen
