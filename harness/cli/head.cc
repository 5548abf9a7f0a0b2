// unseen head: print the hash of the newest entry.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/head.h"

namespace unseen::cli {

Runner SetupHead(CLI::App& app) {
  auto opt = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand("head", "Print the hash of the newest entry (pin it to "
                                             "detect a rewrite later)");
  AddCommonOptions(cmd, opt.get());
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_ASSIGN_OR_RETURN(Digest256 head, ReadHead(opt->ledger));
    if (opt->json) {
      fmt::print("{}\n", nlohmann::json{{"head", ToHex(head)}}.dump());
    } else {
      fmt::print("{}\n", ToHex(head));
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
