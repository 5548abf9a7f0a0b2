// unseen export: write development rows (or fold files) for training elsewhere.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/export.h"

namespace unseen::cli {

namespace {
struct ExportOptions {
  CommonOptions common;
  ExportRequest req;
};
}  // namespace

Runner SetupExport(CLI::App& app) {
  auto opt = std::make_shared<ExportOptions>();
  CLI::App* cmd = app.add_subcommand("export", "Write the development rows (and fold files) for training elsewhere");
  cmd->add_option("--out", opt->req.out_path, "CSV of all development rows")->required();
  cmd->add_option("--folds", opt->req.folds, "Also write K fold files (stratified; group-aware)");
  cmd->add_option("--out-dir", opt->req.out_dir, "Directory for fold_1.csv ... fold_K.csv");
  cmd->add_option("--seed", opt->req.seed, "Seed of the fold assignment")->capture_default_str();
  cmd->add_option("--data", opt->req.data_path, "The source file, if it moved since init");
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    ExportRequest req = opt->req;
    req.ledger_path = opt->common.ledger;
    req.actor = ActorName(opt->common);
    UNSEEN_ASSIGN_OR_RETURN(ExportReport r, ExportRows(req));
    if (opt->common.json) {
      nlohmann::json folds = nlohmann::json::array();
      for (const ExportedFile& f : r.folds) {
        folds.push_back({{"path", f.path}, {"rows", f.rows}, {"sha256", ToHex(f.sha256)}, {"row_set", ToHex(f.row_set)}});
      }
      fmt::print("{}\n", nlohmann::json{{"out", r.all.path}, {"rows", r.all.rows}, {"sha256", ToHex(r.all.sha256)},
                                        {"folds", folds}, {"head", ToHex(r.head)}}.dump());
      return Status::OK();
    }
    fmt::print("Exported {} development rows to {} (sha256 {})\n", r.all.rows, r.all.path, ToHex(r.all.sha256));
    for (const ExportedFile& f : r.folds) fmt::print("  {} rows -> {}\n", f.rows, f.path);
    return Status::OK();
  };
}

}  // namespace unseen::cli

// unseen score: score predictions made elsewhere on exported rows.
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
