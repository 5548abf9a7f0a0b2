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
void ReplayLadderAnswers(EvalRun* run) {
  LadderRun& l = run->ladder;
  l.params.range_lo = run->setup.probe.range_lo;
  l.params.range_hi = run->setup.probe.range_hi;
  for (const PastAnswer& p : run->past) {
    if (!p.reveal || p.body.value("mode", "plain") != "ladder" ||
        p.body.at("metric") != run->metric_name)
      continue;
    if (!l.started) {
      l.params.step = p.body.at("ladder_step");
      l.params.max_submissions = p.body.at("ladder_max_submissions");
      l.started = true;
    }
    l.value = p.body.at("estimate").get<double>();
    l.leader = p.body.at("leader");
    ++l.used;
  }
}

// The latest sealed Thresholdout state, if any eval entry holds one.
Status ReadThresholdoutState(EvalRun* run) {
  ThresholdoutRun& t = run->tho;
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> evals, run->ledger->EntriesOfKind("eval"));
  for (const Entry& e : evals) {
    json b = json::parse(e.body);
    if (!b.contains("thresholdout") || b["thresholdout"].is_null()) continue;
    const json& j = b["thresholdout"];
    t.params.tau = j.at("tau");
    t.params.threshold = j.at("threshold");
    t.params.sigma = j.at("sigma");
    t.params.m = j.at("m");
    t.params.budget = j.at("budget");
    t.params.beta = j.at("beta");
    UNSEEN_ASSIGN_OR_RETURN(Digest256 d, Digest256FromHex(j.at("state").get<std::string>()));
    UNSEEN_ASSIGN_OR_RETURN(std::string blob, run->ledger->GetBlob(d));
    UNSEEN_ASSIGN_OR_RETURN(std::string plain, OpenSealed(*run->key, t.aad, blob));
    json sj = json::parse(plain);
    t.state.noisy_threshold = sj.at("noisy_threshold");
    t.state.budget_left = sj.at("budget_left");
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
  ReplayLadderAnswers(run);
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

Result<json> SealThresholdoutState(EvalRun* run) {
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
  return json{{"tau", t.params.tau},       {"threshold", t.params.threshold},
              {"sigma", t.params.sigma},   {"m", t.params.m},
              {"budget", t.params.budget}, {"beta", t.params.beta},
              {"state", ToHex(ref.digest)}};
}

Result<double> TrainingMean(EvalRun* run, const Query& q) {
  const LedgerState& st = run->st;
  if (!run->train_rows) {
    const std::string& train = run->req->train_data;
    const std::string path = train.empty() ? st.seal->dev_out_path : train;
    DataRefusal refusal;
    auto loaded = LoadData(*run->ledger, st, path, DataPurpose::kDevRows, &refusal);
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
