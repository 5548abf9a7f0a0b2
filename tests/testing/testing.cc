#include "tests/testing/testing.h"

#include <stdlib.h>
#include <sys/wait.h>
#include <unistd.h>

#include <cstdio>
#include <filesystem>
#include <fstream>
#include <sstream>
#include <stdexcept>

namespace unseen::testing {

TempDir::TempDir() {
  const char* base = getenv("TMPDIR");
  std::string tmpl = std::string(base && *base ? base : "/tmp") + "/unseen-test-XXXXXX";
  if (mkdtemp(tmpl.data()) == nullptr) throw std::runtime_error("mkdtemp failed");
  path_ = tmpl;
}

TempDir::~TempDir() {
  std::error_code ec;
  std::filesystem::remove_all(path_, ec);
}

void WriteFile(const std::string& path, const std::string& content) {
  std::ofstream f(path, std::ios::binary | std::ios::trunc);
  f.write(content.data(), static_cast<std::streamsize>(content.size()));
  if (!f) throw std::runtime_error("cannot write " + path);
}

std::string ReadFile(const std::string& path) {
  std::ifstream f(path, std::ios::binary);
  std::ostringstream ss;
  ss << f.rdbuf();
  return ss.str();
}

std::string ShellQuote(const std::string& word) {
  std::string q = "'";
  for (char c : word) {
    if (c == '\'') q += "'\\''";
    else q += c;
  }
  return q + "'";
}

std::string TestDataDir() { return UNSEEN_TEST_DATA_DIR; }

RunResult RunUnseen(const std::string& args, const std::string& stdin_text) {
  TempDir io;
  WriteFile(io.File("in"), stdin_text);
  std::string cmd = ShellQuote(UNSEEN_BINARY) + " " + args + " <" + ShellQuote(io.File("in")) +
                    " >" + ShellQuote(io.File("out")) + " 2>" + ShellQuote(io.File("err"));
  int raw = std::system(cmd.c_str());
  RunResult r;
  r.exit_code = WIFEXITED(raw) ? WEXITSTATUS(raw) : -1;
  r.out = ReadFile(io.File("out"));
  r.err = ReadFile(io.File("err"));
  return r;
}

}  // namespace unseen::testing
