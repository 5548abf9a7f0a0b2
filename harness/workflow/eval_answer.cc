// One answer per query of an `eval` call. Each mode (a repeat, a plain
// bound, the Ladder, Thresholdout) says what it shows; FillAnswer() is the
// one place that makes the answer and its recorded form from that.
#include <chrono>
#include <cmath>
#include <cstring>

#include "harness/bounds/adaptivity.h"
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
  r.outside_range = a.outside_range;
  r.queries = a.queries;
  r.reveals_before_freeze = a.reveals_before_freeze;
  r.log_weight = a.log_weight;
  r.log_hypotheses = a.log_hypotheses;
  if (a.repeated) r.repeat_of = a.repeat_of;
  r.contaminated = a.contaminated;
  r.taints = a.taints;
  r.mode = a.mode;
  r.improved = a.improved;
  r.leader = a.leader;
  r.ladder_step = a.ladder_step;
  r.tau = a.tau;
  r.log_values = s.log_values;
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
  a.delta = run->req->delta;
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
  a.reveals_before_freeze = s.reveals_before_freeze;
  a.log_weight = s.log_weight;
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

// What every new answer shows about the sample and the query's adaptivity.
Shown NewShown(const Query& q, const MetricSample& sample, double log_hypotheses) {
  Shown s;
  s.n = sample.n;
  s.range_lo = sample.range_lo;
  s.range_hi = sample.range_hi;
  s.range_source = "metric";
  s.outside_range = sample.outside_range;
  s.reveals_before_freeze = q.reveals_before;
  s.log_weight = q.log_weight;
  s.log_hypotheses = log_hypotheses;
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
  s.outside_range = b.outside_range;
  s.reveals_before_freeze = b.reveals_before_freeze;
  s.log_weight = b.log_weight;
  s.log_hypotheses = b.log_hypotheses;
  s.mode = b.mode;
  s.improved = b.improved;
  s.leader = b.leader;
  s.ladder_step = b.ladder_step;
  s.tau = b.tau;
  s.was_contaminated = b.contaminated;
  s.assumptions = "answered from entry " + std::to_string(p.entry) +
                  ": the same question was asked before, so nothing new is revealed";
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

// A plain answer: the estimate and interval on the reveal grid.
Result<Shown> PlainShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  const MetricSetup& setup = run->setup;
  UNSEEN_ASSIGN_OR_RETURN(Bound b, MetricBound(sample, setup.method, run->req->delta, run->log_h));
  RevealedAnswer shown = RevealAnswer(sample, b, setup.method);
  Shown s = NewShown(q, sample, run->log_h);
  s.estimate = shown.estimate;
  s.lower = shown.lower;
  s.upper = shown.upper;
  s.step = shown.step;
  if (setup.metric == Metric::kMse || setup.metric == Metric::kMae) {
    s.range_source = setup.range.target_range_source;
  } else if (setup.metric == Metric::kLogLoss) {
    s.range_source = "prob-floor";
  }
  s.assumptions = b.assumptions;
  s.log_values = shown.log_values;
  return s;
}

// Algorithm 1 of the Ladder on the loss; the interval is for the leader's true loss.
Result<Shown> LadderShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  LadderRun& l = run->ladder;
  UNSEEN_ASSIGN_OR_RETURN(double eps, LadderEpsilon(sample.n, run->req->delta, l.params));
  LadderStepResult step = LadderStep(l.value, sample.mean, l.params.step);
  l.value = step.released;
  if (step.improved) l.leader = q.name;
  const double half = l.params.step / 2 + eps;
  Shown s = NewShown(q, sample, LadderLogSubmissions(l.params));
  s.mode = "ladder";
  s.improved = step.improved;
  s.leader = l.leader;
  s.ladder_step = l.params.step;
  s.estimate = step.released;
  s.lower = std::fmax(sample.range_lo, step.released - half);
  s.upper = std::fmin(sample.range_hi, step.released + half);
  s.step = l.params.step;
  s.assumptions =
      "The Ladder (Blum & Hardt 2015): the interval holds for the leader's true loss, "
      "together with every submission the ladder can answer (" +
      std::to_string(l.params.max_submissions) +
      "), for any adaptive analyst; the holdout rows are an independent sample of the "
      "population the model will meet, and no bound corrects a sampling bias.";
  // A ladder answer is one of the grid's values or "no change".
  s.log_values =
      std::log(std::floor((l.params.range_hi - l.params.range_lo) / l.params.step) + 3);
  s.ladder_max_submissions = l.params.max_submissions;
  return s;
}

// Thresholdout: the training-rows value unless the holdout disagrees beyond
// the noisy threshold. Refused when its budget runs out inside the batch.
Result<Shown> ThresholdoutShown(EvalRun* run, const Query& q, const MetricSample& sample) {
  ThresholdoutRun& t = run->tho;
  if (t.state.budget_left == 0) {
    return Refuse(run,
                  "thresholdout's overfitting budget (B = " + std::to_string(t.params.budget) +
                      ") ran out in this batch at model '" + q.name + "'",
                  json{{"thresholdout_budget", t.params.budget}});
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
  Shown s = NewShown(q, sample, run->log_h);
  s.mode = "thresholdout";
  s.tau = t.params.tau;
  s.step = w / static_cast<double>(kRevealGridPoints - 1);
  s.estimate =
      RoundToResolution(sample.range_lo + w * answer.value, s.step, sample.range_lo, sample.range_hi);
  s.lower = std::fmax(sample.range_lo, s.estimate - w * t.params.tau);
  s.upper = std::fmin(sample.range_hi, s.estimate + w * t.params.tau);
  s.assumptions =
      "Thresholdout (Dwork et al. 2015, Theorem 25): with probability at least 1 - delta, "
      "every answer is within tau = " +
      std::to_string(t.params.tau) +
      " (on the [0, 1] scale of the metric's range) of the true value while fewer than B = " +
      std::to_string(t.params.budget) + " answers used the holdout, over m = " +
      std::to_string(t.params.m) +
      " queries from any adaptive analyst; the holdout rows are an independent sample "
      "of the population the model will meet, and no bound corrects a sampling bias.";
  s.log_values = std::log(static_cast<double>(kRevealGridPoints));
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
  FillAnswer(run, q, *shown);
  return Status::OK();
}

}  // namespace unseen::internal
