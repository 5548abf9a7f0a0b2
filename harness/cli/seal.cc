// unseen seal: carve the holdout, encrypt it into the ledger, write dev rows.
#include "harness/workflow/seal.h"

#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"

namespace unseen::cli {

namespace {

struct SealOptions {
  CommonOptions common;
  std::string key_file, strategy = "random", dev_out, data;
  double fraction = 0.2;
  uint64_t seed = 0;
  uint64_t budget = kDefaultBudgetQueries;
  double budget_half_width = 0, budget_delta = 0.05;
  bool drop_cross_duplicates = false;
};

std::string Lines(const std::vector<uint64_t>& lines) {
  std::string out;
  for (uint64_t l : lines) out += (out.empty() ? "" : ", ") + std::to_string(l);
  return out;
}

void PrintReport(const SealOptions& opt, const SealReport& r) {
  const SealInfo& s = r.seal;
  if (opt.common.json) {
    nlohmann::json j = {
        {"ledger", opt.common.ledger},
        {"strategy", s.strategy},
        {"fraction", s.fraction},
        {"seed", s.seed},
        {"holdout_rows", s.holdout_rows},
        {"dev_rows", s.dev_rows},
        {"requested_holdout", r.requested_holdout},
        {"holdout_set", ToHex(s.holdout_set)},
        {"dev_set", ToHex(s.dev_set)},
        {"sealed_bytes", r.sealed_bytes},
        {"dev_out", {{"path", opt.dev_out}, {"sha256", ToHex(r.dev_out_sha256)}}},
        {"cross_duplicates",
         {{"holdout_rows", r.cross_duplicate_holdout_rows},
          {"dev_rows", r.cross_duplicate_dev_rows},
          {"first_lines", r.cross_duplicate_lines},
          {"moved_to_dev", r.dropped_cross_duplicates}}},
        {"group_violations", r.has_group ? nlohmann::json(r.group_violations) : nlohmann::json()},
        {"time_violations", r.has_time ? nlohmann::json(r.time_violations) : nlohmann::json()},
        {"budget_queries", s.budget_queries},
        {"budget_half_width", s.budget_half_width},
        {"dev_summary", nlohmann::json::parse(RowsSummaryToJson(s.dev_summary))},
        {"head", ToHex(r.head)}};
    fmt::print("{}\n", j.dump());
    return;
  }
  fmt::print("Sealed the holdout of {} ({} strategy, seed {})\n", opt.common.ledger, s.strategy,
             s.seed);
  fmt::print("  holdout     {} rows (requested {}), sealed in {} bytes\n", s.holdout_rows,
             r.requested_holdout, r.sealed_bytes);
  if (!r.split_note.empty()) fmt::print("  note        {}\n", r.split_note);
  fmt::print("  dev         {} rows -> {} (sha256 {})\n", s.dev_rows, opt.dev_out,
             ToHex(r.dev_out_sha256));
  fmt::print("  holdout set {}\n  dev set     {}\n", ToHex(s.holdout_set), ToHex(s.dev_set));
  if (r.cross_duplicate_holdout_rows > 0) {
    fmt::print(
        "  LEAK        {} holdout rows have an exact duplicate among {} dev rows "
        "(first holdout lines: {}){}\n",
        r.cross_duplicate_holdout_rows, r.cross_duplicate_dev_rows, Lines(r.cross_duplicate_lines),
        r.dropped_cross_duplicates ? "; moved to dev" : "; --drop-cross-duplicates removes them");
  } else {
    fmt::print("  duplicates  none across the cut\n");
  }
  if (r.has_group) fmt::print("  groups      {} group values on both sides\n", r.group_violations);
  if (r.has_time)
    fmt::print("  time        {} dev rows later than the earliest holdout row\n",
               r.time_violations);
  fmt::print("  budget      {} holdout queries{}\n", s.budget_queries,
             s.budget_half_width > 0
                 ? fmt::format(", while the Hoeffding half-width stays within {} at delta {}",
                               s.budget_half_width, s.budget_delta)
                 : std::string());
  fmt::print("  head        {}\n", ToHex(r.head));
}

}  // namespace

Runner SetupSeal(CLI::App& app) {
  auto opt = std::make_shared<SealOptions>();
  CLI::App* cmd =
      app.add_subcommand("seal", "Carve and seal the holdout; write the development rows");
  AddKeyOptions(cmd, &opt->key_file);
  cmd->add_option("--fraction", opt->fraction, "Share of rows in the holdout, in (0,1)")
      ->capture_default_str();
  cmd->add_option("--strategy", opt->strategy, "random, stratified, group or time")
      ->capture_default_str();
  cmd->add_option("--seed", opt->seed, "Seed of the split")->capture_default_str();
  cmd->add_option("--dev-out", opt->dev_out, "Where to write the development rows (CSV)")
      ->required();
  cmd->add_option("--data", opt->data,
                  "The data file, if it moved since init (its digest must match)");
  cmd->add_flag("--drop-cross-duplicates", opt->drop_cross_duplicates,
                "Move holdout rows that exactly duplicate a dev row out of the holdout");
  cmd->add_option("--budget", opt->budget, "Holdout queries allowed")->capture_default_str();
  cmd->add_option("--budget-half-width", opt->budget_half_width,
                  "Also refuse a query once the Hoeffding half-width on a [0, 1] loss, over every "
                  "question so far, would pass W");
  cmd->add_option("--delta,--budget-delta", opt->budget_delta,
                  "The delta every holdout answer's interval shares (and --budget-half-width's)")
      ->capture_default_str();
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    SealRequest req;
    req.ledger_path = opt->common.ledger;
    req.data_path = opt->data;
    req.dev_out = opt->dev_out;
    req.actor = ActorName(opt->common);
    UNSEEN_ASSIGN_OR_RETURN(req.strategy, ParseSplitStrategy(opt->strategy));
    req.fraction = opt->fraction;
    req.seed = opt->seed;
    req.drop_cross_duplicates = opt->drop_cross_duplicates;
    if (opt->budget == 0) return Status::InvalidArgument("--budget: expected at least 1 query");
    req.budget_queries = opt->budget;
    if (opt->budget_half_width != 0 &&
        !(opt->budget_half_width > 0 && opt->budget_half_width <= 0.5)) {
      return Status::InvalidArgument("--budget-half-width: expected a half-width in (0, 0.5]");
    }
    if (!(opt->budget_delta > 0 && opt->budget_delta < 1)) {
      return Status::InvalidArgument("--budget-delta: expected a value in (0, 1)");
    }
    req.budget_half_width = opt->budget_half_width;
    req.budget_delta = opt->budget_delta;
    UNSEEN_ASSIGN_OR_RETURN(KeySpec spec, ResolveKey(opt->key_file, /*confirm=*/true));
    UNSEEN_ASSIGN_OR_RETURN(auto key, KeyForNewSeal(spec));
    req.key = key.first;
    req.key_info = key.second;
    req.progress = Progress("seal");
    UNSEEN_ASSIGN_OR_RETURN(SealReport report, SealHoldout(req));
    EndProgress();
    PrintReport(*opt, report);
    return Status::OK();
  };
}

}  // namespace unseen::cli
