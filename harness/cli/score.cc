// unseen score: score predictions made elsewhere on exported rows.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/score.h"

namespace unseen::cli {

Runner SetupScore(CLI::App& app) {
  auto opt = std::make_shared<std::pair<CommonOptions, ScoreRequest>>();
  CLI::App* cmd = app.add_subcommand("score", "Score predictions made elsewhere on exported development rows");
  cmd->add_option("--predictions", opt->second.predictions_path, "CSV with id,prediction[,p_CLASS...]")->required();
  cmd->add_option("--on", opt->second.name, "Name of the external model the predictions come from")->required();
  cmd->add_option("--metric", opt->second.metric, "Metric (default: error_rate or mse)");
  AddCommonOptions(cmd, &opt->first);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    ScoreRequest req = opt->second;
    req.ledger_path = opt->first.ledger;
    req.actor = ActorName(opt->first);
    UNSEEN_ASSIGN_OR_RETURN(ScoreReport r, ScorePredictions(req));
    if (opt->first.json) {
      fmt::print("{}\n", nlohmann::json{{"name", req.name}, {"rows", r.rows}, {"metric", r.metric},
                                        {"value", r.value}, {"head", ToHex(r.head)}}.dump());
    } else {
      fmt::print("{} on {} exported rows: {} = {:.6g}\n", req.name, r.rows, r.metric, r.value);
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
