// Shared pieces of the command-line front end: the options every command
// takes, exit codes, error and progress printing, reading a passphrase.
#ifndef UNSEEN_HARNESS_CLI_COMMON_H_
#define UNSEEN_HARNESS_CLI_COMMON_H_

#include <CLI/CLI.hpp>

#include <functional>
#include <string>

#include "harness/ledger/keys.h"
#include "storage/status.h"

namespace unseen::cli {

// The exit codes, documented in the README ("Exit codes").
enum class ExitCode : int {
  kOk = 0,
  kRefused = 1,    // refused by a guard (leakage, contamination, budget, already sealed)
  kBadInput = 2,   // bad input or usage, wrong key
  kIntegrity = 3,  // verification failed
  kInternal = 4,   // internal or operating-system error
};

ExitCode ExitCodeFor(const Status& s);

struct CommonOptions {
  std::string ledger = "unseen.ledger";  // --ledger, env UNSEEN_LEDGER
  bool json = false;                     // --json
  std::string actor;                     // --actor, else the login name
};

// Adds --ledger, --json and --actor to a subcommand.
void AddCommonOptions(CLI::App* cmd, CommonOptions* options, bool with_ledger = true);

// --actor, else $USER or the login name, else "unknown".
std::string ActorName(const CommonOptions& options);

// A command: registers itself and returns the work to run once parsed.
using Runner = std::function<Status()>;

// Prints "unseen: error: ..." for a non-OK status.
void PrintError(const Status& s);

// A progress printer for stderr: prints "\rLABEL NN%" when stderr is a
// terminal, nothing otherwise.
std::function<void(double)> Progress(const std::string& label);
void EndProgress();

// The key options of seal, verify and eval: --key-file, else a passphrase
// from UNSEEN_PASSPHRASE, else a prompt without echo when stdin is a terminal.
void AddKeyOptions(CLI::App* cmd, std::string* key_file);
Result<KeySpec> ResolveKey(const std::string& key_file, bool confirm);

}  // namespace unseen::cli

#endif  // UNSEEN_HARNESS_CLI_COMMON_H_
