// The named steps of the `eval` command (workflow/eval.h), shared by its
// files: eval.cc runs them in order, eval_plan.cc works out what is asked
// and what it costs before any holdout value is read, eval_reuse.cc keeps
// the Ladder's and Thresholdout's state, eval_answer.cc turns each query
// into the answer shown and recorded. Internal to the eval command; all of
// it runs inside the command's one ledger transaction. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_EVAL_STEPS_H_
#define UNSEEN_HARNESS_WORKFLOW_EVAL_STEPS_H_

#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "harness/bounds/ladder.h"
#include "harness/bounds/metric_bound.h"
#include "harness/bounds/thresholdout.h"
#include "harness/evaluate/guard.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/entries.h"
#include "harness/ledger/ledger_state.h"
#include "harness/workflow/eval.h"
#include "storage/ledger.h"

namespace unseen::internal {

// One answer already in the ledger.
struct PastAnswer {
  int64_t entry = 0;        // the eval entry that holds it
  EvalAnswerRecord record;  // as recorded
  bool reveal() const { return record.reveal(); }
};

// A model to query: frozen or external.
struct Query {
  std::string name, kind;  // kind: "frozen" or "external"
  Digest256 digest{};
  int64_t frozen_at = 0;                // the fit entry; for external predictors, this eval
  nlohmann::json model;                 // frozen: the model JSON; external: its identity
  std::shared_ptr<FrozenModel> frozen;  // frozen models, ready to apply
  std::vector<std::string> taints;
  const PastAnswer* repeat = nullptr;  // the earlier answer to the same question
  // External predictors with attached files, checked with the key for
  // holdout rows: whether they hold any is one bit the answer (or the
  // refusal) shows, counted in its code length.
  bool attachments_checked = false;
  bool attachments_hold_holdout_rows = false;
  // New questions only (harness/bounds/accounting.h): the answer's number
  // j, ln(delta / delta_j), the question's code length, and their sum.
  uint64_t answer_index = 0;
  double log_share = 0;
  double log_question = 0;
  double log_hypotheses = 0;
};

// The metric, its bound and its range, fixed before any holdout value is read.
struct MetricSetup {
  Metric metric;
  BoundMethod method;
  RangeOptions range;
  MetricSample probe;  // range_lo / range_hi only
};

// The Ladder for this call's metric: replayed from earlier answers, then
// advanced by this call's.
struct LadderRun {
  LadderParams params;
  std::optional<double> value;  // the leaderboard value so far
  double lower = 0, upper = 0;  // the interval shown when the leader set it
  std::string leader;
  uint64_t used = 0;  // submissions answered before this call
  bool started = false;
};

// Thresholdout's settings (fixed at its first answer) and its secret state.
// A run is the answers from one start: it ends after m answers, when its
// overfitting budget is spent, or when the ledger gives any other answer.
struct ThresholdoutRun {
  ThresholdoutParams params;
  ThresholdoutState state;
  bool started = false;     // a run is active (read from the ledger or started now)
  uint64_t run_start = 0;   // the answer_index of the run's first answer
  uint64_t answered = 0;    // the run's answers before this call
  std::vector<bool> used_holdout;  // per answer of this call
  std::string aad;                 // binds the sealed state to this ledger
};

// What one answer shows, whatever the mode; FillAnswer() adds what every
// answer carries and makes the EvalAnswer and its recorded JSON from it.
struct Shown {
  uint64_t n = 0;
  double estimate = 0, lower = 0, upper = 0, step = 0;
  double range_lo = 0, range_hi = 1;
  std::string range_source;
  double target_lo = 0, target_hi = 0, prob_floor = 0;  // the question's
  bool outside_range = false;
  uint64_t answer_index = 0, reveals_before = 0;
  double log_share = 0, log_transcript = 0, log_question = 0, log_hypotheses = 0;
  std::string mode = "plain";
  bool improved = false;
  std::string leader;
  double ladder_step = 0, tau = 0;
  std::string assumptions;
  std::optional<double> code_length;                // nats shown: absent for a repeat
  std::optional<uint64_t> ladder_max_submissions;   // Ladder answers only
  int64_t repeat_of = 0;                            // 0: a new answer
  bool was_contaminated = false;                    // a repeat of a contaminated answer
};

// Everything one `eval` call knows, step by step.
struct EvalRun {
  const EvalRequest* req = nullptr;
  std::unique_ptr<Ledger> ledger;
  LedgerState st;
  MetricSetup setup;
  std::string metric_name, method_name;
  std::vector<PastAnswer> past;
  std::vector<Query> queries;
  uint64_t new_queries = 0;  // queries that are not repeats
  EvalReport report;
  LadderRun ladder;
  ThresholdoutRun tho;
  double delta = 0.05;          // the ledger's, fixed at seal, shared by every answer
  uint64_t reveals_before = 0;  // answers shown before this call
  double log_transcript = 0;    // their code length L, in nats
  double log_h = 0;             // the largest log_hypotheses of this call's new questions
  // ln(models frozen before the ledger's first answer x kinds of default
  // question): absent before the first answer.
  std::optional<double> log_advance_choices;
  int64_t first_answer_entry = 0;  // the eval entry of the ledger's first answer
  std::optional<Key> key;
  std::unique_ptr<HoldoutGuard> guard;
  std::optional<AdmittedData> train_rows;  // Thresholdout: loaded on first use
  std::vector<EvalAnswerRecord> answers;  // as recorded
  std::vector<BlobRef> blobs;
  std::optional<ExternalRun> external_run;  // eval --command, once it was run
};

// --- eval_plan.cc: what is asked, before any holdout value is read ---

// The metric, bound method, delta and range; InvalidArgument naming the option.
Result<MetricSetup> SetUpMetric(const EvalRequest& req, const LedgerState& st);
// Options that exclude each other or do not fit the metric: InvalidArgument.
Status CheckModes(const EvalRun& run);
// Every answer in earlier eval entries. Corruption for a malformed entry, or
// a reveal without the number of values it could show (code_length).
Result<std::vector<PastAnswer>> PastAnswers(const Ledger& ledger);
// The frozen models and the external predictor, with their lineage's taints,
// and which questions were asked before; sets run->new_queries.
Status PlanQueries(EvalRun* run);
// Numbers this call's new questions and gives each its level
// (harness/bounds/accounting.h): the code length of every answer shown
// before this call, and each answer's share of delta.
Status PlaceAnswers(EvalRun* run);

// --- eval.cc: refusals (each rolls back and appends a `refusal` entry) ---

// Refused(why) after recording it; the command's transaction is rolled back.
Status Refuse(EvalRun* run, const std::string& why, const nlohmann::json& details);

// --- eval_reuse.cc: the Ladder's and Thresholdout's state ---

// Replays the Ladder for this metric from earlier answers; with --ladder,
// checks its step and refuses past its submissions.
Status ReplayLadder(EvalRun* run);
// Thresholdout's settings and sealed state from earlier entries (or fresh
// ones); refuses when its budget is spent. Needs the key.
Status LoadThresholdout(EvalRun* run);
// Seals Thresholdout's state with the key into a blob (added to
// run->blobs) and returns the entry's record of it.
Result<EvalThresholdout> SealThresholdoutState(EvalRun* run);
// A model's mean loss on its training rows, on the [0, 1] scale of the
// metric's range: the "training set" value Thresholdout compares with.
Result<double> TrainingMean(EvalRun* run, const Query& q);
// A uniform draw in (0, 1) from the operating system's random source.
Result<double> UniformDraw();

// --- eval_exposure.cc: a failure on the holdout, recorded ---

// Rolls the command's transaction back, appends an `exposure` entry for
// query `q` (the rows an external predictor received, the value-free
// reason) and returns InvalidArgument saying so ("model 'NAME': REASON; ...
// recorded as entry N"); the ledger's error if it cannot be recorded.
Status RecordFailure(EvalRun* run, const Query& q, const Status& error);
// The protections of the predictor's run as the ledger records them.
ConfinementRecord ConfinementOf(const ExternalRun& run);

// --- eval_answer.cc: one answer per query ---

// The answer to query `q`: repeated from the ledger, or read through the
// guard and shown as the mode shows it. Appends to run->answers and
// run->report.answers. REQUIRES: run->guard is open if q is not a repeat.
Status AnswerQuery(EvalRun* run, const Query& q);

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_WORKFLOW_EVAL_STEPS_H_
