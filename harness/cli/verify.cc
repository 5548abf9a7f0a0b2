// unseen verify: recompute the chain and every digest; with a key, check
// the sealed holdout too.
#include <fmt/core.h>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"
#include "harness/workflow/verify.h"

namespace unseen::cli {

namespace {

struct VerifyOptions {
  CommonOptions common;
  std::string key_file, expect_head;
  bool with_passphrase = false;
};

}  // namespace

Runner SetupVerify(CLI::App& app) {
  auto opt = std::make_shared<VerifyOptions>();
  CLI::App* cmd = app.add_subcommand("verify", "Check the ledger's hash chain, every blob digest "
                                               "and, with a key, the sealed holdout");
  AddKeyOptions(cmd, &opt->key_file);
  cmd->add_flag("--passphrase", opt->with_passphrase,
                "Check the holdout with the passphrase (UNSEEN_PASSPHRASE or a prompt)");
  cmd->add_option("--expect-head", opt->expect_head,
                  "Fail unless the ledger still contains this head (64 hex digits)");
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    VerifyRequest req;
    req.ledger_path = opt->common.ledger;
    req.expect_head = opt->expect_head;
    if (!opt->key_file.empty() || opt->with_passphrase) {
      UNSEEN_ASSIGN_OR_RETURN(KeySpec spec, ResolveKey(opt->key_file, /*confirm=*/false));
      req.key = spec;
    }
    UNSEEN_ASSIGN_OR_RETURN(VerifyOutcome out, VerifyLedger(req));
    if (opt->common.json) {
      nlohmann::json j = {{"ok", true},
                          {"entries", out.chain.entries},
                          {"blobs", out.chain.blobs},
                          {"blob_bytes", out.chain.blob_bytes},
                          {"head", ToHex(out.chain.head)},
                          {"sealed", out.sealed},
                          {"holdout_checked", out.holdout_checked},
                          {"holdout_rows_checked", out.holdout_rows_checked}};
      if (!opt->expect_head.empty()) j["expected_head_found"] = out.expected_head_found;
      fmt::print("{}\n", j.dump());
      return Status::OK();
    }
    fmt::print("OK: {} entries and {} blobs ({} bytes) verified; head {}\n", out.chain.entries,
               out.chain.blobs, out.chain.blob_bytes, ToHex(out.chain.head));
    if (!opt->expect_head.empty()) fmt::print("OK: the expected head is in the chain\n");
    if (out.holdout_checked) {
      fmt::print("OK: the sealed holdout opens with this key and its {} rows match their digests\n",
                 out.holdout_rows_checked);
    } else if (req.key && !out.sealed) {
      fmt::print("note: the ledger is not sealed yet; no holdout to check\n");
    }
    return Status::OK();
  };
}

}  // namespace unseen::cli
