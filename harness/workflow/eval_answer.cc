// One answer per query of an `eval` call. Each mode (a repeat, a plain
// bound, the Ladder, Thresholdout) says what it shows; FillAnswer() is the
// one place that makes the answer and its recorded form from that.
#include <chrono>
#include <cmath>
#include <cstring>

#include "harness/bounds/accounting.h"
#include "harness/bounds/adaptivity.h"
#include "harness/bounds/bounds.h"
#include "harness/workflow/eval_steps.h"
#include "storage/seal_crypto.h"

namespace unseen::internal {

using json = nlohmann::json;

namespace {

// An answer as the ledger records it (one of an eval entry's answers).
EvalAnswerRecord RecordOf(const EvalAnswer& a, const Shown& s) {
  EvalAnswerRecord r;
  r.model = a.model;
  r.kind = a.kind;
  r.model_digest = a.model_digest;
  r.metric = a.metric;
  r.method = a.method;
  r.delta = a.delta;
  r.n = a.n;
  r.estimate = a.estimate;
  r.lower = a.lower;
  r.upper = a.upper;
  r.step = a.step;
  r.range_lo = a.range_lo;
  r.range_hi = a.range_hi;
  r.range_source = a.range_source;
  r.target_lo = s.target_lo;
  r.target_hi = s.target_hi;
  r.prob_floor = s.prob_floor;
  r.outside_range = a.outside_range;
  r.queries = a.queries;
  r.answer_index = a.answer_index;
  r.log_share = a.log_share;
  r.reveals_before = a.reveals_before;
  r.log_transcript = a.log_transcript;
  r.log_question = a.log_question;
  r.log_hypotheses = a.log_hypotheses;
  if (a.repeated) r.repeat_of = a.repeat_of;
  r.contaminated = a.contaminated;
  r.taints = a.taints;
  r.mode = a.mode;
  r.improved = a.improved;
  r.leader = a.leader;
  r.ladder_step = a.ladder_step;
  r.tau = a.tau;
  r.code_length = s.code_length;
  r.ladder_max_submissions = s.ladder_max_submissions;
  return r;
}

// The one place an answer's fields are filled, for every mode.
void FillAnswer(EvalRun* run, const Query& q, const Shown& s) {
  EvalAnswer a;
  a.model = q.name;
  a.kind = q.kind;
  a.model_digest = q.digest;
  a.metric = run->metric_name;
  a.method = run->method_name;
  a.delta = run->delta;
  a.taints = q.taints;
  a.contaminated = !q.taints.empty() || s.was_contaminated;
  a.queries = run->report.queries_total;
  a.repeated = s.repeat_of != 0;
  a.repeat_of = s.repeat_of;
  a.n = s.n;
  a.estimate = s.estimate;
  a.lower = s.lower;
  a.upper = s.upper;
  a.step = s.step;
  a.range_lo = s.range_lo;
  a.range_hi = s.range_hi;
  a.range_source = s.range_source;
  a.outside_range = s.outside_range;
  a.answer_index = s.answer_index;
  a.log_share = s.log_share;
  a.reveals_before = s.reveals_before;
  a.log_transcript = s.log_transcript;
  a.log_question = s.log_question;
  a.log_hypotheses = s.log_hypotheses;
  a.mode = s.mode;
  a.improved = s.improved;
  a.leader = s.leader;
  a.ladder_step = s.ladder_step;
  a.tau = s.tau;
  a.assumptions = s.assumptions;
  run->answers.push_back(RecordOf(a, s));
  run->report.answers.push_back(std::move(a));
}

// What every new answer shows about the sample and its place in the accounting.
Shown NewShown(const EvalRun& run, const Query& q, const MetricSample& sample) {
  Shown s;
  s.n = sample.n;
  s.range_lo = sample.range_lo;
  s.range_hi = sample.range_hi;
  s.range_source = "metric";
  s.target_lo = run.setup.range.target_lo;
  s.target_hi = run.setup.range.target_hi;
  s.prob_floor = run.setup.range.prob_floor;
  // Whether a row was clipped is shown by plain answers only, whose code
  // length counts it (RevealAnswer); the Ladder's and Thresholdout's codes
  // have no room for it, and Thresholdout's theorem assumes the analyst sees
  // its answers alone.
  s.outside_range = run.req->ladder || run.req->thresholdout ? false : sample.outside_range > 0;
  s.answer_index = q.answer_index;
  s.log_share = q.log_share;
  s.reveals_before = run.reveals_before;
  s.log_transcript = run.log_transcript;
  s.log_question = q.log_question;
  s.log_hypotheses = q.log_hypotheses;
  return s;
}

// A question asked before: the earlier answer, revealing nothing new.
Shown RepeatShown(const PastAnswer& p) {
  const EvalAnswerRecord& b = p.record;
  Shown s;
  s.repeat_of = p.entry;
  s.n = b.n;
  s.estimate = b.estimate;
  s.lower = b.lower;
  s.upper = b.upper;
  s.step = b.step;
  s.range_lo = b.range_lo;
  s.range_hi = b.range_hi;
  s.range_source = b.range_source;
  s.target_lo = b.target_lo;
  s.target_hi = b.target_hi;
  s.prob_floor = b.prob_floor;
  s.outside_range = b.outside_range;
  s.answer_index = b.answer_index;
  s.log_share = b.log_share;
  s.reveals_before = b.reveals_before;
  s.log_transcript = b.log_transcript;
  s.log_question = b.log_question;
  s.log_hypotheses = b.log_hypotheses;
  s.mode = b.mode;
  s.improved = b.improved;
  s.leader = b.leader;
  s.ladder_step = b.ladder_step;
  s.tau = b.tau;
  s.was_contaminated = b.contaminated;
  s.assumptions = "answered from entry " + std::to_string(p.entry) +
                  ": the same question was asked before, so nothing new is revealed; the "
                  "interval is final when shown and still holds together with every other";
  return s;
}

// The metric's sample of a model or an external predictor on the holdout.
Result<MetricSample> Sample(EvalRun* run, const Query& q) {
  Result<MetricSample> sample = Status::Internal("unset");
  if (q.kind == "external") {
    const ExternalModelRequest& ext = *run->req->external;
    ExternalPredictor predictor;
    predictor.name = ext.name;
    predictor.command = ext.command;
    predictor.attached = ext.attach;
    if (run->req->key) predictor.keep_out.push_back(run->req->key->key_file);
    predictor.timeout =
        std::chrono::milliseconds(static_cast<int64_t>(ext.timeout_seconds * 1000));
    UNSEEN_ASSIGN_OR_RETURN(std::string seed, RandomBytes(8));
    std::memcpy(&predictor.shuffle_seed, seed.data(), 8);
    run->external_run.emplace();
    sample = run->guard->EvaluateExternal(predictor, run->setup.metric, run->setup.range,
                                          &*run->external_run);
  } else {
    sample = run->guard->EvaluateModel(*q.frozen, run->setup.metric, run->setup.range);
  }
  if (!sample.ok()) return RecordFailure(run, q, sample.status());  // eval_exposure.cc
  return sample;
}

// The guarantee every new answer shares (docs/bounds.md, "One accounting").
std::string Guarantee(const EvalRun& run, const Query& q) {
  return "With probability at least 1 - delta (delta = " + std::to_string(run.delta) +
         ", fixed at seal) every interval this ledger has shown or will show holds at once. "
         "This is answer " +
         std::to_string(q.answer_index) + ", given delta_j = delta * exp(-" +
         std::to_string(q.log_share) + ") and asked after " + std::to_string(run.reveals_before) +
         " answers of " + std::to_string(run.log_transcript) + " nats, its question coded in " +
         std::to_string(q.log_question) + " nats: its level is delta * exp(-" +
         std::to_string(q.log_hypotheses) + "). ";
}

// A plain answer: the estimate and interval on the reveal grid.
Result<Shown> PlainShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  const MetricSetup& setup = run->setup;
  UNSEEN_ASSIGN_OR_RETURN(RevealedAnswer shown,
                          RevealAnswer(sample, setup.method, run->delta, q.log_hypotheses));
  UNSEEN_ASSIGN_OR_RETURN(Bound b, MetricBound(sample, setup.method, run->delta, q.log_hypotheses));
  Shown s = NewShown(*run, q, sample);
  s.estimate = shown.estimate;
  s.lower = shown.lower;
  s.upper = shown.upper;
  s.step = shown.step;
  if (setup.metric == Metric::kMse || setup.metric == Metric::kMae) {
    s.range_source = setup.range.target_range_source;
  } else if (setup.metric == Metric::kLogLoss) {
    s.range_source = "prob-floor";
  }
  s.assumptions = Guarantee(*run, q) + b.assumptions;
  s.code_length = PlainAnswerCodeLength(shown.log_values);
  return s;
}

// Algorithm 1 of the Ladder on the loss; the interval is for the leader's
// true loss, set when the leader took the board and shown unchanged until
// another does.
Result<Shown> LadderShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  LadderRun& l = run->ladder;
  const double w = l.params.range_hi - l.params.range_lo;
  UNSEEN_ASSIGN_OR_RETURN(double eps, OneSidedHoeffdingEpsilon(sample.n, w, run->delta,
                                                               q.log_hypotheses + std::log(2.0)));
  LadderStepResult step = LadderStep(l.value, sample.mean, l.params.step);
  l.value = step.released;
  if (step.improved) {
    l.leader = q.name;
    const double half = l.params.step / 2 + eps;
    l.lower = std::fmax(sample.range_lo, step.released - half);
    l.upper = std::fmin(sample.range_hi, step.released + half);
  }
  Shown s = NewShown(*run, q, sample);
  s.mode = "ladder";
  s.improved = step.improved;
  s.leader = l.leader;
  s.ladder_step = l.params.step;
  s.estimate = step.released;
  s.lower = l.lower;
  s.upper = l.upper;
  s.step = l.params.step;
  s.assumptions =
      Guarantee(*run, q) +
      "The Ladder (Blum & Hardt 2015): the interval is for the leader's true loss, computed "
      "when it took the board; the holdout rows are an independent sample of the population "
      "the model will meet, and no bound corrects a sampling bias.";
  // A ladder answer is "no change" or one of the grid's values.
  const uint64_t grid = static_cast<uint64_t>(std::floor(w / l.params.step)) + 2;
  s.code_length = LadderAnswerCodeLength(step.improved, l.params.max_submissions, grid);
  s.ladder_max_submissions = l.params.max_submissions;
  return s;
}

// Thresholdout: the training-rows value unless the holdout disagrees beyond
// the noisy threshold. LoadThresholdout() made sure the run's budget covers
// every query of the call before any noise is drawn.
Result<Shown> ThresholdoutShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  ThresholdoutRun& t = run->tho;
  if (t.state.budget_left == 0) {
    return Status::Internal("thresholdout: budget checked before the batch, yet spent");
  }
  UNSEEN_ASSIGN_OR_RETURN(double train, TrainingMean(run, q));
  const double w = sample.range_hi - sample.range_lo;
  const double holdout = (sample.mean - sample.range_lo) / w;
  double draws[3];
  for (double& d : draws) {
    UNSEEN_ASSIGN_OR_RETURN(d, UniformDraw());
  }
  const double sigma = t.params.sigma;
  ThresholdoutAnswer answer =
      ThresholdoutQuery(train, holdout, t.params, Laplace(draws[0], 4 * sigma),
                        Laplace(draws[1], sigma), Laplace(draws[2], 2 * sigma), &t.state);
  t.used_holdout.push_back(answer.used_holdout);
  Shown s = NewShown(*run, q, sample);
  s.mode = "thresholdout";
  s.tau = t.params.tau;
  s.step = w / static_cast<double>(kRevealGridPoints - 1);
  s.estimate =
      RoundToResolution(sample.range_lo + w * answer.value, s.step, sample.range_lo, sample.range_hi);
  // Theorem 25 bounds the unrounded answer; the shown one is within step/2 of it.
  const double half = w * t.params.tau + s.step / 2;
  s.lower = std::fmax(sample.range_lo, s.estimate - half);
  s.upper = std::fmin(sample.range_hi, s.estimate + half);
  s.assumptions =
      "Thresholdout (Dwork et al. 2015, Theorem 25): this run began at answer " +
      std::to_string(t.run_start) + " with beta = delta_j * exp(-Q_j) of that answer (" +
      std::to_string(t.params.beta) + "); with probability at least 1 - beta each of its m = " +
      std::to_string(t.params.m) + " answers is within tau = " + std::to_string(t.params.tau) +
      " of the true value (on the [0, 1] scale of the metric's range, plus half a grid step), "
      "for any adaptive analyst, unless B = " +
      std::to_string(t.params.budget) +
      " or more of the queries so far overfit (their true loss differs from their training loss "
      "by more than tau/2), which the tool cannot check; the holdout rows are an independent "
      "sample of the population the model will meet, and no bound corrects a sampling bias.";
  s.code_length = ThresholdoutAnswerCodeLength(answer.used_holdout, t.params.m,
                                               std::log(static_cast<double>(kRevealGridPoints)));
  return s;
}

}  // namespace

Status AnswerQuery(EvalRun* run, const Query& q) {
  if (q.repeat) {
    FillAnswer(run, q, RepeatShown(*q.repeat));
    return Status::OK();
  }
  UNSEEN_ASSIGN_OR_RETURN(MetricSample sample, Sample(run, q));
  Result<Shown> shown = run->req->thresholdout ? ThresholdoutShown(run, q, sample)
                        : run->req->ladder     ? LadderShown(run, q, sample)
                                               : PlainShown(run, q, sample);
  if (!shown.ok()) return shown.status();
  if ((run->req->ladder || run->req->thresholdout) && CanFallOutsideRange(run->setup.metric)) {
    shown->assumptions +=
        " The loss is clipped into its range; in this mode the answer does not say whether any "
        "holdout row was clipped, and the interval is about the clipped loss.";
  }
  // It could have failed instead (an exposure): see NoFailureCodeLength().
  if (shown->code_length) *shown->code_length += NoFailureCodeLength();
  if (q.attachments_checked && shown->code_length) {
    // The answer also shows that the attached files hold no holdout rows
    // (or, under --accept-contamination, that they do): one bit.
    *shown->code_length += std::log(2.0);
  }
  FillAnswer(run, q, *shown);
  return Status::OK();
}

}  // namespace unseen::internal
