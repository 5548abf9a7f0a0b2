// unseen keygen: write a new 32-byte random key file (mode 0600).
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "storage/seal_crypto.h"

namespace unseen::cli {

namespace {
struct KeygenOptions {
  CommonOptions common;
  std::string out;
};
}  // namespace

Runner SetupKeygen(CLI::App& app) {
  auto opt = std::make_shared<KeygenOptions>();
  CLI::App* cmd = app.add_subcommand("keygen", "Write a new random 32-byte seal key (mode 0600)");
  cmd->add_option("--out", opt->out, "Key file to create (never overwritten)")->required();
  AddCommonOptions(cmd, &opt->common, /*with_ledger=*/false);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_RETURN_IF_ERROR(WriteKeyFile(opt->out));
    if (opt->common.json) {
      fmt::print("{}\n", nlohmann::json{{"key_file", opt->out}, {"bytes", 32}}.dump());
    } else {
      fmt::print("Wrote a 32-byte key to {} (mode 0600). Keep it apart from the data: whoever "
                 "holds it can read the holdout.\n", opt->out);
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
