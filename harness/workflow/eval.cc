#include "harness/workflow/eval.h"

#include <algorithm>
#include <cmath>
#include <cstring>
#include <limits>
#include <memory>
#include <nlohmann/json.hpp>
#include <set>

#include "harness/bounds/adaptivity.h"
#include "harness/evaluate/guard.h"
#include "harness/bounds/ladder.h"
#include "harness/bounds/metric_bound.h"
#include "harness/bounds/thresholdout.h"
#include "harness/pipeline/pipeline.h"
#include "harness/ledger/admit.h"
#include "harness/workflow/fit.h"
#include "harness/ledger/ledger_state.h"
#include "harness/ledger/lineage.h"
#include "harness/workflow/models.h"
#include "storage/seal_crypto.h"
#include "storage/sealed_blob.h"

namespace unseen {

using json = nlohmann::json;

namespace {

// One answer already in the ledger.
struct PastAnswer {
  int64_t entry = 0;
  json body;  // the answer object as recorded
  bool reveal = false;
};

Result<std::vector<PastAnswer>> PastAnswers(const Ledger& ledger) {
  UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> evals, ledger.EntriesOfKind("eval"));
  std::vector<PastAnswer> out;
  for (const Entry& e : evals) {
    try {
      json b = json::parse(e.body);
      for (const json& a : b.at("answers")) {
        PastAnswer p;
        p.entry = e.seq;
        p.body = a;
        p.reveal = a.at("repeat_of").is_null();
        out.push_back(std::move(p));
      }
    } catch (const std::exception& ex) {
      return Status::Corruption("entry " + std::to_string(e.seq) +
                                " (eval) is malformed: " + ex.what());
    }
  }
  return out;
}

// What makes two queries the same question.
json QueryKey(const std::string& digest, const std::string& metric, const std::string& method,
              double delta, const json& range) {
  return json{{"model_digest", digest},
              {"metric", metric},
              {"method", method},
              {"delta", delta},
              {"range", range}};
}

// A model to query: frozen or external.
struct Query {
  std::string name, kind;
  Digest256 digest{};
  int64_t frozen_at = 0;                // the fit entry; for external predictors, this eval
  json model;                           // frozen: the model JSON; external: its identity
  std::shared_ptr<FrozenModel> frozen;  // frozen models, ready to apply
  std::vector<std::string> taints;
  const PastAnswer* repeat = nullptr;
  MetricSample sample;
  double log_weight = 0;
  uint64_t reveals_before = 0;
};

// An external predictor's identity (command line and attached files'
// digests) and its taints: attached files holding holdout rows.
Result<Query> ExternalQuery(const Ledger& ledger, const LedgerState& st,
                            const ExternalModelRequest& ext) {
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
    auto loaded = LoadData(ledger, st, path, DataPurpose::kNewRows, &refusal);
    if (!loaded.ok() && loaded.status().IsRefused()) {
      q.taints.push_back("attached file " + path + " holds " +
                         std::to_string(refusal.holdout_rows) + " holdout rows");
    }
  }
  q.model = {{"command", ext.command}, {"attached", attached}};
  UNSEEN_ASSIGN_OR_RETURN(std::string canonical, CanonicalJson(q.model.dump()));
  q.digest = Sha256Of(canonical);
  return q;
}

// The metric's range before any holdout value is read.
struct MetricSetup {
  Metric metric;
  BoundMethod method;
  RangeOptions range;
  MetricSample probe;  // range_lo / range_hi only
};

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
  if (!(req.delta > 0 && req.delta < 1)) {
    return Status::InvalidArgument("--delta " + std::to_string(req.delta) +
                                   ": expected a value in (0, 1)");
  }
  if (req.range) {
    m.range.target_lo = req.range->first;
    m.range.target_hi = req.range->second;
    m.range.target_range_source = "declared";
  } else {
    m.range.target_lo = st.source.target.min;
    m.range.target_hi = st.source.target.max;
    m.range.target_range_source = "source";
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

json AnswerJson(const EvalAnswer& a) {
  return json{{"model", a.model},
              {"kind", a.kind},
              {"model_digest", ToHex(a.model_digest)},
              {"metric", a.metric},
              {"method", a.method},
              {"delta", a.delta},
              {"n", a.n},
              {"estimate", a.estimate},
              {"lower", a.lower},
              {"upper", a.upper},
              {"step", a.step},
              {"range", {a.range_lo, a.range_hi}},
              {"range_source", a.range_source},
              {"outside_range", a.outside_range},
              {"queries", a.queries},
              {"reveals_before_freeze", a.reveals_before_freeze},
              {"log_weight", a.log_weight},
              {"log_hypotheses", a.log_hypotheses},
              {"repeat_of", a.repeated ? json(a.repeat_of) : json(nullptr)},
              {"contaminated", a.contaminated},
              {"taints", a.taints},
              {"mode", a.mode},
              {"improved", a.improved},
              {"leader", a.leader},
              {"ladder_step", a.ladder_step},
              {"tau", a.tau}};
}

// A uniform draw in (0, 1) from the operating system's random source: the
// noise of Thresholdout must not be predictable from the ledger.
Result<double> UniformDraw() {
  UNSEEN_ASSIGN_OR_RETURN(std::string bytes, RandomBytes(8));
  uint64_t x = 0;
  std::memcpy(&x, bytes.data(), 8);
  return (static_cast<double>(x >> 11) + 0.5) * 0x1.0p-53;
}

// A model's mean loss on its training rows, on the [0, 1] scale of the
// metric's range: the "training set" value Thresholdout compares with.
// `data` is loaded on first use and kept for the next model.
Result<double> TrainingMean(const Ledger& ledger, const LedgerState& st, const EvalRequest& req,
                            const Query& q, const MetricSetup& setup,
                            std::optional<LoadedData>* data) {
  if (!*data) {
    const std::string path = req.train_data.empty() ? st.seal->dev_out_path : req.train_data;
    DataRefusal refusal;
    auto loaded = LoadData(ledger, st, path, DataPurpose::kDevRows, &refusal);
    if (!loaded.ok()) {
      return Status::InvalidArgument("--train-data " + path + ": " + loaded.status().message());
    }
    *data = std::move(*loaded);
  }
  UNSEEN_ASSIGN_OR_RETURN(Predictions p, q.frozen->Predict((*data)->features));
  UNSEEN_ASSIGN_OR_RETURN(
      MetricSample s, SampleMetric(setup.metric, (*data)->target, p,
                                   static_cast<int>(st.source.target.classes.size()), setup.range));
  return (s.mean - s.range_lo) / (s.range_hi - s.range_lo);
}

Status Refuse(const EvalRequest& req, const std::string& why, const json& details) {
  Status s = Status::Refused(why);
  UNSEEN_RETURN_IF_ERROR(RecordRefusal(req.ledger_path, req.actor, "eval", s, details.dump()));
  return s;
}

}  // namespace

Result<EvalReport> EvaluateModels(const EvalRequest& req) {
  if (req.models.empty() && !req.external) {
    return Status::InvalidArgument("eval: expected at least one model name (or --command)");
  }
  UNSEEN_ASSIGN_OR_RETURN(auto ledger, Ledger::Open(req.ledger_path, LedgerMode::kReadWrite));
  UNSEEN_RETURN_IF_ERROR(ledger->Begin());
  UNSEEN_ASSIGN_OR_RETURN(LedgerState st, ReadLedgerState(*ledger));
  if (!st.seal)
    return Status::FailedPrecondition(req.ledger_path + ": seal the holdout first (`unseen seal`)");
  UNSEEN_ASSIGN_OR_RETURN(MetricSetup setup, SetUpMetric(req, st));
  const std::string metric_name = MetricName(setup.metric);
  const std::string method_name =
      req.ladder ? "ladder" : (req.thresholdout ? "thresholdout" : BoundMethodName(setup.method));
  if (req.ladder && req.thresholdout) {
    return Status::InvalidArgument("--ladder and --thresholdout exclude each other");
  }
  if (req.thresholdout &&
      (setup.metric == Metric::kAuc || setup.metric == Metric::kBalancedAccuracy)) {
    return Status::InvalidArgument(
        "--thresholdout: metric " + std::string(MetricName(setup.metric)) +
        " is not a mean over rows; expected error_rate, accuracy, brier, "
        "log_loss, mse or mae");
  }
  if (req.thresholdout && req.external) {
    return Status::InvalidArgument(
        "--thresholdout needs each model's loss on its training rows; "
        "external predictors have none here");
  }
  if (req.ladder && !LowerIsBetter(setup.metric)) {
    return Status::InvalidArgument(
        "--ladder: metric " + metric_name +
        " is not a loss; expected error_rate, log_loss, brier, mse or mae");
  }
  UNSEEN_ASSIGN_OR_RETURN(std::vector<PastAnswer> past, PastAnswers(*ledger));

  // 1. The models, their lineage, and whether each question was asked before.
  std::vector<Query> queries;
  std::set<std::string> names;
  for (const std::string& name : req.models) {
    if (!names.insert(name).second) {
      return Status::InvalidArgument("model '" + name +
                                     "' is named twice; expected each model once");
    }
    Query q;
    q.name = name;
    q.kind = "frozen";
    ModelSummary summary;
    auto model = LoadModel(*ledger, name, &summary);
    if (!model.ok()) return Status::InvalidArgument(model.status().message());
    q.model = std::move(*model);
    q.digest = summary.digest;
    q.frozen_at = summary.fit_entry;
    UNSEEN_ASSIGN_OR_RETURN(Lineage lineage, TraceLineage(*ledger, st, summary.fit_entry, q.model));
    q.taints = lineage.taints;
    // Loaded now, members and all: the guard must not read the ledger while it holds rows.
    auto frozen = LoadFrozenModel(*ledger, q.model);
    if (!frozen.ok())
      return Status::InvalidArgument("model '" + name + "': " + frozen.status().message());
    q.frozen = std::make_shared<FrozenModel>(std::move(*frozen));
    queries.push_back(std::move(q));
  }
  if (req.external) {
    UNSEEN_ASSIGN_OR_RETURN(Query q, ExternalQuery(*ledger, st, *req.external));
    if (!names.insert(q.name).second) {
      return Status::InvalidArgument("--name " + q.name + ": also named as a frozen model");
    }
    queries.push_back(std::move(q));
  }
  const json range = {setup.probe.range_lo, setup.probe.range_hi};
  for (Query& q : queries) {
    json key = QueryKey(ToHex(q.digest), metric_name, method_name, req.delta, range);
    for (const PastAnswer& p : past) {
      if (!p.reveal) continue;
      json pk = QueryKey(p.body.at("model_digest"), p.body.at("metric"), p.body.at("method"),
                         p.body.at("delta").get<double>(), p.body.at("range"));
      if (pk == key && !q.repeat) q.repeat = &p;
    }
  }

  // 2. The guard's refusals: taint, then budget. Nothing is revealed.
  json tainted = json::array();
  for (const Query& q : queries) {
    if (!q.taints.empty()) tainted.push_back({{"model", q.name}, {"taints", q.taints}});
  }
  if (!tainted.empty() && req.accept_contamination.empty()) {
    ledger->Rollback();
    std::string why = "model '" + tainted[0]["model"].get<std::string>() +
                      "' is tainted: " + tainted[0]["taints"][0].get<std::string>() +
                      "; its holdout score would not be an honest estimate (use "
                      "--accept-contamination REASON to evaluate it anyway, marked contaminated)";
    return Refuse(req, why, json{{"tainted", tainted}});
  }
  uint64_t new_queries = 0;
  for (const Query& q : queries) new_queries += q.repeat ? 0 : 1;
  EvalReport report;
  report.budget = st.seal->budget_queries;
  report.budget_raises = st.budget_raises;
  report.queries_spent = new_queries;
  report.queries_total = st.holdout_queries + new_queries;
  if (report.queries_total > report.budget) {
    ledger->Rollback();
    std::string why = "the holdout budget is spent: " + std::to_string(st.holdout_queries) +
                      " of " + std::to_string(report.budget) +
                      " queries used, and this call asks " + std::to_string(new_queries) +
                      " more (raise it with `unseen budget --raise N`)";
    return Refuse(req, why,
                  json{{"queries_used", st.holdout_queries},
                       {"budget", report.budget},
                       {"asked", new_queries}});
  }

  // The ladder so far for this metric: its value, leader, step and k.
  std::optional<double> ladder_value;
  std::string ladder_leader;
  LadderParams ladder;
  ladder.range_lo = setup.probe.range_lo;
  ladder.range_hi = setup.probe.range_hi;
  uint64_t ladder_used = 0;
  bool ladder_started = false;
  for (const PastAnswer& p : past) {
    if (!p.reveal || p.body.value("mode", "plain") != "ladder" ||
        p.body.at("metric") != metric_name)
      continue;
    if (!ladder_started) {
      ladder.step = p.body.at("ladder_step");
      ladder.max_submissions = p.body.at("ladder_max_submissions");
      ladder_started = true;
    }
    ladder_value = p.body.at("estimate").get<double>();
    ladder_leader = p.body.at("leader");
    ++ladder_used;
  }
  if (req.ladder) {
    if (!ladder_started) {
      ladder.max_submissions = report.budget;
      ladder.step = req.ladder_step ? *req.ladder_step
                                    : LadderDefaultStep(report.budget, st.seal->holdout_rows,
                                                        ladder.range_hi - ladder.range_lo);
      ladder.step = std::fmin(ladder.step, ladder.range_hi - ladder.range_lo);
    } else if (req.ladder_step && *req.ladder_step != ladder.step) {
      return Status::InvalidArgument("--ladder-step: the " + metric_name +
                                     " ladder runs with step " + std::to_string(ladder.step) +
                                     "; expected the same step");
    }
    UNSEEN_RETURN_IF_ERROR(LadderEpsilon(st.seal->holdout_rows, req.delta, ladder).status());
    if (ladder_used + new_queries > ladder.max_submissions) {
      ledger->Rollback();
      return Refuse(
          req,
          "the " + metric_name + " ladder was started for " +
              std::to_string(ladder.max_submissions) + " submissions and has answered " +
              std::to_string(ladder_used),
          json{{"ladder_used", ladder_used}, {"ladder_max_submissions", ladder.max_submissions}});
    }
  }

  // Thresholdout: its settings (fixed at its first answer) and secret state.
  ThresholdoutParams tho;
  ThresholdoutState tho_state;
  bool tho_started = false;
  std::optional<Key> key;
  const std::string tho_aad = "unseen/thresholdout/" + st.ledger_id;
  if (req.thresholdout && new_queries > 0) {
    if (!req.key)
      return Status::InvalidArgument("--key-file: the seal key is needed to read the holdout");
    UNSEEN_ASSIGN_OR_RETURN(key, KeyForSeal(*req.key, *st.seal, st.ledger_id));
    UNSEEN_ASSIGN_OR_RETURN(std::vector<Entry> evals, ledger->EntriesOfKind("eval"));
    for (const Entry& e : evals) {
      json b = json::parse(e.body);
      if (!b.contains("thresholdout") || b["thresholdout"].is_null()) continue;
      const json& t = b["thresholdout"];
      tho.tau = t.at("tau");
      tho.threshold = t.at("threshold");
      tho.sigma = t.at("sigma");
      tho.m = t.at("m");
      tho.budget = t.at("budget");
      tho.beta = t.at("beta");
      UNSEEN_ASSIGN_OR_RETURN(Digest256 d, Digest256FromHex(t.at("state").get<std::string>()));
      UNSEEN_ASSIGN_OR_RETURN(std::string blob, ledger->GetBlob(d));
      UNSEEN_ASSIGN_OR_RETURN(std::string plain, OpenSealed(*key, tho_aad, blob));
      json sj = json::parse(plain);
      tho_state.noisy_threshold = sj.at("noisy_threshold");
      tho_state.budget_left = sj.at("budget_left");
      tho_started = true;
    }
    if (!tho_started) {
      UNSEEN_ASSIGN_OR_RETURN(tho, ThresholdoutForHoldout(st.seal->holdout_rows, report.budget,
                                                          req.thresholdout_budget, req.delta));
      UNSEEN_ASSIGN_OR_RETURN(double u, UniformDraw());
      tho_state.noisy_threshold = tho.threshold + Laplace(u, 2 * tho.sigma);
      tho_state.budget_left = tho.budget;
    } else if (tho.beta != req.delta) {
      return Status::InvalidArgument("--delta: thresholdout runs at delta " +
                                     std::to_string(tho.beta) + "; expected the same delta");
    }
    if (tho_state.budget_left < new_queries && tho_state.budget_left == 0) {
      ledger->Rollback();
      return Refuse(req,
                    "thresholdout's overfitting budget (B = " + std::to_string(tho.budget) +
                        ") is spent; it answers no more queries",
                    json{{"thresholdout_budget", tho.budget}});
    }
  }

  // 3. How adaptive each new query may be: the reveals before its freeze.
  std::vector<double> weights;
  for (const PastAnswer& p : past) {
    if (p.reveal) weights.push_back(p.body.at("log_weight").get<double>());
  }
  for (Query& q : queries) {
    if (q.repeat) continue;
    for (const PastAnswer& p : past) {
      if (p.reveal && p.entry < q.frozen_at) {
        q.log_weight += p.body.at("log_values").get<double>();
        ++q.reveals_before;
      }
    }
    weights.push_back(q.log_weight);
  }
  const double log_h = LogHypothesesOfWeights(weights);
  if (st.seal->budget_half_width > 0 && new_queries > 0) {
    // Known before any holdout value is read: it depends on n and ln H only.
    UNSEEN_ASSIGN_OR_RETURN(
        double eps, OneSidedHoeffdingEpsilon(st.seal->holdout_rows, 1.0, st.seal->budget_delta,
                                             log_h + std::log(2.0)));
    if (eps > st.seal->budget_half_width) {
      ledger->Rollback();
      return Refuse(req,
                    "the holdout budget is spent: after " + std::to_string(st.holdout_queries) +
                        " queries and the reveals before these models were frozen (ln H = " +
                        std::to_string(log_h) + "), the Hoeffding half-width would be " +
                        std::to_string(eps) + ", wider than the " +
                        std::to_string(st.seal->budget_half_width) + " accepted at seal (delta " +
                        std::to_string(st.seal->budget_delta) + ")",
                    json{{"half_width", eps},
                         {"budget_half_width", st.seal->budget_half_width},
                         {"log_hypotheses", log_h}});
    }
  }

  // 4. The holdout, opened only if some question is new.
  std::unique_ptr<HoldoutGuard> guard;
  if (new_queries > 0) {
    if (!req.key)
      return Status::InvalidArgument("--key-file: the seal key is needed to read the holdout");
    if (!key) {
      UNSEEN_ASSIGN_OR_RETURN(key, KeyForSeal(*req.key, *st.seal, st.ledger_id));
    }
    UNSEEN_ASSIGN_OR_RETURN(guard, HoldoutGuard::Open(*ledger, st, *key));
  }

  // 5. Answers.
  json answers = json::array();
  std::vector<BlobRef> blobs;
  std::vector<bool> tho_answers;
  std::optional<LoadedData> train_rows;
  for (Query& q : queries) {
    EvalAnswer a;
    a.model = q.name;
    a.kind = q.kind;
    a.model_digest = q.digest;
    a.metric = metric_name;
    a.method = method_name;
    a.delta = req.delta;
    a.taints = q.taints;
    a.contaminated = !q.taints.empty();
    a.queries = report.queries_total;
    if (q.repeat) {
      const json& b = q.repeat->body;
      a.repeated = true;
      a.repeat_of = q.repeat->entry;
      a.n = b.at("n");
      a.estimate = b.at("estimate");
      a.lower = b.at("lower");
      a.upper = b.at("upper");
      a.step = b.at("step");
      a.range_lo = b.at("range")[0];
      a.range_hi = b.at("range")[1];
      a.range_source = b.at("range_source");
      a.outside_range = b.at("outside_range");
      a.reveals_before_freeze = b.at("reveals_before_freeze");
      a.log_weight = b.at("log_weight");
      a.log_hypotheses = b.at("log_hypotheses");
      a.mode = b.value("mode", "plain");
      a.improved = b.value("improved", false);
      a.leader = b.value("leader", "");
      a.ladder_step = b.value("ladder_step", 0.0);
      a.tau = b.value("tau", 0.0);
      a.contaminated = a.contaminated || b.at("contaminated").get<bool>();
      a.assumptions = "answered from entry " + std::to_string(a.repeat_of) +
                      ": the same question was asked before, so nothing new is revealed";
    } else {
      Result<MetricSample> sample = Status::Internal("unset");
      if (q.kind == "external") {
        ExternalPredictor predictor;
        predictor.command = req.external->command;
        predictor.timeout =
            std::chrono::milliseconds(static_cast<int64_t>(req.external->timeout_seconds * 1000));
        UNSEEN_ASSIGN_OR_RETURN(std::string seed, RandomBytes(8));
        std::memcpy(&predictor.shuffle_seed, seed.data(), 8);
        sample = guard->EvaluateExternal(predictor, setup.metric, setup.range);
      } else {
        sample = guard->EvaluateModel(*q.frozen, setup.metric, setup.range);
      }
      if (!sample.ok()) {
        return Status::InvalidArgument("model '" + q.name + "': " + sample.status().message());
      }
      if (req.thresholdout) {
        if (tho_state.budget_left == 0) {
          ledger->Rollback();
          return Refuse(req,
                        "thresholdout's overfitting budget (B = " + std::to_string(tho.budget) +
                            ") ran out in this batch at model '" + q.name + "'",
                        json{{"thresholdout_budget", tho.budget}});
        }
        UNSEEN_ASSIGN_OR_RETURN(double train,
                                TrainingMean(*ledger, st, req, q, setup, &train_rows));
        const double w = sample->range_hi - sample->range_lo;
        const double holdout = (sample->mean - sample->range_lo) / w;
        double draws[3];
        for (double& d : draws) {
          UNSEEN_ASSIGN_OR_RETURN(double u, UniformDraw());
          d = u;
        }
        ThresholdoutAnswer t = ThresholdoutQuery(
            train, holdout, tho, Laplace(draws[0], 4 * tho.sigma), Laplace(draws[1], tho.sigma),
            Laplace(draws[2], 2 * tho.sigma), &tho_state);
        MetricSample shown_sample = *sample;
        shown_sample.estimate = sample->range_lo + w * t.value;
        a.mode = "thresholdout";
        a.tau = tho.tau;
        a.n = sample->n;
        a.step = w / static_cast<double>(kRevealGridPoints - 1);
        a.estimate =
            RoundToResolution(shown_sample.estimate, a.step, sample->range_lo, sample->range_hi);
        a.lower = std::fmax(sample->range_lo, a.estimate - w * tho.tau);
        a.upper = std::fmin(sample->range_hi, a.estimate + w * tho.tau);
        a.range_lo = sample->range_lo;
        a.range_hi = sample->range_hi;
        a.range_source = "metric";
        a.outside_range = sample->outside_range;
        a.reveals_before_freeze = q.reveals_before;
        a.log_weight = q.log_weight;
        a.log_hypotheses = log_h;
        a.assumptions =
            "Thresholdout (Dwork et al. 2015, Theorem 25): with probability at least 1 - delta, "
            "every answer is within tau = " +
            std::to_string(tho.tau) +
            " (on the [0, 1] scale of the metric's range) of the true value while fewer than B = " +
            std::to_string(tho.budget) +
            " answers used the holdout, over m = " + std::to_string(tho.m) +
            " queries from any adaptive analyst; the holdout rows are an independent sample "
            "of the population the model will meet, and no bound corrects a sampling bias.";
        json aj = AnswerJson(a);
        aj["log_values"] = std::log(static_cast<double>(kRevealGridPoints));
        answers.push_back(aj);
        report.answers.push_back(std::move(a));
        tho_answers.push_back(t.used_holdout);
        continue;
      }
      if (req.ladder) {
        // Algorithm 1 on the loss; the interval is for the leader's true loss.
        UNSEEN_ASSIGN_OR_RETURN(double eps, LadderEpsilon(sample->n, req.delta, ladder));
        LadderStepResult step = LadderStep(ladder_value, sample->mean, ladder.step);
        ladder_value = step.released;
        if (step.improved) ladder_leader = q.name;
        const double half = ladder.step / 2 + eps;
        a.mode = "ladder";
        a.improved = step.improved;
        a.leader = ladder_leader;
        a.ladder_step = ladder.step;
        a.n = sample->n;
        a.estimate = step.released;
        a.lower = std::fmax(sample->range_lo, step.released - half);
        a.upper = std::fmin(sample->range_hi, step.released + half);
        a.step = ladder.step;
        a.range_lo = sample->range_lo;
        a.range_hi = sample->range_hi;
        a.range_source = "metric";
        a.outside_range = sample->outside_range;
        a.reveals_before_freeze = q.reveals_before;
        a.log_weight = q.log_weight;
        a.log_hypotheses = LadderLogSubmissions(ladder);
        a.assumptions =
            "The Ladder (Blum & Hardt 2015): the interval holds for the leader's true loss, "
            "together with every submission the ladder can answer (" +
            std::to_string(ladder.max_submissions) +
            "), for any adaptive analyst; the holdout rows are an independent sample of the "
            "population the model will meet, and no bound corrects a sampling bias.";
        json aj = AnswerJson(a);
        // A ladder answer is one of the grid's values or "no change".
        aj["log_values"] =
            std::log(std::floor((ladder.range_hi - ladder.range_lo) / ladder.step) + 3);
        aj["ladder_max_submissions"] = ladder.max_submissions;
        answers.push_back(aj);
        report.answers.push_back(std::move(a));
        continue;
      }
      UNSEEN_ASSIGN_OR_RETURN(Bound b, MetricBound(*sample, setup.method, req.delta, log_h));
      RevealedAnswer shown = RevealAnswer(*sample, b, setup.method);
      a.n = sample->n;
      a.estimate = shown.estimate;
      a.lower = shown.lower;
      a.upper = shown.upper;
      a.step = shown.step;
      a.range_lo = sample->range_lo;
      a.range_hi = sample->range_hi;
      a.range_source = (setup.metric == Metric::kMse || setup.metric == Metric::kMae)
                           ? setup.range.target_range_source
                           : (setup.metric == Metric::kLogLoss ? "prob-floor" : "metric");
      a.outside_range = sample->outside_range;
      a.reveals_before_freeze = q.reveals_before;
      a.log_weight = q.log_weight;
      a.log_hypotheses = log_h;
      a.assumptions = b.assumptions;
      json aj = AnswerJson(a);
      aj["log_values"] = shown.log_values;
      answers.push_back(aj);
      report.answers.push_back(std::move(a));
      continue;
    }
    answers.push_back(AnswerJson(a));
    report.answers.push_back(std::move(a));
  }

  // 6. One entry for the batch.
  json parents = json::array();
  for (const Query& q : queries) {
    if (q.kind == "frozen") parents.push_back(q.frozen_at);
  }
  std::string names_text;
  for (const Query& q : queries) names_text += (names_text.empty() ? "" : ", ") + q.name;
  json external = nullptr;
  if (req.external) {
    external = queries.back().model;
    external["name"] = req.external->name;
    external["timeout_seconds"] = req.external->timeout_seconds;
  }
  json thresholdout = nullptr;
  if (req.thresholdout && new_queries > 0) {
    // The noisy threshold and the budget left are secret: sealed with the
    // holdout key, so that the next call (and an auditor with the key) can read them.
    json state = {{"noisy_threshold", tho_state.noisy_threshold},
                  {"budget_left", tho_state.budget_left},
                  {"used_holdout", tho_answers}};
    UNSEEN_ASSIGN_OR_RETURN(auto writer, SealedWriter::Create(*key, tho_aad));
    UNSEEN_RETURN_IF_ERROR(writer->Append(state.dump()));
    UNSEEN_ASSIGN_OR_RETURN(std::string blob, writer->Finish());
    UNSEEN_ASSIGN_OR_RETURN(BlobRef ref, ledger->PutBlob("thresholdout-state", blob));
    blobs.push_back(ref);
    thresholdout = {{"tau", tho.tau},
                    {"threshold", tho.threshold},
                    {"sigma", tho.sigma},
                    {"m", tho.m},
                    {"budget", tho.budget},
                    {"beta", tho.beta},
                    {"state", ToHex(ref.digest)}};
  }
  json fields = {
      {"answers", answers},
      {"thresholdout", thresholdout},
      {"external", external},
      {"queries_spent", report.queries_spent},
      {"queries_total", report.queries_total},
      {"budget", report.budget},
      {"log_hypotheses", log_h},
      {"holdout_rows", st.seal->holdout_rows},
      {"parents", parents},
      {"accept_contamination",
       req.accept_contamination.empty() ? json(nullptr) : json(req.accept_contamination)},
      {"summary", "evaluated " + names_text + " on the holdout (" + metric_name + ", " +
                      std::to_string(report.queries_spent) + " new queries, " +
                      std::to_string(report.queries_total) + " of " +
                      std::to_string(report.budget) + " used)"}};
  UNSEEN_ASSIGN_OR_RETURN(Entry e, ledger->Append("eval", req.actor, fields.dump(), blobs));
  UNSEEN_RETURN_IF_ERROR(ledger->Commit());
  report.head = e.hash;
  return report;
}

}  // namespace unseen
