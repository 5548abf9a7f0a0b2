// Test support shared by every suite: temporary directories, Status matchers,
// running the unseen binary, reading files.
#ifndef UNSEEN_TESTS_TESTING_TESTING_H_
#define UNSEEN_TESTS_TESTING_TESTING_H_

#include <gtest/gtest.h>

#include <string>

#include "storage/status.h"

#define ASSERT_OK(expr)                                 \
  do {                                                  \
    const auto& unseen_s_ = (expr);                     \
    ASSERT_TRUE(unseen_s_.ok()) << ::unseen::testing::StatusText(unseen_s_); \
  } while (0)
#define EXPECT_OK(expr)                                 \
  do {                                                  \
    const auto& unseen_s_ = (expr);                     \
    EXPECT_TRUE(unseen_s_.ok()) << ::unseen::testing::StatusText(unseen_s_); \
  } while (0)

namespace unseen::testing {

inline std::string StatusText(const Status& s) { return s.ToString(); }
template <typename T>
std::string StatusText(const Result<T>& r) { return r.status().ToString(); }

// A fresh directory under $TMPDIR, removed when the object dies.
class TempDir {
 public:
  TempDir();
  ~TempDir();
  TempDir(const TempDir&) = delete;
  TempDir& operator=(const TempDir&) = delete;
  const std::string& path() const { return path_; }
  // path() + "/" + name
  std::string File(const std::string& name) const { return path_ + "/" + name; }

 private:
  std::string path_;
};

void WriteFile(const std::string& path, const std::string& content);
std::string ReadFile(const std::string& path);

// What a run of the unseen binary produced.
struct RunResult {
  int exit_code = -1;
  std::string out;
  std::string err;
};
// Runs the unseen binary with `args` (a shell-quoted string) and optional stdin text.
RunResult RunUnseen(const std::string& args, const std::string& stdin_text = "");

// Quotes one word for /bin/sh.
std::string ShellQuote(const std::string& word);

// The directory of checked-in test data.
std::string TestDataDir();

}  // namespace unseen::testing

#endif  // UNSEEN_TESTS_TESTING_TESTING_H_
