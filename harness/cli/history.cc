// unseen history: the entries in order.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/history.h"

namespace unseen::cli {

namespace {

using json = nlohmann::json;

// Every entry with its body as stored.
void PrintJson(std::vector<HistoryLine>& lines) {
  json out = json::array();
  for (HistoryLine& l : lines) {
    const Entry& e = l.entry;
    out.push_back({{"seq", e.seq},
                   {"kind", e.kind},
                   {"hash", ToHex(e.hash)},
                   {"prev_hash", ToHex(e.prev_hash)},
                   {"body", std::move(l.body)}});
  }
  fmt::print("{}\n", out.dump());
}

// One line per entry: when, what kind, who, and what it did.
void PrintText(const std::vector<HistoryLine>& lines) {
  fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", "seq", "time (UTC)", "kind", "actor",
             "hash", "what");
  for (const HistoryLine& l : lines) {
    const Entry& e = l.entry;
    fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", e.seq, l.stamp.time, e.kind,
               l.stamp.actor, ToHex(e.hash).substr(0, 16), l.summary);
  }
}

}  // namespace

Runner SetupHistory(CLI::App& app) {
  auto opt = std::make_shared<CommonOptions>();
  CLI::App* cmd = app.add_subcommand("history", "List the ledger's entries in order");
  AddCommonOptions(cmd, opt.get());
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    UNSEEN_ASSIGN_OR_RETURN(std::vector<HistoryLine> lines,
                            ReadHistory(opt->ledger, /*with_summaries=*/!opt->json));
    if (opt->json) {
      PrintJson(lines);
    } else {
      PrintText(lines);
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
