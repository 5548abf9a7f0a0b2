// unseen predict: apply a frozen model to rows and write its predictions.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/predict.h"

namespace unseen::cli {

namespace {
struct PredictOptions {
  CommonOptions common;
  std::string model, data, out;
};
}  // namespace

Runner SetupPredict(CLI::App& app) {
  auto opt = std::make_shared<PredictOptions>();
  CLI::App* cmd = app.add_subcommand("predict", "Apply a frozen model to rows (never holdout rows)");
  cmd->add_option("--model", opt->model, "Frozen model name")->required();
  cmd->add_option("--data", opt->data, "CSV rows to predict (with or without the target)")->required();
  cmd->add_option("--out", opt->out, "Where to write id,prediction[,p_CLASS...]")->required();
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    PredictRequest req{opt->common.ledger, opt->model, opt->data, opt->out, ActorName(opt->common)};
    UNSEEN_ASSIGN_OR_RETURN(PredictReport r, PredictWithModel(req));
    if (opt->common.json) {
      fmt::print("{}\n", nlohmann::json{{"model", opt->model}, {"rows", r.rows}, {"out", opt->out},
                                        {"sha256", ToHex(r.out_sha256)}, {"head", ToHex(r.head)}}.dump());
    } else {
      fmt::print("Wrote {} predictions of {} to {} (sha256 {})\n", r.rows, opt->model, opt->out,
                 ToHex(r.out_sha256));
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
