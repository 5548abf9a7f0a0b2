#include <cmath>
#include <limits>
#include <set>

#include "harness/bounds/accounting.h"
#include "harness/ledger/admit.h"
#include "harness/ledger/keys.h"
#include "harness/ledger/lineage.h"
#include "harness/ledger/models.h"
#include "harness/workflow/eval_steps.h"
#include "harness/workflow/fit.h"

namespace unseen::internal {

using json = nlohmann::json;

namespace {

// Two queries are the same question when they ask the same model the same
// metric, by the same method, at the same delta, over the same range.
bool SameQuestion(const EvalAnswerRecord& a, const Digest256& digest, const EvalRun& run) {
  return a.model_digest == digest && a.metric == run.metric_name &&
         a.method == run.method_name && a.delta == run.delta &&
         a.range_lo == run.setup.probe.range_lo && a.range_hi == run.setup.probe.range_hi &&
         a.target_lo == run.setup.range.target_lo && a.target_hi == run.setup.range.target_hi &&
         a.prob_floor == run.setup.range.prob_floor;
}

// An external predictor's identity (command line and attached files'
// digests) and its taints: attached files holding holdout rows, found with
// the key (the holdout's digests are sealed); without it there is no answer
// to give, and eval refuses later for want of the key.
Result<Query> ExternalQuery(const Ledger& ledger, const LedgerState& st,
                            const ExternalModelRequest& ext, const Key* key) {
  UNSEEN_RETURN_IF_ERROR(CheckModelName(ext.name));
  if (!(ext.timeout_seconds > 0 && ext.timeout_seconds <= 86400)) {
    return Status::InvalidArgument("--timeout: expected seconds in (0, 86400]");
  }
  Query q;
  q.name = ext.name;
  q.kind = "external";
  q.frozen_at = std::numeric_limits<int64_t>::max();  // frozen now: after every reveal so far
  json attached = json::array();
  for (const std::string& path : ext.attach) {
    auto digest = Sha256File(path);
    if (!digest.ok())
      return Status::InvalidArgument("--attach " + path + ": " + digest.status().message());
    attached.push_back({{"path", path}, {"sha256", ToHex(digest->sha256)}});
    DataRefusal refusal;
    auto loaded = AdmitData(ledger, st, path, DataPurpose::kNewRows, &refusal, key);
    if (!loaded.ok() && loaded.status().IsRefused()) {
      // Whether, never how many: the count would say which of the rows a
      // modeller put in the file are holdout rows, labels included.
      q.taints.push_back("attached file " + path + " holds holdout rows");
      q.attachments_hold_holdout_rows = true;
    }
  }
  q.attachments_checked = key != nullptr && !ext.attach.empty();
  q.model = {{"command", ext.command}, {"attached", attached}};
  UNSEEN_ASSIGN_OR_RETURN(std::string canonical, CanonicalJson(q.model.dump()));
  q.digest = Sha256Of(canonical);
  return q;
}

// A frozen model by name, loaded with its members: the guard must not read
// the ledger while it holds rows.
Result<Query> FrozenQuery(const Ledger& ledger, const LedgerState& st, const std::string& name) {
  Result<StoredModel> stored = FindModel(ledger, name);
  if (!stored.ok()) return Status::InvalidArgument(stored.status().message());
  Query q;
  q.name = name;
  q.kind = "frozen";
  q.model = std::move(stored->json);
  q.digest = stored->summary.digest;
  q.frozen_at = stored->summary.fit_entry;
  UNSEEN_ASSIGN_OR_RETURN(Lineage lineage, TraceLineage(ledger, st, q.frozen_at, q.model));
  q.taints = lineage.taints;
  auto frozen = BuildModel(ledger, q.model);
  if (!frozen.ok())
    return Status::InvalidArgument("model '" + name + "': " + frozen.status().message());
  q.frozen = std::move(*frozen);
  return q;
}

// Points each query at the first earlier reveal of the same question.
void FindRepeats(EvalRun* run) {
  for (Query& q : run->queries) {
    for (const PastAnswer& p : run->past) {
      if (p.reveal() && SameQuestion(p.record, q.digest, *run)) {
        q.repeat = &p;
        break;
      }
    }
  }
}

}  // namespace

Result<MetricSetup> SetUpMetric(const EvalRequest& req, const LedgerState& st) {
  MetricSetup m;
  const bool classification = st.source.task == TaskKind::kClassification;
  const LearnTask task = classification ? LearnTask::kClassification : LearnTask::kRegression;
  const int classes = static_cast<int>(st.source.target.classes.size());
  m.metric = DefaultMetric(task);
  if (!req.metric.empty()) {
    auto parsed = ParseMetric(req.metric);
    if (!parsed.ok()) return Status::InvalidArgument("--metric: " + parsed.status().message());
    m.metric = *parsed;
  }
  Status ok = CheckMetric(m.metric, task, classes);
  if (!ok.ok()) return Status::InvalidArgument("--metric: " + ok.message());
  m.method = DefaultBoundMethod(m.metric);
  if (!req.method.empty()) {
    auto parsed = ParseBoundMethod(req.method);
    if (!parsed.ok()) return Status::InvalidArgument("--method: " + parsed.status().message());
    m.method = *parsed;
  }
  UNSEEN_RETURN_IF_ERROR(CheckBoundMethod(m.metric, m.method));
  if (req.delta && *req.delta != st.seal->budget_delta) {
    return Status::InvalidArgument(
        "--delta " + std::to_string(*req.delta) + ": every answer of this ledger shares delta " +
        std::to_string(st.seal->budget_delta) +
        ", fixed at seal (docs/bounds.md, \"One accounting\"); omit --delta");
  }
  if (req.range) {
    m.range.target_lo = req.range->first;
    m.range.target_hi = req.range->second;
    m.range.target_range_source = "declared";
  } else {
    m.range.target_lo = st.source.target.min;
    m.range.target_hi = st.source.target.max;
    m.range.target_range_source = "dev-rows";  // published at seal; the source-wide range is sealed
  }
  m.range.prob_floor = req.prob_floor;
  if (!classification && !(std::isfinite(m.range.target_lo) && std::isfinite(m.range.target_hi) &&
                           m.range.target_lo < m.range.target_hi)) {
    return Status::InvalidArgument(
        "--range: the target range [" + std::to_string(m.range.target_lo) + ", " +
        std::to_string(m.range.target_hi) + "] is empty; expected --range LO:HI with LO < HI");
  }
  if (!(req.prob_floor > 0 && req.prob_floor < 0.5)) {
    return Status::InvalidArgument("--prob-floor " + std::to_string(req.prob_floor) +
                                   ": expected a value in (0, 0.5)");
  }
  // The range each metric lies in, without data.
  m.probe.range_lo = 0;
  m.probe.range_hi = 1;
  const double w = m.range.target_hi - m.range.target_lo;
  if (m.metric == Metric::kMse) m.probe.range_hi = w * w;
  if (m.metric == Metric::kMae) m.probe.range_hi = w;
  if (m.metric == Metric::kLogLoss) m.probe.range_hi = -std::log(req.prob_floor);
  return m;
}

Status CheckModes(const EvalRun& run) {
  const EvalRequest& req = *run.req;
  const Metric metric = run.setup.metric;
  if (req.ladder && req.thresholdout) {
    return Status::InvalidArgument("--ladder and --thresholdout exclude each other");
  }
  if (req.thresholdout && (metric == Metric::kAuc || metric == Metric::kBalancedAccuracy)) {
    return Status::InvalidArgument(
        "--thresholdout: metric " + std::string(MetricName(metric)) +
        " is not a mean over rows; expected error_rate, accuracy, brier, "
        "log_loss, mse or mae");
  }
  if (req.thresholdout && req.external) {
    return Status::InvalidArgument(
        "--thresholdout needs each model's loss on its training rows; "
        "external predictors have none here");
  }
  if (req.ladder && !LowerIsBetter(metric)) {
    return Status::InvalidArgument(
        "--ladder: metric " + run.metric_name +
        " is not a loss; expected error_rate, log_loss, brier, mse or mae");
  }
  return Status::OK();
}

Result<std::vector<PastAnswer>> PastAnswers(const Ledger& ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<EvalBody>> evals, ReadEntries<EvalBody>(ledger));
  std::vector<PastAnswer> out;
  for (Decoded<EvalBody>& e : evals) {
    for (size_t i = 0; i < e.body.answers.size(); ++i) {
      PastAnswer p{e.entry.seq, std::move(e.body.answers[i])};
      if (p.reveal() && !p.record.code_length) {
        return Status::Corruption("entry " + std::to_string(e.entry.seq) + " (eval): answer " +
                                  std::to_string(i) +
                                  " is a reveal without 'code_length' (the nats it showed)");
      }
      out.push_back(std::move(p));
    }
  }
  return out;
}

Status PlanQueries(EvalRun* run) {
  const EvalRequest& req = *run->req;
  std::set<std::string> names;
  for (const std::string& name : req.models) {
    if (!names.insert(name).second) {
      return Status::InvalidArgument("model '" + name +
                                     "' is named twice; expected each model once");
    }
    UNSEEN_ASSIGN_OR_RETURN(Query q, FrozenQuery(*run->ledger, run->st, name));
    run->queries.push_back(std::move(q));
  }
  if (req.external) {
    if (req.key && !run->key) {
      UNSEEN_ASSIGN_OR_RETURN(run->key, KeyForSeal(*req.key, *run->st.seal, run->st.ledger_id));
    }
    UNSEEN_ASSIGN_OR_RETURN(
        Query q, ExternalQuery(*run->ledger, run->st, *req.external, run->key ? &*run->key : nullptr));
    if (!names.insert(q.name).second) {
      return Status::InvalidArgument("--name " + q.name + ": also named as a frozen model");
    }
    run->queries.push_back(std::move(q));
  }
  FindRepeats(run);
  run->new_queries = 0;
  for (const Query& q : run->queries) run->new_queries += q.repeat ? 0 : 1;
  return Status::OK();
}

namespace {

// The kinds of default question (a metric and a bound method that apply to
// the task, the default range and probability floor, a plain answer).
uint64_t DefaultQuestionKinds(const LedgerState& st) {
  const bool classification = st.source.task == TaskKind::kClassification;
  const LearnTask task = classification ? LearnTask::kClassification : LearnTask::kRegression;
  const int classes = static_cast<int>(st.source.target.classes.size());
  uint64_t kinds = 0;
  for (Metric m : AllMetrics()) {
    if (!CheckMetric(m, task, classes).ok()) continue;
    for (BoundMethod b : kBoundMethods) {
      kinds += CheckBoundMethod(m, b).ok() ? 1 : 0;
    }
  }
  return kinds;
}

// A question fixed before the ledger's first answer: a model frozen then,
// asked a default question.
bool AskedInAdvance(const EvalRun& run, const Query& q) {
  const EvalRequest& req = *run.req;
  return q.kind == "frozen" && q.frozen_at < run.first_answer_entry && !req.range &&
         req.prob_floor == EvalRequest{}.prob_floor && !req.ladder && !req.thresholdout;
}

}  // namespace

Status PlaceAnswers(EvalRun* run) {
  run->delta = run->st.seal->budget_delta;
  run->reveals_before = 0;
  run->log_transcript = 0;
  run->first_answer_entry = 0;
  // Everything the holdout showed before this call, with its code length.
  auto shown = [run](int64_t entry, double nats) {
    if (run->reveals_before == 0 || entry < run->first_answer_entry) {
      run->first_answer_entry = entry;
    }
    ++run->reveals_before;
    run->log_transcript += nats;
  };
  for (const PastAnswer& p : run->past) {
    if (p.reveal()) shown(p.entry, *p.record.code_length);
  }
  // A failure on the holdout (an `exposure`) showed its value-free reason.
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<ExposureBody>> exposures,
                          ReadEntries<ExposureBody>(*run->ledger));
  for (const Decoded<ExposureBody>& x : exposures) {
    shown(x.entry.seq, FailureCodeLength(run->st.source.columns.size()));
  }
  // A refusal because attached files hold holdout rows showed one bit.
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Decoded<RefusalBody>> refusals,
                          ReadEntries<RefusalBody>(*run->ledger));
  for (const Decoded<RefusalBody>& r : refusals) {
    if (r.body.command == "eval" && r.body.details.is_object() &&
        r.body.details.value("attachments_hold_holdout_rows", false)) {
      shown(r.entry.seq, std::log(2.0));
    }
  }
  if (run->reveals_before > 0) {
    UNSEEN_ASSIGN_OR_RETURN(std::vector<ModelSummary> models, ListModels(*run->ledger));
    uint64_t advance = 0;
    for (const ModelSummary& m : models) advance += m.fit_entry < run->first_answer_entry ? 1 : 0;
    const uint64_t kinds = DefaultQuestionKinds(run->st);
    if (advance > 0 && kinds > 0) {
      run->log_advance_choices =
          std::log(static_cast<double>(advance)) + std::log(static_cast<double>(kinds));
    }
  }
  // Answers are numbered by the ledger's count of holdout queries, which
  // every new answer raises by one.
  uint64_t next = run->st.holdout_queries + 1;
  run->log_h = 0;
  for (Query& q : run->queries) {
    if (q.repeat) continue;
    q.answer_index = next++;
    q.log_share = LogDeltaShare(q.answer_index, run->st.seal->sealed_budget_queries);
    q.log_question = LogQuestionCode(
        run->reveals_before, run->log_transcript,
        AskedInAdvance(*run, q) ? run->log_advance_choices : std::nullopt);
    q.log_hypotheses = q.log_share + q.log_question;
    run->log_h = std::fmax(run->log_h, q.log_hypotheses);
  }
  return Status::OK();
}

}  // namespace unseen::internal
