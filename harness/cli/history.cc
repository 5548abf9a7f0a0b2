// unseen history: the entries in order.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/carve.h"
#include "harness/ledger/ledger_state.h"

namespace unseen::cli {

namespace {

using json = nlohmann::json;

// One line saying what an entry did.
std::string Summary(const Entry& e, const json& b) {
  if (e.kind == "ledger") return "ledger " + b.value("ledger_id", std::string());
  if (e.kind == "source") {
    return fmt::format("{} ({} rows, {} columns, {})", b["file"].value("path", std::string()),
                       b.value("rows", 0), b["columns"].size(), b.value("task", std::string()));
  }
  if (e.kind == "seal") {
    return fmt::format("{} split, seed {}: holdout {} rows, dev {} rows",
                       b.value("strategy", std::string()), b.value("seed", 0),
                       b["holdout"].value("rows", 0), b["dev"].value("rows", 0));
  }
  if (b.contains("summary") && b["summary"].is_string()) return b["summary"].get<std::string>();
  return "";
}

}  // namespace

Runner SetupHistory(CLI::App& app) {
  auto opt = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand("history", "List the ledger's entries in order");
  AddCommonOptions(cmd, opt.get());
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(opt->ledger, LedgerMode::kReadOnly));
    UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> entries, ledger->Entries());
    if (opt->json) {
      json out = json::array();
      for (const Entry& e : entries) {
        out.push_back({{"seq", e.seq}, {"kind", e.kind}, {"hash", ToHex(e.hash)},
                       {"prev_hash", ToHex(e.prev_hash)}, {"body", json::parse(e.body)}});
      }
      fmt::print("{}\n", out.dump());
      return Status::OK();
    }
    fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", "seq", "time (UTC)", "kind", "actor",
               "hash", "what");
    for (const Entry& e : entries) {
      json b = json::parse(e.body);
      fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", e.seq, b.value("time", std::string()),
                 e.kind, b.value("actor", std::string()), ToHex(e.hash).substr(0, 16), Summary(e, b));
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
