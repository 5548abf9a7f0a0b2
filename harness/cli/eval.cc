// unseen eval: score frozen models on the sealed holdout, with bounds that
// account for every query and how adaptively each model was chosen.
#include "harness/workflow/eval.h"

#include <fmt/core.h>

#include <algorithm>

#include <nlohmann/json.hpp>

#include "harness/cli/commands.h"

namespace unseen::cli {

namespace {

struct EvalOptions {
  CommonOptions common;
  EvalRequest req;
  std::string key_file, range;
  std::optional<double> ladder_step;
  ExternalModelRequest external;
};

// "LO:HI" as two finite numbers.
Result<std::pair<double, double>> ParseRange(const std::string& text) {
  size_t colon = text.find(':', text.empty() ? 0 : 1);
  try {
    if (colon == std::string::npos) throw std::invalid_argument("no colon");
    size_t used = 0;
    double lo = std::stod(text.substr(0, colon), &used);
    if (used != colon) throw std::invalid_argument("lo");
    std::string rest = text.substr(colon + 1);
    double hi = std::stod(rest, &used);
    if (used != rest.size() || !(lo < hi) || !std::isfinite(lo) || !std::isfinite(hi)) {
      throw std::invalid_argument("hi");
    }
    return std::make_pair(lo, hi);
  } catch (const std::exception&) {
    return Status::InvalidArgument("--range '" + text +
                                   "': expected LO:HI, two numbers with LO < HI");
  }
}

std::string Num(double v) { return fmt::format("{:.6g}", v); }

// One answer as `eval --json` prints it (the ledger's form is EvalAnswerRecord in
// harness/ledger/entries.h: it adds code_length, and keeps no assumptions).
nlohmann::json AnswerReportJson(const EvalAnswer& a) {
  return {{"model", a.model},
          {"kind", a.kind},
          {"model_digest", ToHex(a.model_digest)},
          {"metric", a.metric},
          {"estimate", a.estimate},
          {"lower", a.lower},
          {"upper", a.upper},
          {"method", a.method},
          {"delta", a.delta},
          {"n", a.n},
          {"queries", a.queries},
          {"answer_index", a.answer_index},
          {"log_share", a.log_share},
          {"reveals_before", a.reveals_before},
          {"log_transcript", a.log_transcript},
          {"log_question", a.log_question},
          {"log_hypotheses", a.log_hypotheses},
          {"resolution", a.step},
          {"range", {a.range_lo, a.range_hi}},
          {"range_source", a.range_source},
          {"outside_range", a.outside_range},
          {"repeated", a.repeated},
          {"repeat_of", a.repeated ? nlohmann::json(a.repeat_of) : nlohmann::json(nullptr)},
          {"contaminated", a.contaminated},
          {"taints", a.taints},
          {"assumptions", a.assumptions},
          {"mode", a.mode},
          {"improved", a.improved},
          {"leader", a.leader},
          {"ladder_step", a.ladder_step},
          {"tau", a.tau}};
}

// The external predictor's protections: {"name", "enforced", "how"} each.
nlohmann::json ConfinementJson(const EvalReport& r) {
  nlohmann::json out = nlohmann::json::array();
  for (const Protection& p : r.confinement) {
    out.push_back({{"name", p.name}, {"enforced", p.enforced}, {"how", p.how}});
  }
  return out;
}

void PrintConfinement(const EvalReport& r) {
  for (const Protection& p : r.confinement) {
    if (p.enforced) {
      fmt::print("confined: {}: {}\n", p.name, p.how);
    } else {
      fmt::print("WARNING: the predictor was not confined: {}: {}\n", p.name, p.how);
    }
  }
}

void PrintText(const EvalReport& r) {
  fmt::print("{:<20} {:<17} {:>10} {:>10} {:>10}  {:<15} {:>6} {:>7} {:>7} {:>7}\n", "model",
             "metric", "estimate", "lower", "upper", "method", "delta", "n", "queries", "reveals");
  for (const EvalAnswer& a : r.answers) {
    fmt::print("{:<20} {:<17} {:>10} {:>10} {:>10}  {:<15} {:>6} {:>7} {:>7} {:>7}\n", a.model,
               a.metric, Num(a.estimate), Num(a.lower), Num(a.upper), a.method, Num(a.delta), a.n,
               a.queries, a.reveals_before);
  }
  for (const EvalAnswer& a : r.answers) {
    if (a.mode == "ladder") {
      fmt::print(
          "ladder: {} {} the board; its value is {} (step {}), held by {}; the interval is for "
          "the leader's true {}\n",
          a.model, a.improved ? "moved" : "did not move", Num(a.estimate), Num(a.ladder_step),
          a.leader, a.metric);
    }
    if (a.repeated) {
      fmt::print(
          "note: {} was asked this before (entry {}); answered from the ledger, no budget spent\n",
          a.model, a.repeat_of);
    }
    if (a.contaminated) {
      fmt::print(
          "CONTAMINATED: {}: {}\n", a.model,
          a.taints.empty() ? std::string("evaluated before under an override") : a.taints[0]);
    }
    if (a.outside_range) {
      fmt::print(
          "warning: {}: some holdout rows fell outside the loss range [{}, {}] ({}) and were "
          "clipped into it; the bound is about the clipped loss, not the true one\n",
          a.model, Num(a.range_lo), Num(a.range_hi), a.range_source);
    }
  }
  fmt::print(
      "Holdout queries: {} of {} used ({} by this call{}). With probability at least 1-delta "
      "(delta = {}, fixed at seal), every interval this ledger has shown or will show holds at "
      "once; each is final when shown{}.\n",
      r.queries_total, r.budget, r.queries_spent,
      r.budget_raises == 0
          ? std::string()
          : fmt::format("; the budget was raised {} times after the seal", r.budget_raises),
      r.answers.empty() ? std::string("-") : Num(r.answers.back().delta),
      std::any_of(r.answers.begin(), r.answers.end(),
                  [](const EvalAnswer& a) { return a.mode == "thresholdout"; })
          ? " (a Thresholdout interval only while fewer than B of its run's queries overfit, "
            "which the tool cannot check: see its assumptions)"
          : "");
  PrintConfinement(r);
  fmt::print(
      "The bounds assume the holdout is an independent sample of the population the model will "
      "meet; no bound corrects a sampling bias.\n");
}

}  // namespace

Runner SetupEval(CLI::App& app) {
  auto opt = std::make_shared<EvalOptions>();
  CLI::App* cmd =
      app.add_subcommand("eval", "Score frozen models on the sealed holdout, with bounds");
  cmd->add_option("models", opt->req.models, "Frozen models to evaluate together (one batch)");
  AddKeyOptions(cmd, &opt->key_file);
  cmd->add_option("--metric", opt->req.metric,
                  "error_rate, accuracy, balanced_accuracy, log_loss, brier, auc, mse, mae");
  cmd->add_option("--method", opt->req.method,
                  "hoeffding, clopper-pearson, bernstein (mcdiarmid for auc)");
  cmd->add_option("--delta", opt->req.delta,
                  "The ledger's delta, fixed at seal (--budget-delta); given, it must match");
  cmd->add_option("--range", opt->range,
                  "Regression: the target range LO:HI (default: the source's)");
  cmd->add_option("--prob-floor", opt->req.prob_floor,
                  "Log loss: probabilities are clipped to [P, 1-P]")
      ->capture_default_str();
  cmd->add_option("--accept-contamination", opt->req.accept_contamination,
                  "Evaluate tainted models anyway; REASON is recorded and the result marked "
                  "contaminated forever");
  cmd->add_flag("--ladder", opt->req.ladder,
                "Answer as a Ladder leaderboard: a new value only when a submission beats the "
                "board by a step");
  cmd->add_option("--ladder-step", opt->ladder_step, "The Ladder's step in the metric's units");
  cmd->add_flag("--thresholdout", opt->req.thresholdout,
                "Answer through Thresholdout: the training-rows loss unless the holdout disagrees");
  cmd->add_option("--thresholdout-budget", opt->req.thresholdout_budget,
                  "Thresholdout's B: answers that may use the holdout")
      ->capture_default_str();
  cmd->add_option("--train-data", opt->req.train_data,
                  "Thresholdout: the models' training rows (default: the dev file)");
  cmd->add_option("--command", opt->external.command,
                  "An external predictor: a shell command reading holdout features on stdin");
  cmd->add_option("--attach", opt->external.attach,
                  "Files the external predictor uses (their digests are its identity)");
  cmd->add_option("--name", opt->external.name, "Name of the external predictor");
  cmd->add_option("--timeout", opt->external.timeout_seconds,
                  "Seconds the external predictor may run")
      ->capture_default_str();
  AddCommonOptions(cmd, &opt->common);
  return [opt, cmd]() -> Status {
    if (!cmd->parsed()) return Status::OK();
    EvalRequest req = opt->req;
    req.ledger_path = opt->common.ledger;
    req.actor = ActorName(opt->common);
    if (opt->ladder_step) {
      if (!opt->req.ladder) return Status::InvalidArgument("--ladder-step goes with --ladder");
      req.ladder_step = opt->ladder_step;
    }
    if (!opt->range.empty()) {
      UNSEEN_ASSIGN_OR_RETURN(req.range, ParseRange(opt->range));
    }
    if (!opt->external.command.empty()) {
      if (opt->external.name.empty())
        return Status::InvalidArgument("--command: expected --name NAME too");
      req.external = opt->external;
    } else if (!opt->external.name.empty() || !opt->external.attach.empty()) {
      return Status::InvalidArgument("--name and --attach go with --command");
    }
    auto key = ResolveKey(opt->key_file, /*confirm=*/false);
    if (key.ok()) {
      req.key = *key;
    } else if (!opt->key_file.empty()) {
      return key.status();
    }
    UNSEEN_ASSIGN_OR_RETURN(EvalReport r, EvaluateModels(req));
    if (opt->common.json) {
      // One object per model; the batch's totals are repeated in each.
      nlohmann::json out = nlohmann::json::array();
      for (const EvalAnswer& a : r.answers) {
        nlohmann::json j = AnswerReportJson(a);
        j["queries_spent"] = r.queries_spent;
        j["budget"] = r.budget;
        j["budget_raises"] = r.budget_raises;
        j["head"] = ToHex(r.head);
        if (a.kind == "external" && !r.confinement.empty()) j["confinement"] = ConfinementJson(r);
        out.push_back(j);
      }
      fmt::print("{}\n", out.dump());
      return Status::OK();
    }
    PrintText(r);
    return Status::OK();
  };
}

}  // namespace unseen::cli
