// unseen init: create a ledger and register a CSV source.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/init.h"

namespace unseen::cli {

namespace {

struct InitOptions {
  CommonOptions common;
  std::string data, target, id, group, time, delimiter = ",", task = "auto";
};

Result<char> ParseDelimiter(const std::string& d) {
  if (d == "\\t" || d == "tab" || d == "\t") return '\t';
  if (d.size() != 1 || d[0] == '"' || d[0] == '\r' || d[0] == '\n' ||
      static_cast<unsigned char>(d[0]) >= 0x80) {
    return Status::InvalidArgument("--delimiter: expected one ASCII character (or 'tab'), got '" +
                                   d + "'");
  }
  return d[0];
}

void PrintReport(const InitOptions& opt, const InitReport& r) {
  const SourceInfo& s = r.source;
  if (opt.common.json) {
    nlohmann::json j = nlohmann::json::parse(SourceToJson(s));
    j["ledger"] = opt.common.ledger;
    j["head"] = ToHex(r.head);
    fmt::print("{}\n", j.dump());
    return;
  }
  fmt::print("Registered {} in {}\n", s.path, opt.common.ledger);
  fmt::print("  rows        {}\n", s.rows);
  fmt::print("  file        {} bytes, sha256 {}\n", s.file_size, ToHex(s.file_sha256));
  fmt::print("  merkle root {}\n", ToHex(s.merkle_root));
  // No figure over rows (classes, target range, missing cells) before the seal: `seal`
  // publishes them over the development rows only.
  fmt::print("  task        {}\n", TaskKindName(s.task));
  fmt::print("  columns\n");
  for (const ColumnInfo& c : s.columns) {
    fmt::print("    {:<24} {:<12} {}\n", c.name, ColumnTypeName(c.type), ColumnRoleName(c.role));
  }
  fmt::print("  head        {}\n", ToHex(r.head));
}

}  // namespace

Runner SetupInit(CLI::App& app) {
  auto opt = std::make_shared<InitOptions>();
  CLI::App* cmd = app.add_subcommand("init", "Create a ledger and register a CSV data source");
  cmd->add_option("--data", opt->data, "CSV file (RFC 4180, header row, UTF-8)")->required();
  cmd->add_option("--target", opt->target, "Target (label) column")->required();
  cmd->add_option("--id", opt->id, "Row identifier column (never a feature)");
  cmd->add_option("--group", opt->group, "Group column: rows sharing a value stay on one side");
  cmd->add_option("--time", opt->time, "Time column: ordering for temporal splits");
  cmd->add_option("--delimiter", opt->delimiter, "Field delimiter: one character, or 'tab'")
      ->capture_default_str();
  cmd->add_option("--task", opt->task, "auto, classification or regression")->capture_default_str();
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    InitRequest req;
    req.ledger_path = opt->common.ledger;
    req.data_path = opt->data;
    req.actor = ActorName(opt->common);
    UNSEEN_ASSIGN_OR_RETURN(req.scan.csv.delimiter, ParseDelimiter(opt->delimiter));
    req.scan.roles = {opt->target, opt->id, opt->group, opt->time};
    if (opt->task != "auto") {
      UNSEEN_ASSIGN_OR_RETURN(TaskKind task, ParseTaskKind(opt->task));
      req.scan.task = task;
    }
    req.scan.progress = Progress("init: reading " + opt->data);
    UNSEEN_ASSIGN_OR_RETURN(InitReport report, InitLedger(req));
    EndProgress();
    PrintReport(*opt, report);
    return Status::OK();
  };
}

}  // namespace unseen::cli
