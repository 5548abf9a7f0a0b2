// The state the two reuse mechanisms carry from one `eval` call to the next:
// the Ladder's leaderboard, replayed from the answers in the ledger, and
// Thresholdout's noisy threshold and budget, sealed with the holdout key
// because a modeller who read them could aim at the threshold.
#include <cmath>
#include <cstring>

#include "harness/ledger/keys.h"
#include "harness/workflow/eval_steps.h"
#include "storage/seal_crypto.h"
#include "storage/sealed_blob.h"

namespace unseen::internal {

using json = nlohmann::json;

namespace {

// The Ladder's step and size come from its first answer for this metric;
// its value and leader from its latest.
Status ReplayLadderAnswers(EvalRun* run) {
  LadderRun& l = run->ladder;
  l.params.range_lo = run->setup.probe.range_lo;
  l.params.range_hi = run->setup.probe.range_hi;
  for (const PastAnswer& p : run->past) {
    const EvalAnswerRecord& a = p.record;
    if (!p.reveal() || a.mode != "ladder" || a.metric != run->metric_name ||
        a.target_lo != run->setup.range.target_lo || a.target_hi != run->setup.range.target_hi ||
        a.prob_floor != run->setup.range.prob_floor) {
      continue;  // another board: each metric and range keeps its own
    }
    if (!l.started) {
      if (!a.ladder_max_submissions) {
        return Status::Corruption("entry " + std::to_string(p.entry) +
                                  " (eval): a Ladder answer without 'ladder_max_submissions'");
      }
      l.params.step = a.ladder_step;
      l.params.max_submissions = *a.ladder_max_submissions;
      l.started = true;
    }
    l.value = a.estimate;
    l.leader = a.leader;
    if (a.improved) {
      l.lower = a.lower;
      l.upper = a.upper;
    }
    ++l.used;
  }
  return Status::OK();
}

// The latest Thresholdout run, if the ledger's latest answers belong to
// it: its settings, where it began, how many answers it gave, and its
// sealed state.
Status ReadThresholdoutRun(EvalRun* run) {
  ThresholdoutRun& t = run->tho;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<EvalBody>> evals,
                          ReadEntries<EvalBody>(*run->ledger));
  const Decoded<EvalBody>* latest = nullptr;
  for (const Decoded<EvalBody>& e : evals) {
    if (e.body.thresholdout) latest = &e;
  }
  if (latest == nullptr) return Status::OK();
  const EvalThresholdout& rec = *latest->body.thresholdout;
  // The run goes on only if no other answer came after its last one.
  if (rec.run_start + rec.run_answers != run->st.holdout_queries + 1) return Status::OK();
  t.params = rec.params;
  t.run_start = rec.run_start;
  t.answered = rec.run_answers;
  UNSEEN_ASSIGN_OR_RETURN(std::string blob, run->ledger->GetBlob(rec.state));
  UNSEEN_ASSIGN_OR_RETURN(std::string plain, OpenSealed(*run->key, t.aad, blob));
  json state = json::parse(plain, nullptr, /*allow_exceptions=*/false);
  const auto threshold = state.is_object() ? state.find("noisy_threshold") : state.end();
  const auto left = state.is_object() ? state.find("budget_left") : state.end();
  if (threshold == state.end() || !threshold->is_number() || left == state.end() ||
      !left->is_number_unsigned()) {
    return Status::Corruption("entry " + std::to_string(latest->entry.seq) +
                              " (eval): the sealed Thresholdout state is malformed");
  }
  t.state.noisy_threshold = threshold->get<double>();
  t.state.budget_left = left->get<uint64_t>();
  // A run that gave its m answers or spent its budget is over.
  t.started = t.answered < t.params.m && t.state.budget_left > 0;
  return Status::OK();
}

}  // namespace

Result<double> UniformDraw() {
  // The noise of Thresholdout must not be predictable from the ledger.
  UNSEEN_ASSIGN_OR_RETURN(std::string bytes, RandomBytes(8));
  uint64_t x = 0;
  std::memcpy(&x, bytes.data(), 8);
  return (static_cast<double>(x >> 11) + 0.5) * 0x1.0p-53;
}

Status ReplayLadder(EvalRun* run) {
  UNSEEN_RETURN_IF_ERROR(ReplayLadderAnswers(run));
  const EvalRequest& req = *run->req;
  if (!req.ladder) return Status::OK();
  LadderRun& l = run->ladder;
  const uint64_t holdout_rows = run->st.seal->holdout_rows;
  if (!l.started) {
    l.params.max_submissions = run->report.budget;
    l.params.step = req.ladder_step ? *req.ladder_step
                                    : LadderDefaultStep(run->report.budget, holdout_rows,
                                                        l.params.range_hi - l.params.range_lo);
    l.params.step = std::fmin(l.params.step, l.params.range_hi - l.params.range_lo);
  } else if (req.ladder_step && *req.ladder_step != l.params.step) {
    return Status::InvalidArgument("--ladder-step: the " + run->metric_name +
                                   " ladder runs with step " + std::to_string(l.params.step) +
                                   "; expected the same step");
  }
  // Checks the step and the size (the interval itself is per answer).
  UNSEEN_RETURN_IF_ERROR(LadderEpsilon(holdout_rows, run->delta, l.params).status());
  if (l.used + run->new_queries > l.params.max_submissions) {
    return Refuse(run,
                  "the " + run->metric_name + " ladder was started for " +
                      std::to_string(l.params.max_submissions) + " submissions and has answered " +
                      std::to_string(l.used),
                  json{{"ladder_used", l.used},
                       {"ladder_max_submissions", l.params.max_submissions}});
  }
  return Status::OK();
}

Status LoadThresholdout(EvalRun* run) {
  const EvalRequest& req = *run->req;
  ThresholdoutRun& t = run->tho;
  t.aad = "unseen/thresholdout/" + run->st.ledger_id;
  if (!req.thresholdout || run->new_queries == 0) return Status::OK();
  if (!req.key)
    return Status::InvalidArgument("--key-file: the seal key is needed to read the holdout");
  UNSEEN_ASSIGN_OR_RETURN(run->key, KeyForSeal(*req.key, *run->st.seal, run->st.ledger_id));
  UNSEEN_RETURN_IF_ERROR(ReadThresholdoutRun(run));
  if (!t.started) {
    // A new run, for the queries the budget has left. Its guarantee gets the
    // level of its first answer (accounting.h), which covers every answer
    // shown before it; its other answers use no share of delta of their own.
    const Query* first = nullptr;
    for (const Query& q : run->queries) {
      if (!q.repeat && first == nullptr) first = &q;
    }
    const uint64_t m = run->report.budget - run->st.holdout_queries;
    const double beta = run->delta * std::exp(-first->log_hypotheses);
    auto params = ThresholdoutForHoldout(run->st.seal->holdout_rows, m, req.thresholdout_budget, beta);
    if (!params.ok()) return Status::InvalidArgument("--thresholdout: " + params.status().message());
    t.params = *params;
    t.run_start = first->answer_index;
    t.answered = 0;
    UNSEEN_ASSIGN_OR_RETURN(double u, UniformDraw());
    t.state.noisy_threshold = t.params.threshold + Laplace(u, 2 * t.params.sigma);
    t.state.budget_left = t.params.budget;
    t.started = true;
  }
  // Every query of the call may use the holdout: the run must cover them all
  // before any noise is drawn, so that no refusal can come after a draw.
  const uint64_t room = std::min(t.state.budget_left, t.params.m - t.answered);
  if (run->new_queries > room) {
    return Refuse(run,
                  "this Thresholdout run (begun at answer " + std::to_string(t.run_start) +
                      ") can answer at most " + std::to_string(room) +
                      " more queries in one call (overfitting budget left " +
                      std::to_string(t.state.budget_left) + " of B = " +
                      std::to_string(t.params.budget) + ", " +
                      std::to_string(t.params.m - t.answered) + " of m = " +
                      std::to_string(t.params.m) + " queries left); ask fewer models at once",
                  json{{"thresholdout_budget", t.params.budget},
                       {"thresholdout_room", room},
                       {"asked", run->new_queries}});
  }
  return Status::OK();
}

Result<EvalThresholdout> SealThresholdoutState(EvalRun* run) {
  // The noisy threshold and the budget left are secret: sealed with the
  // holdout key, so that the next call (and an auditor with the key) can read them.
  const ThresholdoutRun& t = run->tho;
  json state = {{"noisy_threshold", t.state.noisy_threshold},
                {"budget_left", t.state.budget_left},
                {"used_holdout", t.used_holdout}};
  UNSEEN_ASSIGN_OR_RETURN(auto writer, SealedWriter::Create(*run->key, t.aad));
  UNSEEN_RETURN_IF_ERROR(writer->Append(state.dump()));
  UNSEEN_ASSIGN_OR_RETURN(std::string blob, writer->Finish());
  UNSEEN_ASSIGN_OR_RETURN(BlobRef ref, run->ledger->PutBlob("thresholdout-state", blob));
  run->blobs.push_back(ref);
  EvalThresholdout out;
  out.params = t.params;
  out.state = ref.digest;
  out.run_start = t.run_start;
  out.run_answers = t.answered + run->new_queries;
  return out;
}

Result<double> TrainingMean(EvalRun* run, const Query& q) {
  const LedgerState& st = run->st;
  if (!run->train_rows) {
    const std::string& train = run->req->train_data;
    const std::string path = train.empty() ? st.seal->dev_out_path : train;
    DataRefusal refusal;
    auto loaded = AdmitData(*run->ledger, st, path, DataPurpose::kDevRows, &refusal);
    if (!loaded.ok()) {
      return Status::InvalidArgument("--train-data " + path + ": " + loaded.status().message());
    }
    run->train_rows = std::move(*loaded);
  }
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, q.frozen->Predict(run->train_rows->features));
  UNSEEN_ASSIGN_OR_RETURN(
      MetricSample s,
      SampleMetric(run->setup.metric, run->train_rows->target, p,
                   static_cast<int>(st.source.target.classes.size()), run->setup.range));
  return (s.mean - s.range_lo) / (s.range_hi - s.range_lo);
}

}  // namespace unseen::internal
