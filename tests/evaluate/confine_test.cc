// PredictorSandbox, unit by unit: a child enters the sandbox the way an
// external predictor does and tries to get past each protection. Where the
// kernel does not offer a protection, the report must say so instead.
#include "harness/evaluate/confine.h"

#include <fcntl.h>
#include <gtest/gtest.h>
#include <sys/stat.h>
#include <sys/wait.h>
#include <unistd.h>

#include <filesystem>
#include <map>
#include <string>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

using testing::ReadFile;
using testing::TempDir;
using testing::WriteFile;

struct ChildRun {
  int exit_code = -1;
  uint32_t applied = 0;
};

// Runs `command` under /bin/sh -c inside the sandbox, as external.cc does.
ChildRun RunIn(const PredictorSandbox& sb, const std::string& command) {
  int report[2];
  EXPECT_EQ(pipe2(report, O_CLOEXEC), 0);
  pid_t pid = fork();
  if (pid == 0) {
    setpgid(0, 0);
    int devnull = open("/dev/null", O_RDWR);
    dup2(devnull, 0);
    dup2(devnull, 2);
    if (!sb.ApplyInChild(report[1])) _exit(126);
    execle("/bin/sh", "sh", "-c", command.c_str(), static_cast<char*>(nullptr), sb.envp());
    _exit(127);
  }
  close(report[1]);
  ChildRun r;
  EXPECT_EQ(read(report[0], &r.applied, sizeof r.applied), static_cast<ssize_t>(sizeof r.applied));
  close(report[0]);
  int status = 0;
  waitpid(pid, &status, 0);
  r.exit_code = WIFEXITED(status) ? WEXITSTATUS(status) : -1;
  return r;
}

std::map<std::string, Protection> ByName(const std::vector<Protection>& ps) {
  std::map<std::string, Protection> out;
  for (const Protection& p : ps) out[p.name] = p;
  return out;
}

class PredictorSandboxTest : public ::testing::Test {
 protected:
  void SetUp() override {
    WriteFile(dir_.File("key"), "0123456789abcdef\n");
    WriteFile(dir_.File("mine.txt"), "weights\n");
    options_.keep_out = {dir_.File("key")};
    options_.readable = {dir_.File("mine.txt"), dir_.File("key")};
  }
  std::unique_ptr<PredictorSandbox> Prepare() {
    auto sb = PredictorSandbox::Prepare(options_);
    EXPECT_TRUE(sb.ok()) << sb.status().ToString();
    return std::move(*sb);
  }
  TempDir dir_;
  SandboxOptions options_;
};

TEST_F(PredictorSandboxTest, EveryRunGetsAFreshEmptyDirectoryRemovedAfterwards) {
  auto a = Prepare();
  auto b = Prepare();
  const std::string dir = a->directory();
  EXPECT_NE(dir, b->directory());
  EXPECT_TRUE(std::filesystem::is_empty(dir));
  struct stat s;
  ASSERT_EQ(stat(dir.c_str(), &s), 0);
  EXPECT_EQ(s.st_mode & 0777, 0700u);
  ChildRun r = RunIn(*a,
                     "[ \"$(pwd)\" = \"$HOME\" ] && [ \"$TMPDIR\" = \"$HOME\" ] && "
                     "mkdir -p d/e && echo x > d/e/f && chmod 000 d/e d");
  EXPECT_EQ(r.exit_code, 0);
  EXPECT_TRUE(r.applied & kAppliedDirectory);
  a.reset();
  EXPECT_FALSE(std::filesystem::exists(dir));  // even what it locked away
}

TEST_F(PredictorSandboxTest, EnvironmentHasNoUnseenVariable) {
  setenv("UNSEEN_PASSPHRASE", "hunter2", 1);
  auto sb = Prepare();
  unsetenv("UNSEEN_PASSPHRASE");
  for (char* const* e = sb->envp(); *e != nullptr; ++e) {
    EXPECT_NE(std::string(*e).rfind("UNSEEN_", 0), 0u) << *e;
  }
  EXPECT_EQ(RunIn(*sb, "env | grep -q hunter2 && exit 1; exit 0").exit_code, 0);
}

TEST_F(PredictorSandboxTest, RelativeFilesAreLinkedIntoTheDirectory) {
  const std::string cwd = std::filesystem::current_path();
  std::filesystem::current_path(dir_.path());
  options_.readable = {"mine.txt"};
  auto sb = Prepare();
  std::filesystem::current_path(cwd);
  EXPECT_EQ(RunIn(*sb, "[ \"$(cat mine.txt)\" = weights ]").exit_code, 0);
}

TEST_F(PredictorSandboxTest, FilesystemDeniedWhereLandlockHolds) {
  auto sb = Prepare();
  // Its own file is readable; the key, though named readable too, is not; nor /proc; nor
  // anything outside its directory writable.
  ChildRun own = RunIn(*sb, "cat " + dir_.File("mine.txt") + " >/dev/null");
  EXPECT_EQ(own.exit_code, 0);
  ChildRun key = RunIn(*sb, "cat " + dir_.File("key") + " >/dev/null 2>&1");
  ChildRun proc = RunIn(*sb, "cat /proc/$PPID/cmdline >/dev/null 2>&1");
  ChildRun write = RunIn(*sb, "echo x > " + dir_.File("out") + " 2>/dev/null");
  auto fs = ByName(sb->Report(key.applied))["filesystem"];
  if (key.applied & kAppliedLandlock) {
    EXPECT_TRUE(fs.enforced);
    EXPECT_NE(key.exit_code, 0);
    EXPECT_NE(proc.exit_code, 0);
    EXPECT_NE(write.exit_code, 0);
    EXPECT_FALSE(std::filesystem::exists(dir_.File("out")));
  } else {
    EXPECT_FALSE(fs.enforced);
    EXPECT_EQ(fs.how.rfind("not enforced: ", 0), 0u) << fs.how;
  }
}

TEST_F(PredictorSandboxTest, AKeptOutFileInsideASystemDirectoryStaysOutOfReach) {
  // Landlock only grants, so /etc is granted entry by entry around the kept-out file.
  if (!std::filesystem::exists("/etc/hostname")) GTEST_SKIP() << "no /etc/hostname here";
  options_.keep_out = {"/etc/hostname"};
  auto sb = Prepare();
  ChildRun hostname = RunIn(*sb, "cat /etc/hostname >/dev/null 2>&1");
  ChildRun passwd = RunIn(*sb, "cat /etc/passwd >/dev/null");
  EXPECT_EQ(passwd.exit_code, 0);
  if (hostname.applied & kAppliedLandlock) {
    EXPECT_NE(hostname.exit_code, 0);
  }
}

TEST_F(PredictorSandboxTest, AKeptOutFileIsNotReachableThroughALinkedSystemDirectory) {
  // On a merged /usr, /bin is a link to /usr/bin: granting /bin must not grant /usr/bin whole.
  std::error_code ec;
  if (std::filesystem::canonical("/bin/tac", ec) != "/usr/bin/tac") {
    GTEST_SKIP() << "/bin is not a link to /usr/bin here";
  }
  options_.keep_out = {"/usr/bin/tac"};
  auto sb = Prepare();
  ChildRun via_link = RunIn(*sb, "cat /bin/tac >/dev/null 2>&1");
  ChildRun other = RunIn(*sb, "cat /bin/cat >/dev/null");
  EXPECT_EQ(other.exit_code, 0);
  if (via_link.applied & kAppliedLandlock) {
    EXPECT_NE(via_link.exit_code, 0);
  }
}

TEST_F(PredictorSandboxTest, NoSocketsAndNoLeavingTheGroupWhereSeccompHolds) {
  auto sb = Prepare();
  ChildRun udp =
      RunIn(*sb, "perl -e 'use Socket; exit(socket(my $s, PF_INET, SOCK_DGRAM, 0) ? 0 : 1)'");
  ChildRun unix_socket =
      RunIn(*sb, "perl -e 'use Socket; exit(socket(my $s, PF_UNIX, SOCK_STREAM, 0) ? 0 : 1)'");
  ChildRun setsid = RunIn(*sb, "setsid true 2>/dev/null");
  auto report = ByName(sb->Report(udp.applied));
  if (udp.applied & kAppliedSeccomp) {
    EXPECT_NE(udp.exit_code, 0);
    EXPECT_NE(unix_socket.exit_code, 0);
    EXPECT_NE(setsid.exit_code, 0);
    EXPECT_TRUE(report["network"].enforced);
    EXPECT_TRUE(report["process-group"].enforced);
  } else {
    EXPECT_FALSE(report["process-group"].enforced);
    EXPECT_EQ(report["network"].enforced, (udp.applied & kAppliedNetNamespace) != 0);
  }
}

TEST_F(PredictorSandboxTest, ReportNamesEveryProtectionOnce) {
  auto sb = Prepare();
  auto report = sb->Report(RunIn(*sb, "true").applied);
  std::map<std::string, int> seen;
  for (const Protection& p : report) ++seen[p.name];
  for (const char* name : {"environment", "descriptors", "directory", "process-group",
                           "capabilities", "filesystem", "network"}) {
    EXPECT_EQ(seen[name], 1) << name;
  }
  EXPECT_EQ(report.size(), 7u);
  // With nothing applied (a child that never reached exec), only what the parent did holds.
  for (const Protection& p : sb->Report(0)) {
    EXPECT_EQ(p.enforced, p.name == "environment" || p.name == "descriptors") << p.name;
  }
}

}  // namespace
}  // namespace unseen
