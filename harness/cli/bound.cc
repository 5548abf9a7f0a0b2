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
  cmd->add_option("--models", opt->req.models,
                  "Without a ledger: questions compared, fixed in advance (ln H = ln M)")
      ->capture_default_str();
  cmd->add_option("--answer", opt->req.answer,
                  "As a ledger's answer: its number j (default: reveals + 1)");
  cmd->add_option("--budget", opt->req.budget, "As a ledger's answer: the budget sealed")
      ->capture_default_str();
  cmd->add_option("--reveals", opt->req.reveals,
                  "As a ledger's answer: answers shown before the question was asked")
      ->capture_default_str();
  cmd->add_option("--resolution-values", opt->req.resolution_values,
                  "How many different values one answer could show (1001 for a 0/1 or Hoeffding "
                  "answer; 1001^3 for the others, twice that for mse and mae)")
      ->capture_default_str();
  cmd->add_option("--advance", opt->req.advance,
                  "As a ledger's answer: the questions fixed before the first answer, when this "
                  "question is one of them");
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
                                        {"queries", opt->req.answer.value_or(opt->req.models)},
                                        {"log_hypotheses", r.log_hypotheses},
                                        {"assumptions", b->assumptions}}
                             .dump());
      return Status::OK();
    }
    fmt::print(
        "estimate {:.6g}, interval [{:.6g}, {:.6g}] by {} at delta {} (level delta * exp(-{:.6g}))\n",
        b->estimate, b->lower, b->upper, b->method, opt->req.delta, r.log_hypotheses);
    fmt::print("{}\n", b->assumptions);
    return Status::OK();
  };
}

}  // namespace unseen::cli
