// unseen status: the source, the partitions and the holdout budget.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/status.h"

namespace unseen::cli {

using json = nlohmann::json;

Runner SetupStatus(CLI::App& app) {
  auto opt = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand("status", "Show the source, the partitions and the holdout budget");
  AddCommonOptions(cmd, opt.get());
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_ASSIGN_OR_RETURN(LedgerStatus status, ReadStatus(opt->ledger));
    const LedgerState& st = status.state;
    const SourceInfo& s = st.source;
    if (opt->json) {
      json j = {{"ledger", opt->ledger}, {"ledger_id", st.ledger_id}, {"entries", st.entries},
                {"head", ToHex(st.head)},
                {"source", {{"path", s.path}, {"sha256", ToHex(s.file_sha256)}, {"rows", s.rows},
                            {"columns", s.columns.size()}, {"task", TaskKindName(s.task)}}},
                {"sealed", st.seal.has_value()}, {"holdout_queries", st.holdout_queries}};
      if (st.seal) {
        j["holdout_rows"] = st.seal->holdout_rows;
        j["dev_rows"] = st.seal->dev_rows;
        j["strategy"] = st.seal->strategy;
        // The figures over the development rows, as the seal published them.
        j["dev_summary"] = json::parse(RowsSummaryToJson(st.seal->dev_summary));
        j["budget_queries"] = st.seal->budget_queries;
        j["budget_remaining"] = status.budget_remaining();
        j["budget_raises"] = st.budget_raises;
        if (st.seal->budget_half_width > 0) {
          j["budget_half_width"] = st.seal->budget_half_width;
          j["budget_delta"] = st.seal->budget_delta;
        }
        j["partitions"] = json::array();
        for (const NamedPartition& p : status.partitions) {
          j["partitions"].push_back({{"name", p.name},
                                     {"rows", p.rows.Cardinality()},
                                     {"strategy", p.strategy},
                                     {"seed", p.seed},
                                     {"row_set", ToHex(p.row_set)},
                                     {"entry", p.entry_seq}});
        }
      }
      fmt::print("{}\n", j.dump());
      return Status::OK();
    }
    fmt::print("ledger   {} ({} entries, head {})\n", opt->ledger, st.entries, ToHex(st.head));
    fmt::print("source   {}: {} rows, {} columns, {} task, sha256 {}\n", s.path, s.rows,
               s.columns.size(), TaskKindName(s.task), ToHex(s.file_sha256));
    if (!st.seal) {
      fmt::print("holdout  not sealed yet (run `unseen seal`)\n");
      return Status::OK();
    }
    const SealInfo& seal = *st.seal;
    fmt::print("holdout  sealed: {} rows ({} split, seed {}); dev {} rows\n", seal.holdout_rows,
               seal.strategy, seal.seed, seal.dev_rows);
    for (const NamedPartition& p : status.partitions) {
      fmt::print("carved   {}: {} dev rows ({}, seed {})\n", p.name, p.rows.Cardinality(),
                 p.strategy, p.seed);
    }
    const uint64_t left = status.budget_remaining();
    fmt::print("queries  {} of {} used, {} remaining{}\n", st.holdout_queries, seal.budget_queries, left,
               st.budget_raises == 0 ? std::string()
                                     : fmt::format(" (the budget was raised {} times after the seal)",
                                                   st.budget_raises));
    return Status::OK();
  };
}

}  // namespace unseen::cli
