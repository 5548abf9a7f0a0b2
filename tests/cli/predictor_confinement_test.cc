// External predictors run confined, through the binary. Each test is an
// attack by a modeller who writes the predictor: it tries to read the key,
// the ledger, the source or our command line, to write what it was shown
// where it can be found later, to reach the network, or to outlive the run.
// Where the kernel enforces a protection the attempt is denied; where it
// cannot, eval's output and the ledger say so (and the test checks that
// instead). Probes exit non-zero when they succeed, so a leak is a failed
// predictor, recorded as an `exposure` entry.
#include <gtest/gtest.h>
#include <netinet/in.h>
#include <signal.h>
#include <sys/socket.h>
#include <unistd.h>

#include <chrono>
#include <cstdlib>
#include <filesystem>
#include <map>
#include <nlohmann/json.hpp>
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

// Answers "yes" for every token: what a predictor prints once its probe failed.
constexpr const char* kAnswer =
    "awk -F, 'NR==1{print \"token,prediction\"; next} {print $1\",yes\"}'\n";

class PredictorConfinementTest : public ::testing::Test {
 protected:
  void SetUp() override {
    WriteFile(dir_.File("d.csv"), testing::SampleCsv(400, 20, 6));
    ASSERT_EQ(RunUnseen("keygen --out " + Q("k")).exit_code, 0);
    ASSERT_EQ(RunUnseen("init --ledger " + Q("l") + " --data " + Q("d.csv") +
                        " --target label --id id --group site --time day")
                  .exit_code,
              0);
    RunResult seal =
        RunUnseen("seal --ledger " + Q("l") + " --key-file " + Q("k") +
                  " --strategy random --fraction 0.25 --seed 1 --dev-out " + Q("dev.csv"));
    ASSERT_EQ(seal.exit_code, 0) << seal.err;
    // Private directories are made here, so that the test can see that they are removed.
    std::filesystem::create_directory(dir_.File("tmp"));
    const char* old = std::getenv("TMPDIR");
    if (old != nullptr) old_tmpdir_ = old;
    setenv("TMPDIR", dir_.File("tmp").c_str(), 1);
  }
  void TearDown() override {
    if (old_tmpdir_.empty()) {
      unsetenv("TMPDIR");
    } else {
      setenv("TMPDIR", old_tmpdir_.c_str(), 1);
    }
  }
  std::string Q(const std::string& name) { return ShellQuote(dir_.File(name)); }
  // Runs script `name` as the predictor `name` (its own identity, so its own question).
  RunResult Predictor(const std::string& name, const std::string& script,
                      const std::string& extra = "") {
    WriteFile(dir_.File(name + ".sh"), script);
    return RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") + " --name " +
                     name + " --command " + ShellQuote("sh " + dir_.File(name + ".sh")) + " " +
                     extra);
  }
  json History() { return json::parse(RunUnseen("history --json --ledger " + Q("l")).out); }
  // The protections of the last eval or exposure entry, name -> enforced.
  std::map<std::string, bool> Recorded() {
    json last = History().back();
    json c = last["kind"] == "eval" ? last["body"]["external"]["confinement"]
                                    : last["body"]["confinement"];
    return c.get<std::map<std::string, bool>>();
  }
  // Whether `name` was enforced, by eval's own output (a successful run) and its entry.
  bool Enforced(const RunResult& r, const std::string& name) {
    const bool recorded = Recorded().at(name);
    if (r.exit_code == 0) {
      for (const json& p : json::parse(r.out)[0]["confinement"]) {
        if (p["name"] == name) EXPECT_EQ(p["enforced"].get<bool>(), recorded);
      }
    }
    return recorded;
  }
  // A probe that succeeds is a leak unless the protection is reported missing.
  void ExpectDeniedOrReported(const RunResult& r, const std::string& protection) {
    if (Enforced(r, protection)) {
      EXPECT_EQ(r.exit_code, 0) << "the probe got through " << protection << ": " << r.out << r.err;
    } else {
      EXPECT_EQ(r.exit_code, 2) << r.out;
      EXPECT_NE(r.err.find("not confined by: "), std::string::npos) << r.err;
      EXPECT_NE(r.err.find(protection), std::string::npos) << r.err;
      EXPECT_EQ(History().back()["kind"], "exposure");
    }
  }
  bool TmpIsEmpty() { return std::filesystem::is_empty(dir_.File("tmp")); }

  TempDir dir_;
  std::string old_tmpdir_;
};

TEST_F(PredictorConfinementTest, ReportsEveryProtectionInItsOutputAndItsEntry) {
  RunResult r = Predictor("plain", kAnswer);
  ASSERT_EQ(r.exit_code, 0) << r.err;
  json c = json::parse(r.out)[0]["confinement"];
  std::map<std::string, bool> recorded = Recorded();
  ASSERT_EQ(c.size(), 7u) << c;
  for (const json& p : c) {
    EXPECT_EQ(recorded.at(p["name"]), p["enforced"].get<bool>()) << p;
    EXPECT_FALSE(p["how"].get<std::string>().empty());
    if (!p["enforced"].get<bool>()) {
      EXPECT_EQ(p["how"].get<std::string>().rfind("not enforced: ", 0), 0u) << p;
    }
  }
  for (const char* always : {"environment", "descriptors", "directory"}) {
    EXPECT_TRUE(recorded.at(always)) << always;
  }
  // The text form names each protection too, with a warning for what did not hold.
  // (another script: the same one would be a repeat, answered without running it)
  WriteFile(dir_.File("plain2.sh"), kAnswer);
  RunResult text =
      RunUnseen("eval --ledger " + Q("l") + " --key-file " + Q("k") + " --name plain2 --command " +
                ShellQuote("sh " + dir_.File("plain2.sh")));
  ASSERT_EQ(text.exit_code, 0) << text.err;
  for (const auto& [name, enforced] : recorded) {
    if (!enforced) continue;
    EXPECT_NE(text.out.find("confined: " + name + ": "), std::string::npos) << text.out;
  }
  EXPECT_TRUE(TmpIsEmpty());
}

TEST_F(PredictorConfinementTest, StartsInAnEmptyPrivateDirectoryWithoutOurVariablesOrFiles) {
  setenv("UNSEEN_PASSPHRASE", "never-shown-to-predictors", 1);
  RunResult r = Predictor(
      "home",
      "env | grep -q UNSEEN_ && exit 1\n"
      "env | grep -q never-shown && exit 1\n"
      "[ \"$HOME\" = \"$(pwd)\" ] && [ \"$TMPDIR\" = \"$(pwd)\" ] || exit 1\n"
      "case \"$(pwd)\" in " +
          dir_.File("tmp") +
          "/unseen-predictor-*) ;; *) exit 1;; esac\n"
          "[ -z \"$(ls -A)\" ] || exit 1\n"
          // Any descriptor beyond stdin, stdout and stderr: the ledger's database among them.
          "perl -e 'for my $fd (3..1023) { exit 1 if open(my $h, \"<&=\", $fd) }' || exit 1\n"
          "echo kept > mine.txt && [ \"$(cat mine.txt)\" = kept ] || exit 1\n" +
          std::string(kAnswer));
  unsetenv("UNSEEN_PASSPHRASE");
  EXPECT_EQ(r.exit_code, 0) << r.out << r.err;
  EXPECT_TRUE(TmpIsEmpty());  // removed afterwards, with what it wrote there
}

TEST_F(PredictorConfinementTest, CannotReadTheKeyFile) {
  RunResult r = Predictor("key", "cat " + Q("k") + " >/dev/null 2>&1 && exit 1\n" + kAnswer);
  ExpectDeniedOrReported(r, "filesystem");
}

TEST_F(PredictorConfinementTest, CannotFindTheKeyPathInAnyCommandLine) {
  // /proc/$PPID/cmdline names --key-file; so may any other process's.
  RunResult r = Predictor("cmdline",
                          "cat /proc/$PPID/cmdline >/dev/null 2>&1 && exit 1\n"
                          "p=$PPID\n"
                          "while [ \"$p\" -gt 1 ] 2>/dev/null; do\n"
                          "  tr '\\0' ' ' < /proc/$p/cmdline 2>/dev/null | grep -q -F " +
                              Q("k") +
                              " && exit 1\n"
                              "  p=$(awk '{print $4}' /proc/$p/stat 2>/dev/null)\n"
                              "done\n" +
                              kAnswer);
  ExpectDeniedOrReported(r, "filesystem");
}

TEST_F(PredictorConfinementTest, CannotReadTheLedgerOrTheSource) {
  RunResult ledger =
      Predictor("ledger", "cat " + Q("l") + " >/dev/null 2>&1 && exit 1\n" + kAnswer);
  ExpectDeniedOrReported(ledger, "filesystem");
  RunResult source =
      Predictor("source", "cat " + Q("d.csv") + " >/dev/null 2>&1 && exit 1\n" + kAnswer);
  ExpectDeniedOrReported(source, "filesystem");
  // The key named on its command line is still not readable.
  WriteFile(dir_.File("named.sh"), std::string("cat \"$1\" >/dev/null 2>&1 && exit 1\n") + kAnswer);
  RunResult named = RunUnseen("eval --json --ledger " + Q("l") + " --key-file " + Q("k") +
                              " --name named --command " +
                              ShellQuote("sh " + dir_.File("named.sh") + " " + dir_.File("k")));
  ExpectDeniedOrReported(named, "filesystem");
}

TEST_F(PredictorConfinementTest, CanReadItsAttachedFilesAndSystemProgramsOnly) {
  WriteFile(dir_.File("weights.txt"), "0.5\n");
  RunResult r =
      Predictor("weights", "[ \"$(cat " + Q("weights.txt") + ")\" = 0.5 ] || exit 1\n" + kAnswer,
                "--attach " + Q("weights.txt"));
  EXPECT_EQ(r.exit_code, 0) << r.out << r.err;
}

TEST_F(PredictorConfinementTest, CannotWriteOutsideItsDirectory) {
  RunResult r =
      Predictor("write", "echo x > " + Q("outside.txt") + " 2>/dev/null && exit 1\n" + kAnswer);
  ExpectDeniedOrReported(r, "filesystem");
  if (Recorded().at("filesystem")) {
    EXPECT_FALSE(std::filesystem::exists(dir_.File("outside.txt")));
  }
}

TEST_F(PredictorConfinementTest, CannotOpenTcpOrUdpSockets) {
  // A listener of ours on loopback: the predictor must not reach it.
  int listener = socket(AF_INET, SOCK_STREAM, 0);
  ASSERT_GE(listener, 0);
  sockaddr_in addr{};
  addr.sin_family = AF_INET;
  addr.sin_addr.s_addr = htonl(INADDR_LOOPBACK);
  ASSERT_EQ(bind(listener, reinterpret_cast<sockaddr*>(&addr), sizeof addr), 0);
  ASSERT_EQ(listen(listener, 4), 0);
  socklen_t len = sizeof addr;
  ASSERT_EQ(getsockname(listener, reinterpret_cast<sockaddr*>(&addr), &len), 0);
  const std::string port = std::to_string(ntohs(addr.sin_port));
  RunResult tcp = Predictor("tcp",
                            "perl -MIO::Socket::INET -e 'exit(IO::Socket::INET->new(PeerAddr => "
                            "\"127.0.0.1:" +
                                port + "\", Proto => \"tcp\") ? 0 : 1)' && exit 1\n" + kAnswer);
  ExpectDeniedOrReported(tcp, "network");
  RunResult udp = Predictor(
      "udp",
      "perl -e 'use Socket; exit(socket(my $s, PF_INET, SOCK_DGRAM, 0) ? 0 : 1)' && exit 1\n"
      "perl -e 'use Socket; exit(socket(my $s, PF_INET6, SOCK_DGRAM, 0) ? 0 : 1)' && exit 1\n" +
          std::string(kAnswer));
  ExpectDeniedOrReported(udp, "network");
  close(listener);
}

TEST_F(PredictorConfinementTest, FeaturesWrittenToDiskDoNotOutliveAFailedRun) {
  const std::string before = ReadFile(dir_.File("l"));
  RunResult r = Predictor(
      "leak", "cat > mine.csv; cat mine.csv > " + Q("leak.csv") + " 2>/dev/null; exit 3\n");
  EXPECT_EQ(r.exit_code, 2);
  const std::string message = r.err;
  EXPECT_EQ(message.find("nothing was revealed"), std::string::npos) << message;
  EXPECT_NE(message.find("exited with a non-zero status"), std::string::npos) << message;
  EXPECT_NE(message.find("received the features of 100 holdout rows"), std::string::npos)
      << message;
  json last = History().back();
  ASSERT_EQ(last["kind"], "exposure") << last;
  EXPECT_EQ(last["body"]["model"], "leak");
  EXPECT_EQ(last["body"]["model_kind"], "external");
  EXPECT_EQ(last["body"]["holdout_rows_sent"], 100);
  EXPECT_NE(message.find("exposure entry " + std::to_string(last["seq"].get<int>())),
            std::string::npos);
  EXPECT_NE(ReadFile(dir_.File("l")), before);
  EXPECT_TRUE(TmpIsEmpty());  // its private copy went with its directory
  if (Recorded().at("filesystem")) {
    EXPECT_FALSE(std::filesystem::exists(dir_.File("leak.csv")));
  }
  EXPECT_EQ(RunUnseen("verify --ledger " + Q("l") + " --key-file " + Q("k")).exit_code, 0);
}

// Whether a process whose command line holds `marker` is still running; kills it if so
// (it was started by this test's predictor).
bool StillRunning(const std::string& marker) {
  bool found = false;
  for (const auto& e : std::filesystem::directory_iterator("/proc")) {
    const std::string name = e.path().filename();
    if (name.find_first_not_of("0123456789") != std::string::npos) continue;
    std::string cmdline = ReadFile(e.path().string() + "/cmdline");
    for (char& c : cmdline) c = c == '\0' ? ' ' : c;
    if (cmdline.find(marker) != std::string::npos && cmdline.find("sleep") == 0) {
      found = true;
      kill(std::stoi(name), SIGKILL);
    }
  }
  return found;
}

double Seconds(std::chrono::steady_clock::time_point since) {
  return std::chrono::duration<double>(std::chrono::steady_clock::now() - since).count();
}

TEST_F(PredictorConfinementTest, TimeoutHoldsWhenThePredictorClosesItsOutput) {
  auto start = std::chrono::steady_clock::now();
  RunResult r = Predictor("closed", "cat >/dev/null; exec >&-; sleep 30.25\n", "--timeout 1");
  EXPECT_LT(Seconds(start), 15.0);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_NE(r.err.find("did not finish within 1 s"), std::string::npos) << r.err;
  EXPECT_EQ(History().back()["kind"], "exposure");
  EXPECT_FALSE(StillRunning("30.25"));
}

TEST_F(PredictorConfinementTest, TimeoutKillsTheWholeProcessGroup) {
  auto start = std::chrono::steady_clock::now();
  RunResult r = Predictor("forks", "cat >/dev/null; sleep 31.25 & sleep 30.5\n", "--timeout 1");
  EXPECT_LT(Seconds(start), 15.0);
  EXPECT_EQ(r.exit_code, 2);
  EXPECT_FALSE(StillRunning("31.25"));
  EXPECT_FALSE(StillRunning("30.5"));
}

TEST_F(PredictorConfinementTest, AGrandchildDoesNotOutliveAnAnsweringPredictor) {
  auto start = std::chrono::steady_clock::now();
  RunResult r = Predictor("lingers", std::string("(sleep 32.25 &)\n") + kAnswer);
  EXPECT_EQ(r.exit_code, 0) << r.out << r.err;
  EXPECT_LT(Seconds(start), 15.0);
  EXPECT_FALSE(StillRunning("32.25"));
}

TEST_F(PredictorConfinementTest, AGrandchildCannotLeaveTheProcessGroup) {
  RunResult r = Predictor(
      "escapes", std::string("setsid sleep 33.25 >/dev/null 2>&1 &\n") + "sleep 0.2\n" + kAnswer);
  EXPECT_EQ(r.exit_code, 0) << r.out << r.err;
  const bool escaped = StillRunning("33.25");
  if (Recorded().at("process-group")) {
    EXPECT_FALSE(escaped);
  } else {
    json c = json::parse(r.out)[0]["confinement"];
    for (const json& p : c) {
      if (p["name"] == "process-group") EXPECT_FALSE(p["enforced"].get<bool>());
    }
  }
}

}  // namespace
}  // namespace unseen
