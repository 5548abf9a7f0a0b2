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
  // The ledger's delta is fixed at seal and shared by every answer; a value
  // given here must equal it (InvalidArgument otherwise).
  std::optional<double> delta;
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
  double delta = 0;  // the ledger's
  uint64_t n = 0;
  double estimate = 0, lower = 0, upper = 0;  // as shown: on the reveal grid
  double step = 0;
  uint64_t queries = 0;  // holdout queries the ledger has answered, this call's included
  // The accounting (harness/bounds/accounting.h, docs/bounds.md): the
  // answer's number j, ln(delta / delta_j), the answers shown before the
  // question was asked and their code length L, the question's code length;
  // the interval holds at level delta * exp(-log_hypotheses), with
  // log_hypotheses = log_share + log_question.
  uint64_t answer_index = 0;
  double log_share = 0;
  uint64_t reveals_before = 0;
  double log_transcript = 0;
  double log_question = 0;  // the question's code length
  double log_hypotheses = 0;
  double range_lo = 0, range_hi = 1;   // the metric's range
  std::string range_source;
  bool outside_range = false;  // mse, mae: some value fell outside the range and was clipped
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
