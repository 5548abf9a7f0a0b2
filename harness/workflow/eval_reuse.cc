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
    if (!p.reveal() || a.mode != "ladder" || a.metric != run->metric_name) continue;
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
    ++l.used;
  }
  return Status::OK();
}

// The latest sealed Thresholdout state, if any eval entry holds one.
Status ReadThresholdoutState(EvalRun* run) {
  ThresholdoutRun& t = run->tho;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<EvalBody>> evals,
                          ReadEntries<EvalBody>(*run->ledger));
  for (const Decoded<EvalBody>& e : evals) {
    if (!e.body.thresholdout) continue;
    t.params = e.body.thresholdout->params;
    UNSEEN_ASSIGN_OR_RETURN(std::string blob, run->ledger->GetBlob(e.body.thresholdout->state));
    UNSEEN_ASSIGN_OR_RETURN(std::string plain, OpenSealed(*run->key, t.aad, blob));
    json state = json::parse(plain, nullptr, /*allow_exceptions=*/false);
    const auto threshold = state.is_object() ? state.find("noisy_threshold") : state.end();
    const auto left = state.is_object() ? state.find("budget_left") : state.end();
    if (threshold == state.end() || !threshold->is_number() || left == state.end() ||
        !left->is_number_unsigned()) {
      return Status::Corruption("entry " + std::to_string(e.entry.seq) +
                                " (eval): the sealed Thresholdout state is malformed");
    }
    t.state.noisy_threshold = threshold->get<double>();
    t.state.budget_left = left->get<uint64_t>();
    t.started = true;
  }
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
  UNSEEN_RETURN_IF_ERROR(LadderEpsilon(holdout_rows, req.delta, l.params).status());
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
  UNSEEN_RETURN_IF_ERROR(ReadThresholdoutState(run));
  if (!t.started) {
    UNSEEN_ASSIGN_OR_RETURN(t.params,
                            ThresholdoutForHoldout(run->st.seal->holdout_rows, run->report.budget,
                                                   req.thresholdout_budget, req.delta));
    UNSEEN_ASSIGN_OR_RETURN(double u, UniformDraw());
    t.state.noisy_threshold = t.params.threshold + Laplace(u, 2 * t.params.sigma);
    t.state.budget_left = t.params.budget;
  } else if (t.params.beta != req.delta) {
    return Status::InvalidArgument("--delta: thresholdout runs at delta " +
                                   std::to_string(t.params.beta) + "; expected the same delta");
  }
  if (t.state.budget_left < run->new_queries && t.state.budget_left == 0) {
    return Refuse(run,
                  "thresholdout's overfitting budget (B = " + std::to_string(t.params.budget) +
                      ") is spent; it answers no more queries",
                  json{{"thresholdout_budget", t.params.budget}});
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
  return EvalThresholdout{t.params, ref.digest};
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
