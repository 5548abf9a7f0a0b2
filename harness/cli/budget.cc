// unseen budget: raise the holdout budget, as an entry of its own.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/budget.h"

namespace unseen::cli {

Runner SetupBudget(CLI::App& app) {
  auto opt = std::make_shared<std::pair<CommonOptions, BudgetRequest>>();
  CLI::App* cmd =
      app.add_subcommand("budget", "Raise the holdout budget (recorded, shown in every report)");
  cmd->add_option("--raise", opt->second.add_queries, "Holdout queries to add")->required();
  cmd->add_option("--reason", opt->second.reason, "Why; recorded in the entry")->required();
  AddCommonOptions(cmd, &opt->first);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    BudgetRequest req = opt->second;
    req.ledger_path = opt->first.ledger;
    req.actor = ActorName(opt->first);
    UNSEEN_ASSIGN_OR_RETURN(BudgetReport r, RaiseBudget(req));
    if (opt->first.json) {
      fmt::print(
          "{}\n",
          nlohmann::json{{"budget", r.budget}, {"used", r.used}, {"head", ToHex(r.head)}}.dump());
    } else {
      fmt::print("Holdout budget raised to {} queries ({} used). The raise is in the ledger.\n",
                 r.budget, r.used);
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
