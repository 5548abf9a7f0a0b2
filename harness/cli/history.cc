// unseen history: the entries in order.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/ledger/entries.h"

namespace unseen::cli {

namespace {

using json = nlohmann::json;

// Every entry with its body as stored.
Status PrintJson(const std::vector<Entry>& entries) {
  json out = json::array();
  for (const Entry& e : entries) {
    json body = json::parse(e.body, nullptr, /*allow_exceptions=*/false);
    if (body.is_discarded()) {
      return Status::Corruption("entry " + std::to_string(e.seq) + " (" + e.kind +
                                "): the body is not JSON");
    }
    out.push_back({{"seq", e.seq},
                   {"kind", e.kind},
                   {"hash", ToHex(e.hash)},
                   {"prev_hash", ToHex(e.prev_hash)},
                   {"body", std::move(body)}});
  }
  fmt::print("{}\n", out.dump());
  return Status::OK();
}

// One line per entry: when, what kind, who, and what it did.
Status PrintText(const std::vector<Entry>& entries) {
  fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", "seq", "time (UTC)", "kind", "actor",
             "hash", "what");
  for (const Entry& e : entries) {
    UNSEEN_ASSIGN_OR_RETURN(EntryStamp stamp, DecodeStamp(e));
    UNSEEN_ASSIGN_OR_RETURN(std::string what, SummarizeEntry(e));
    fmt::print("{:>4}  {:<20}  {:<8}  {:<12}  {:<16}  {}\n", e.seq, stamp.time, e.kind, stamp.actor,
               ToHex(e.hash).substr(0, 16), what);
  }
  return Status::OK();
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
    return opt->json ? PrintJson(entries) : PrintText(entries);
  };
}

}  // namespace unseen::cli
