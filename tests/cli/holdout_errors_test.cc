// A frozen model that fails on the holdout, through the binary: the message
// names the model, the column and the kind of problem, never a holdout
// value or row number, and the failure is recorded in the ledger as an
// `exposure` entry (the eval itself spends nothing). The holdout is the
// latest rows (a time split), so each test knows which values only the
// holdout holds and looks for them in everything the command printed.
#include <gtest/gtest.h>

#include <nlohmann/json.hpp>
#include <string>

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

class HoldoutErrorTest : public ::testing::Test {
 protected:
  // 40 rows by day; the last 10 days are the holdout. `row(i, holdout)` gives the rest of row i.
  template <typename Row>
  void Seal(const std::string& header, const std::string& target, Row row) {
    std::string csv = "id,day," + header + "\n";
    for (int i = 0; i < 40; ++i) {
      csv += "r" + std::to_string(i) + "," + std::to_string(i + 1) + "," + row(i, i >= 30) + "\n";
    }
    WriteFile(dir_.File("d.csv"), csv);
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    RunResult init = RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") + " --target " +
                               target + " --id id --time day");
    ASSERT_EQ(init.exit_code, 0) << init.err;
    RunResult seal =
        RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                  " --strategy time --fraction 0.25 --seed 1 --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
  }
  void Fit(const std::string& spec) {
    WriteFile(dir_.File("m.toml"), spec);
    RunResult fit = RunUnseen("fit --ledger " + Q("l") + " --spec " + Q("m.toml") + " --name m");
    ASSERT_EQ(fit.exit_code, 0) << fit.err;
  }
  // Evaluates model m, which must fail: exit 2, `says` in the message, no `secret` anywhere
  // in the output or in the new entry, no row number; one exposure entry, no query spent.
  void ExpectValueFreeFailure(const std::string& says, const std::string& secret) {
    const std::string before = ReadFile(dir_.File("l"));
    RunResult r = RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("k") + " m");
    EXPECT_EQ(r.exit_code, 2) << r.out << r.err;
    EXPECT_NE(r.err.find("model 'm': cannot be applied to the holdout: " + says), std::string::npos)
        << r.err;
    EXPECT_EQ((r.out + r.err).find(secret), std::string::npos) << r.out << r.err;
    EXPECT_EQ(r.err.find(" row "), std::string::npos) << r.err;
    EXPECT_NE(r.err.find("recorded as exposure entry"), std::string::npos) << r.err;
    EXPECT_NE(ReadFile(dir_.File("l")), before);
    json history = json::parse(RunUnseen("history --json --ledger " + Q("l")).out);
    const json& last = history.back();
    ASSERT_EQ(last["kind"], "exposure") << last;
    EXPECT_EQ(last["body"]["model"], "m");
    EXPECT_EQ(last["body"]["model_kind"], "frozen");
    EXPECT_EQ(last["body"]["holdout_rows_sent"], 0);  // nothing left the process
    EXPECT_EQ(last.dump().find(secret), std::string::npos) << last;
    json status = json::parse(RunUnseen("status --json --ledger " + Q("l")).out);
    EXPECT_EQ(status["holdout_queries"], 0);
    EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
  }
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  TempDir dir_;
};

TEST_F(HoldoutErrorTest, UnknownCategoryNamesNeitherTheValueNorTheRow) {
  // Only holdout rows hold the categories "violet-<i>".
  Seal("a,colour,label", "label", [](int i, bool holdout) {
    std::string colour = holdout ? "violet-" + std::to_string(i) : (i % 2 ? "red" : "blue");
    return std::to_string(i % 7) + "," + colour + "," + (i % 3 ? "yes" : "no");
  });
  Fit("[[transform]]\nkind = \"onehot\"\nunknown = \"error\"\n[learner]\nkind = \"logistic\"\n");
  ExpectValueFreeFailure("column 'colour' holds a category not seen when the model was fitted",
                         "violet");
}

TEST_F(HoldoutErrorTest, MissingValueNamesTheColumnOnly) {
  // Holdout rows miss `a`; the model has no impute step. Their `b` values are telltales too.
  Seal("a,b,label", "label", [](int i, bool holdout) {
    return (holdout ? std::string() : std::to_string(i % 7)) + "," +
           (holdout ? "8765.4" + std::to_string(i) : std::to_string(i % 5)) + "," +
           (i % 3 ? "yes" : "no");
  });
  Fit("[learner]\nkind = \"logistic\"\n");
  ExpectValueFreeFailure("column 'a' holds a missing value", "8765.4");
}

TEST_F(HoldoutErrorTest, NonFinitePredictionIsRecordedWithoutTheValue) {
  // y = 10 a on dev rows; a holdout row's a = 1e308 makes the prediction overflow.
  Seal("a,y", "y", [](int i, bool holdout) {
    if (holdout && i == 35) return std::string("1e308,1");
    return std::to_string(i) + "," + std::to_string(10 * i);
  });
  Fit("[learner]\nkind = \"linear\"\n");
  ExpectValueFreeFailure("it predicted a value that is not finite", "1e+308");
}

}  // namespace
}  // namespace unseen
