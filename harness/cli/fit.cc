// unseen fit: fit a pipeline spec on development rows and freeze a model.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/fit.h"

namespace unseen::cli {

namespace {

struct FitOptions {
  CommonOptions common;
  std::string spec, name, data, exclude;
};

void PrintBlend(const FitOptions& opt, const FitReport& r) {
  const BlendReport& b = *r.blend;
  if (opt.common.json) {
    nlohmann::json members = nlohmann::json::array();
    for (const BlendMemberReport& m : b.members) {
      members.push_back({{"name", m.name},
                         {"model_digest", ToHex(m.digest)},
                         {"fit_entry", m.fit_entry},
                         {"weight", m.weight},
                         {"loss_without", m.loss_without},
                         {"contribution", m.contribution}});
    }
    nlohmann::json j = {{"model", r.name},          {"model_digest", ToHex(r.model_digest)},
                        {"learner", "blend"},       {"rows", r.rows},
                        {"partition", b.partition}, {"nonnegative", b.nonnegative},
                        {"intercept", b.intercept}, {"metric", r.metric},
                        {"selection", r.selection}, {"folds", r.folds},
                        {"loss_all", b.loss_all},   {"members", members},
                        {"head", ToHex(r.head)}};
    fmt::print("{}\n", j.dump());
    return;
  }
  fmt::print("Froze blend {} ({} rows of partition {}), digest {}\n", r.name, r.rows, b.partition,
             ToHex(r.model_digest));
  fmt::print("  weights    {}least squares, intercept {:.6g}\n",
             b.nonnegative ? "non-negative " : "", b.intercept);
  std::string how = r.selection == "validation"
                        ? std::string("one validation split")
                        : std::to_string(r.folds) + "-fold cross-validation";
  fmt::print("  {} of the blend of all members {:.6g} ({} inside the partition)\n", r.metric,
             b.loss_all, how);
  fmt::print("  contribution = {} without the member - {} with all of them\n", r.metric, r.metric);
  for (const BlendMemberReport& m : b.members) {
    fmt::print("  {:<20} weight {:<12.6g} contribution {:+.6g}\n", m.name, m.weight,
               m.contribution);
  }
  fmt::print("  head       {}\n", ToHex(r.head));
}

void PrintReport(const FitOptions& opt, const FitReport& r) {
  if (r.blend) {
    PrintBlend(opt, r);
    return;
  }
  if (opt.common.json) {
    nlohmann::json c = nlohmann::json::array();
    for (const CandidateScore& s : r.candidates) {
      c.push_back({{"settings", s.settings}, {"fold_scores", s.fold_scores}, {"mean", s.mean}});
    }
    nlohmann::json j = {{"model", r.name}, {"model_digest", ToHex(r.model_digest)}, {"rows", r.rows},
                        {"metric", r.metric}, {"selection", r.selection}, {"folds", r.folds},
                        {"candidates", c}, {"chosen", r.chosen}, {"caution", r.caution},
                        {"head", ToHex(r.head)}};
    if (!r.excluded.empty()) {
      j["excluded"] = {{"partition", r.excluded}, {"rows_dropped", r.excluded_rows}};
    }
    if (r.validation_bound) {
      const Bound& b = *r.validation_bound;
      j["validation_bound"] = {{"estimate", b.estimate}, {"lower", b.lower}, {"upper", b.upper},
                               {"method", b.method}, {"delta", 0.05},
                               {"candidates", r.candidates.size()}};
    }
    fmt::print("{}\n", j.dump());
    return;
  }
  fmt::print("Froze model {} ({} rows), digest {}\n", r.name, r.rows, ToHex(r.model_digest));
  if (!r.excluded.empty()) {
    fmt::print("  excluded   partition {} ({} rows of the data dropped)\n", r.excluded,
               r.excluded_rows);
  }
  if (r.selection != "none") {
    fmt::print("  selection  {} ({} folds), metric {}\n", r.selection, r.folds, r.metric);
    for (size_t i = 0; i < r.candidates.size(); ++i) {
      fmt::print("  {} {:>3}  {:<12.6g} {}\n", i == r.chosen ? '*' : ' ', i, r.candidates[i].mean,
                 r.candidates[i].settings.dump());
    }
  }
  if (r.validation_bound) {
    const Bound& b = *r.validation_bound;
    fmt::print("  validation {} = {:.4f}, 95% interval [{:.4f}, {:.4f}] ({}, over {} candidates)\n",
               r.metric, b.estimate, b.lower, b.upper, b.method, r.candidates.size());
  }
  if (!r.caution.empty()) fmt::print("  caution    {}\n", r.caution);
  fmt::print("  head       {}\n", ToHex(r.head));
}

}  // namespace

Runner SetupFit(CLI::App& app) {
  auto opt = std::make_shared<FitOptions>();
  CLI::App* cmd = app.add_subcommand("fit", "Fit a pipeline spec on development rows and freeze it as a model");
  cmd->add_option("--spec", opt->spec, "Pipeline spec (TOML; see docs/pipelines.md)")->required();
  cmd->add_option("--name", opt->name, "Name of the frozen model")->required();
  cmd->add_option("--data", opt->data, "Development rows (default: the dev file written by seal)");
  cmd->add_option("--exclude", opt->exclude,
                  "Leave out the rows of this carved partition (`unseen carve`), e.g. a blend's");
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    FitRequest req{opt->common.ledger,     opt->spec,   opt->name, opt->data,
                   ActorName(opt->common), opt->exclude};
    UNSEEN_ASSIGN_OR_RETURN(FitReport report, FitModel(req));
    PrintReport(*opt, report);
    return Status::OK();
  };
}

}  // namespace unseen::cli
