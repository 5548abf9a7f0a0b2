// unseen bound: the holdout bounds as a calculator, for counts and means
// obtained elsewhere. The same code and JSON keys as `eval`.
#include <fmt/core.h>

#include <cmath>
#include <nlohmann/json.hpp>
#include <optional>

#include "harness/bounds/adaptivity.h"
#include "harness/bounds/bounds.h"
#include "harness/cli/commands.h"

namespace unseen::cli {

namespace {

struct BoundOptions {
  CommonOptions common;
  uint64_t n = 0;
  std::optional<uint64_t> errors;
  std::optional<double> mean, variance;
  uint64_t models = 1;
  std::vector<uint64_t> reveals;
  uint64_t resolution_values = 1001;
  double delta = 0.05;
  std::string method, range = "0:1";
};

}  // namespace

Runner SetupBound(CLI::App& app) {
  auto opt = std::make_shared<BoundOptions>();
  CLI::App* cmd =
      app.add_subcommand("bound", "Compute a holdout bound from numbers obtained elsewhere");
  cmd->add_option("--n", opt->n, "Holdout size")->required();
  auto* errors = cmd->add_option("--errors", opt->errors, "Rows with a 0/1 loss of 1 (errors)");
  auto* mean = cmd->add_option("--mean", opt->mean, "Mean loss over the n rows");
  errors->excludes(mean);
  cmd->add_option("--variance", opt->variance,
                  "Unbiased sample variance of the losses (bernstein)");
  cmd->add_option("--models", opt->models, "Models compared (hypotheses fixed in advance)")
      ->capture_default_str();
  cmd->add_option("--reveals", opt->reveals,
                  "Per model, the answers revealed before it was frozen (comma-separated); missing "
                  "models count 0")
      ->delimiter(',');
  cmd->add_option("--resolution-values", opt->resolution_values,
                  "How many different values one reveal could show")
      ->capture_default_str();
  cmd->add_option("--delta", opt->delta, "Overall failure probability")->capture_default_str();
  cmd->add_option("--method", opt->method, "hoeffding, clopper-pearson or bernstein");
  cmd->add_option("--range", opt->range, "Loss range LO:HI")->capture_default_str();
  AddCommonOptions(cmd, &opt->common, /*with_ledger=*/false);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    if (!opt->errors && !opt->mean)
      return Status::InvalidArgument("expected --errors K or --mean X");
    if (opt->n == 0) return Status::InvalidArgument("--n: expected at least 1 row");
    if (opt->models == 0) return Status::InvalidArgument("--models: expected at least 1");
    if (opt->reveals.size() > opt->models) {
      return Status::InvalidArgument("--reveals: " + std::to_string(opt->reveals.size()) +
                                     " values for " + std::to_string(opt->models) +
                                     " models; expected at most one per model");
    }
    if (opt->resolution_values == 0)
      return Status::InvalidArgument("--resolution-values: expected at least 1");
    BoundRequest r;
    r.n = opt->n;
    r.delta = opt->delta;
    size_t colon = opt->range.find(':', 1);
    try {
      if (colon == std::string::npos) throw std::invalid_argument("");
      r.range_lo = std::stod(opt->range.substr(0, colon));
      r.range_hi = std::stod(opt->range.substr(colon + 1));
    } catch (const std::exception&) {
      return Status::InvalidArgument("--range '" + opt->range + "': expected LO:HI");
    }
    r.method = opt->errors ? BoundMethod::kClopperPearson : BoundMethod::kHoeffding;
    if (!opt->method.empty()) {
      auto m = ParseBoundMethod(opt->method);
      if (!m.ok()) return Status::InvalidArgument("--method: " + m.status().message());
      r.method = *m;
    }
    if (opt->errors) {
      if (*opt->errors > opt->n)
        return Status::InvalidArgument("--errors: more errors than --n rows");
      r.successes = *opt->errors;
      r.mean = r.range_lo + (r.range_hi - r.range_lo) * static_cast<double>(*opt->errors) /
                                static_cast<double>(opt->n);
      if (r.method == BoundMethod::kBernstein && !opt->variance) {
        // The unbiased variance of k ones among n 0/1 values.
        double p = static_cast<double>(*opt->errors) / static_cast<double>(opt->n);
        double w = r.range_hi - r.range_lo;
        r.variance = opt->n > 1 ? w * w * p * (1 - p) * static_cast<double>(opt->n) /
                                      static_cast<double>(opt->n - 1)
                                : 0.0;
      }
    } else {
      r.mean = *opt->mean;
    }
    if (opt->variance) r.variance = *opt->variance;
    std::vector<uint64_t> reveals = opt->reveals;
    reveals.resize(opt->models, 0);
    r.log_hypotheses = LogHypotheses(reveals, opt->resolution_values);
    auto b = ComputeBound(r);
    if (!b.ok()) return Status::InvalidArgument(b.status().message());
    if (opt->common.json) {
      fmt::print("{}\n", nlohmann::json{{"model", nullptr},
                                        {"metric", opt->errors ? "error_rate" : "mean_loss"},
                                        {"estimate", b->estimate},
                                        {"lower", b->lower},
                                        {"upper", b->upper},
                                        {"method", b->method},
                                        {"delta", opt->delta},
                                        {"n", opt->n},
                                        {"queries", opt->models},
                                        {"log_hypotheses", r.log_hypotheses},
                                        {"assumptions", b->assumptions}}
                             .dump());
      return Status::OK();
    }
    fmt::print(
        "estimate {:.6g}, interval [{:.6g}, {:.6g}] by {} at delta {} over {} models (ln H = "
        "{:.6g})\n",
        b->estimate, b->lower, b->upper, b->method, opt->delta, opt->models, r.log_hypotheses);
    fmt::print("{}\n", b->assumptions);
    return Status::OK();
  };
}

}  // namespace unseen::cli
