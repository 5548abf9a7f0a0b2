#include "harness/cli/common.h"

#include <pwd.h>
#include <termios.h>
#include <unistd.h>

#include <cstdio>
#include <cstdlib>
#include <iostream>

#include <fmt/core.h>

namespace unseen::cli {

ExitCode ExitCodeFor(const Status& s) {
  switch (s.code()) {
    case StatusCode::kOk: return ExitCode::kOk;
    case StatusCode::kInvalidArgument:
    case StatusCode::kNotFound:
    case StatusCode::kAlreadyExists:
    case StatusCode::kWrongKey: return ExitCode::kBadInput;
    case StatusCode::kFailedPrecondition:
    case StatusCode::kSealViolation:
    case StatusCode::kRefused: return ExitCode::kRefused;
    case StatusCode::kCorruption: return ExitCode::kIntegrity;
    case StatusCode::kIOError:
    case StatusCode::kInternal: return ExitCode::kInternal;
  }
  return ExitCode::kInternal;
}

void AddCommonOptions(CLI::App* cmd, CommonOptions* options, bool with_ledger) {
  if (with_ledger) {
    cmd->add_option("--ledger", options->ledger, "Ledger file")
        ->envname("UNSEEN_LEDGER")
        ->capture_default_str();
  }
  cmd->add_flag("--json", options->json, "Print machine-readable JSON on stdout");
  cmd->add_option("--actor", options->actor, "Who is acting (recorded in entries); default: login name");
}

std::string ActorName(const CommonOptions& options) {
  if (!options.actor.empty()) return options.actor;
  if (const char* user = std::getenv("USER"); user && *user) return user;
  if (struct passwd* pw = getpwuid(getuid()); pw && pw->pw_name) return pw->pw_name;
  return "unknown";
}

void PrintError(const Status& s) {
  std::fflush(stdout);
  fmt::print(stderr, "unseen: error: {}\n", s.message());
}

std::function<void(double)> Progress(const std::string& label) {
  if (!isatty(STDERR_FILENO)) return {};
  return [label](double f) { fmt::print(stderr, "\r{} {:3.0f}%", label, 100 * f); };
}

void EndProgress() {
  if (isatty(STDERR_FILENO)) fmt::print(stderr, "\r\033[K");
}

void AddKeyOptions(CLI::App* cmd, std::string* key_file) {
  cmd->add_option("--key-file", *key_file,
                  "Key file from `unseen keygen`; without it, the passphrase in UNSEEN_PASSPHRASE "
                  "or typed at a prompt");
}

namespace {

Result<std::string> Prompt(const char* text) {
  fmt::print(stderr, "{}", text);
  termios old{};
  bool tty = tcgetattr(STDIN_FILENO, &old) == 0;
  if (tty) {
    termios quiet = old;
    quiet.c_lflag &= ~static_cast<tcflag_t>(ECHO);
    tcsetattr(STDIN_FILENO, TCSANOW, &quiet);
  }
  std::string line;
  std::getline(std::cin, line);
  if (tty) tcsetattr(STDIN_FILENO, TCSANOW, &old);
  fmt::print(stderr, "\n");
  return line;
}

}  // namespace

Result<KeySpec> ResolveKey(const std::string& key_file, bool confirm) {
  KeySpec spec;
  if (!key_file.empty()) {
    spec.key_file = key_file;
    return spec;
  }
  if (const char* p = std::getenv("UNSEEN_PASSPHRASE"); p && *p) {
    spec.passphrase = std::string(p);
    return spec;
  }
  if (!isatty(STDIN_FILENO)) {
    return Status::InvalidArgument(
        "--key-file: no key given; expected --key-file FILE, UNSEEN_PASSPHRASE, or a terminal to "
        "type a passphrase at");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::string first, Prompt("Passphrase: "));
  if (confirm) {
    UNSEEN_ASSIGN_OR_RETURN(std::string again, Prompt("Passphrase again: "));
    if (again != first) return Status::InvalidArgument("the two passphrases differ");
  }
  spec.passphrase = first;
  return spec;
}

}  // namespace unseen::cli
