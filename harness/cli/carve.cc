// unseen carve: set a named, seeded share of the dev rows aside (a partition).
#include "harness/workflow/carve.h"

#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"

namespace unseen::cli {

namespace {
struct CarveOptions {
  CommonOptions common;
  CarveRequest req;
};
}  // namespace

Runner SetupCarve(CLI::App& app) {
  auto opt = std::make_shared<CarveOptions>();
  CLI::App* cmd = app.add_subcommand(
      "carve", "Set a named, seeded share of the development rows aside (e.g. for a blend)");
  cmd->add_option("--name", opt->req.name, "Name of the partition")->required();
  cmd->add_option("--fraction", opt->req.fraction, "Share of the dev rows, in (0,1)")->required();
  cmd->add_option("--seed", opt->req.seed, "Seed of the carve")
      ->check(CLI::NonNegativeNumber)
      ->capture_default_str();
  cmd->add_flag("--stratified", opt->req.stratified,
                "Keep class shares (classification); whole groups win when the source has groups");
  cmd->add_option("--data", opt->req.data_path, "The source file, if it moved since init");
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    CarveRequest req = opt->req;
    req.ledger_path = opt->common.ledger;
    req.actor = ActorName(opt->common);
    UNSEEN_ASSIGN_OR_RETURN(CarveReport r, CarvePartition(req));
    const NamedPartition& p = r.partition;
    if (opt->common.json) {
      fmt::print("{}\n", nlohmann::json{{"name", p.name},
                                        {"strategy", p.strategy},
                                        {"fraction", p.fraction},
                                        {"seed", p.seed},
                                        {"rows", p.rows.Cardinality()},
                                        {"dev_rows", r.dev_rows},
                                        {"requested", r.requested},
                                        {"note", r.note},
                                        {"row_set", ToHex(p.row_set)},
                                        {"entry", p.entry_seq},
                                        {"head", ToHex(r.head)}}
                             .dump());
      return Status::OK();
    }
    fmt::print("Carved partition {}: {} of {} dev rows ({}, seed {})\n", p.name,
               p.rows.Cardinality(), r.dev_rows, p.strategy, p.seed);
    if (!r.note.empty()) fmt::print("  note     {}\n", r.note);
    fmt::print("  row set  {}\n  head     {}\n", ToHex(p.row_set), ToHex(r.head));
    return Status::OK();
  };
}

}  // namespace unseen::cli
