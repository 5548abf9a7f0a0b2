// unseen bound: the holdout bounds as a calculator, for counts and means
// obtained elsewhere. The same code and JSON keys as `eval`.
#include <fmt/core.h>

#include <nlohmann/json.hpp>
#include <optional>

#include "harness/cli/commands.h"
#include "harness/workflow/bound.h"

namespace unseen::cli {

namespace {

struct BoundOptions {
  CommonOptions common;
  BoundCalcRequest req;
};

}  // namespace

Runner SetupBound(CLI::App& app) {
  auto opt = std::make_shared<BoundOptions>();
  CLI::App* cmd =
      app.add_subcommand("bound", "Compute a holdout bound from numbers obtained elsewhere");
  cmd->add_option("--n", opt->req.n, "Holdout size")->required();
  auto* errors = cmd->add_option("--errors", opt->req.errors, "Rows with a 0/1 loss of 1 (errors)");
  auto* mean = cmd->add_option("--mean", opt->req.mean, "Mean loss over the n rows");
  errors->excludes(mean);
  cmd->add_option("--variance", opt->req.variance,
                  "Unbiased sample variance of the losses (bernstein)");
  cmd->add_option("--models", opt->req.models, "Models compared (hypotheses fixed in advance)")
      ->capture_default_str();
  cmd->add_option("--reveals", opt->req.reveals,
                  "Per model, the answers revealed before it was frozen (comma-separated); missing "
                  "models count 0")
      ->delimiter(',');
  cmd->add_option("--resolution-values", opt->req.resolution_values,
                  "How many different values one reveal could show")
      ->capture_default_str();
  cmd->add_option("--delta", opt->req.delta, "Overall failure probability")->capture_default_str();
  cmd->add_option("--method", opt->req.method, "hoeffding, clopper-pearson or bernstein");
  cmd->add_option("--range", opt->req.range, "Loss range LO:HI")->capture_default_str();
  AddCommonOptions(cmd, &opt->common, /*with_ledger=*/false);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_ASSIGN_OR_RETURN(BoundCalcReport r, CalculateBound(opt->req));
    const Bound* b = &r.bound;
    if (opt->common.json) {
      fmt::print("{}\n", nlohmann::json{{"model", nullptr},
                                        {"metric", r.metric},
                                        {"estimate", b->estimate},
                                        {"lower", b->lower},
                                        {"upper", b->upper},
                                        {"method", b->method},
                                        {"delta", opt->req.delta},
                                        {"n", opt->req.n},
                                        {"queries", opt->req.models},
                                        {"log_hypotheses", r.log_hypotheses},
                                        {"assumptions", b->assumptions}}
                             .dump());
      return Status::OK();
    }
    fmt::print(
        "estimate {:.6g}, interval [{:.6g}, {:.6g}] by {} at delta {} over {} models (ln H = "
        "{:.6g})\n",
        b->estimate, b->lower, b->upper, b->method, opt->req.delta, opt->req.models, r.log_hypotheses);
    fmt::print("{}\n", b->assumptions);
    return Status::OK();
  };
}

}  // namespace unseen::cli
