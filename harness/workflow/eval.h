// EvaluateModels: the `eval` command. Scores frozen models (and external
// predictors) on the sealed holdout through the evaluation guard and
// reports each score with an interval that accounts for every holdout query
// made so far and for how adaptively each model could have been chosen
// (docs/bounds.md). Refuses tainted models and queries past the budget,
// answers a repeated query from the ledger, and appends one `eval` entry
// per call. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_EVAL_H_
#define UNSEEN_HARNESS_WORKFLOW_EVAL_H_

#include <cstdint>
#include <optional>
#include <string>
#include <vector>

#include "harness/evaluate/confine.h"
#include "harness/ledger/keys.h"
#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

// An external predictor for `eval --command`: its identity is the command
// line and the SHA-256 of each attached file.
struct ExternalModelRequest {
  std::string name;
  std::string command;
  std::vector<std::string> attach;
  double timeout_seconds = 60;
};

struct EvalRequest {
  std::string ledger_path;
  std::string actor;
  std::vector<std::string> models;  // frozen model names
  std::optional<ExternalModelRequest> external;
  std::optional<KeySpec> key;  // needed unless every query is a repeat
  std::string metric;          // empty: error_rate or mse
  std::string method;          // empty: the metric's default
  double delta = 0.05;
  std::optional<std::pair<double, double>> range;  // regression target range; else the source's
  double prob_floor = 1e-4;                        // log loss
  std::string accept_contamination;                // non-empty: evaluate tainted models anyway
  // Ladder mode: submissions answered by the Ladder (harness/bounds/ladder.h).
  bool ladder = false;
  std::optional<double> ladder_step;  // eta in the loss's units; default the C = 1 step
  // Thresholdout mode: each model's training-rows loss (from train_data, the
  // dev file by default) is compared with the holdout's (harness/bounds/thresholdout.h).
  bool thresholdout = false;
  uint64_t thresholdout_budget = 10;  // B: answers that may use the holdout
  std::string train_data;
};

struct EvalAnswer {
  std::string model;
  std::string kind;  // "frozen" (a pipeline or a blend) or "external"
  Digest256 model_digest{};
  std::string metric, method;
  double delta = 0;
  uint64_t n = 0;
  double estimate = 0, lower = 0, upper = 0;  // as shown: on the reveal grid
  double step = 0;
  uint64_t queries = 0;                // holdout queries the bound accounts for
  uint64_t reveals_before_freeze = 0;  // answers shown before this model was frozen
  double log_hypotheses = 0;           // ln H of the union bound
  double log_weight = 0;               // this query's share: sum of ln R over those reveals
  double range_lo = 0, range_hi = 1;   // the metric's range
  std::string range_source;
  uint64_t outside_range = 0;
  bool repeated = false;  // answered from an earlier eval entry
  int64_t repeat_of = 0;
  bool contaminated = false;
  std::vector<std::string> taints;
  // Ladder mode: estimate is the leaderboard value; improved says whether
  // this submission set it; leader is the model that holds it.
  std::string mode = "plain";
  bool improved = false;
  std::string leader;
  double ladder_step = 0;
  double tau = 0;  // Thresholdout: the accuracy its guarantee gives
  std::string assumptions;
};

struct EvalReport {
  std::vector<EvalAnswer> answers;
  uint64_t queries_spent = 0;
  uint64_t queries_total = 0;
  uint64_t budget = 0;
  uint64_t budget_raises = 0;  // `budget` entries since the seal
  Digest256 head{};
  // eval --command: each protection of the predictor's run, and whether it held.
  std::vector<Protection> confinement;
};

// Refused (exit 1, after a `refusal` entry) for a tainted model without
// accept_contamination, or a batch that would pass the budget;
// InvalidArgument for bad options, an unknown model, a failed external
// predictor; WrongKey for a wrong key; FailedPrecondition before seal.
Result<EvalReport> EvaluateModels(const EvalRequest& request);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_WORKFLOW_EVAL_H_
