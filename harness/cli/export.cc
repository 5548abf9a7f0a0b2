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
