// A malformed entry body read by a command: exit 3 (integrity), whether the
// body was rewritten in SQLite or appended with an intact chain, never a crash.
#include <SQLiteCpp/SQLiteCpp.h>
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>

#include <string>
#include <utility>
#include <vector>

#include "storage/ledger.h"
#include "tests/testing/sample_data.h"
#include "tests/testing/tamper.h"
#include "tests/testing/testing.h"

namespace unseen {
namespace {

using testing::RunResult;
using testing::RunUnseen;
using testing::ShellQuote;
using testing::TempDir;
using testing::WriteFile;

constexpr const char* kSpec = R"(
[[transform]]
kind = "onehot"
[learner]
kind = "logistic"
l2 = 1.0
)";

class EntriesTamperTest : public ::testing::Test {
 protected:
  void SetUp() override {
    WriteFile(dir_.File("d.csv"), testing::SampleCsv(200, 10, 4));
    WriteFile(dir_.File("spec.toml"), kSpec);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    RunResult init = RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                               " --target label --id id --group site --time day");
    ASSERT_EQ(init.exit_code, 0) << init.err;
    RunResult seal = RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                               " --seed 1 --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
    RunResult fit =
        RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("spec.toml") + " --name m1");
    ASSERT_EQ(fit.exit_code, 0) << fit.err;
    ASSERT_EQ(Models().exit_code, 0);
  }

  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  RunResult Models() { return RunUnseen("models --ledger " + Q("l")); }

  // Runs SQL on the ledger with the append-only triggers lifted, then puts
  // them back (as tests/cli/tamper_test.cc does).
  void Tamper(const std::string& sql) { testing::TamperLedger(dir_.File("l"), sql); }

  // Appends an eval entry through the library: the chain stays intact.
  void Append(const std::string& fields) {
    auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadWrite);
    ASSERT_OK(ledger);
    ASSERT_OK((*ledger)->Begin());
    ASSERT_OK((*ledger)->Append("eval", "forger", fields));
    ASSERT_OK((*ledger)->Commit());
  }

  TempDir dir_;
};

TEST_F(EntriesTamperTest, FitBodyRewrittenWithAWrongTypeIsAnIntegrityFailure) {
  // `models` reads the bodies without walking the chain: the decoder is what
  // catches the rewrite (`verify` would name the broken hash).
  Tamper(
      "UPDATE entries SET body = replace(body, '\"tainted\":false', '\"tainted\":\"no\"') "
      "WHERE kind = 'fit'");
  RunResult models = Models();
  EXPECT_EQ(models.exit_code, 3) << models.out << models.err;
  EXPECT_NE(models.err.find("entry 4 (fit): 'tainted' should be true or false"), std::string::npos)
      << models.err;
  RunResult verify = RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k"));
  EXPECT_EQ(verify.exit_code, 3) << verify.err;
}

TEST_F(EntriesTamperTest, FitAppendedWithABadDigestIsAnIntegrityFailureDespiteTheChain) {
  {
    auto ledger = Ledger::Open(dir_.File("l"), LedgerMode::kReadWrite);
    ASSERT_OK(ledger);
    ASSERT_OK((*ledger)->Begin());
    ASSERT_OK((*ledger)->Append("fit", "forger", R"({"model":"m2","model_digest":"00ff"})"));
    ASSERT_OK((*ledger)->Commit());
  }
  RunResult models = Models();
  EXPECT_EQ(models.exit_code, 3) << models.out << models.err;
  EXPECT_NE(models.err.find("entry 5 (fit): 'model_digest' is not a SHA-256 digest"),
            std::string::npos)
      << models.err;
  RunResult history = RunUnseen("history --ledger " + Q("l"));
  EXPECT_EQ(history.exit_code, 3) << history.out << history.err;
}


TEST_F(EntriesTamperTest, EvalAnswersThatDoNotDecodeStopEveryReaderWithExitThree) {
  RunResult first = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") + " m1");
  ASSERT_EQ(first.exit_code, 0) << first.err;
  // An eval entry appended with an intact chain whose answer has a count as text: eval
  // (repeats, adaptivity), status (queries used) and models (answers per model) all read it;
  // none may throw or go on.
  Append(R"({"queries_spent":1,"answers":[{"model":"m1","kind":"frozen","n":"many"}]})");
  for (const std::string& cmd :
       {"eval --ledger " + Q("l") + " --key-file " + Q("k") + " m1", "status --ledger " + Q("l"),
        "models --ledger " + Q("l")}) {
    RunResult r = RunUnseen(cmd);
    EXPECT_EQ(r.exit_code, 3) << cmd << "\n" << r.out << r.err;
    EXPECT_NE(r.err.find("entry 6 (eval)"), std::string::npos) << cmd << "\n" << r.err;
  }
}

TEST_F(EntriesTamperTest, ARevealWithoutItsValueCountCannotBeWeighed) {
  ASSERT_EQ(RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("k") + " m1").exit_code, 0);
  // The same answer again, as a fresh reveal that forgot how many values it could show:
  // adaptivity cannot be counted from it, so eval stops rather than guess.
  nlohmann::json history =
      nlohmann::json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
  nlohmann::json body = history.back()["body"];
  for (const char* key : {"seq", "kind", "time", "actor", "tool", "blobs"}) body.erase(key);
  body["answers"][0].erase("code_length");
  Append(body.dump());
  RunResult r = RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("k") + " m1");
  EXPECT_EQ(r.exit_code, 3) << r.out << r.err;
  EXPECT_NE(r.err.find("entry 6 (eval): answer 0 is a reveal without 'code_length'"),
            std::string::npos)
      << r.err;
}
}  // namespace
}  // namespace unseen
