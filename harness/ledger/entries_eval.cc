// The codec of the entries about the holdout's use: eval, budget, refusal.
#include <tuple>

#include "harness/ledger/entries.h"
#include "harness/ledger/entry_reader.h"

namespace unseen {

using json = nlohmann::json;
using internal::BodyReader;
using internal::FileJson;
using internal::Path;

// --- eval ---

namespace {

json AnswerRecordJson(const EvalAnswerRecord& a) {
  json j = {{"model", a.model},
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
            {"range", json::array({a.range_lo, a.range_hi})},
            {"range_source", a.range_source},
            {"target_range", json::array({a.target_lo, a.target_hi})},
            {"prob_floor", a.prob_floor},
            {"outside_range", a.outside_range},
            {"queries", a.queries},
            {"answer_index", a.answer_index},
            {"log_share", a.log_share},
            {"reveals_before", a.reveals_before},
            {"log_transcript", a.log_transcript},
            {"log_question", a.log_question},
            {"log_hypotheses", a.log_hypotheses},
            {"repeat_of", a.repeat_of ? json(*a.repeat_of) : json(nullptr)},
            {"contaminated", a.contaminated},
            {"taints", a.taints},
            {"mode", a.mode},
            {"improved", a.improved},
            {"leader", a.leader},
            {"ladder_step", a.ladder_step},
            {"tau", a.tau}};
  if (a.code_length) j["code_length"] = *a.code_length;
  if (a.ladder_max_submissions) j["ladder_max_submissions"] = *a.ladder_max_submissions;
  return j;
}

// A required [lo, hi] pair.
void ReadRange(BodyReader& r, const std::string& key, double* lo, double* hi) {
  const std::vector<double> range = r.Required<std::vector<double>>(key);
  if (range.size() == 2) {
    *lo = range[0];
    *hi = range[1];
  } else {
    r.Fail("'" + key + "' should be [lo, hi]");
  }
}

// What the eval command itself reads back is required; the Ladder's and
// Thresholdout's fields default as they did for answers written before them.
EvalAnswerRecord ReadAnswer(BodyReader& r, size_t i) {
  auto at = [i](const char* key) { return Path("answers", i, key); };
  EvalAnswerRecord a;
  a.model = r.Optional<std::string>(at("model"));
  a.kind = r.Optional<std::string>(at("kind"));
  a.model_digest = r.RequiredDigest(at("model_digest"));
  a.metric = r.Required<std::string>(at("metric"));
  a.method = r.Required<std::string>(at("method"));
  a.delta = r.Required<double>(at("delta"));
  a.n = r.Required<uint64_t>(at("n"));
  a.estimate = r.Required<double>(at("estimate"));
  a.lower = r.Required<double>(at("lower"));
  a.upper = r.Required<double>(at("upper"));
  a.step = r.Required<double>(at("step"));
  ReadRange(r, at("range"), &a.range_lo, &a.range_hi);
  a.range_source = r.Required<std::string>(at("range_source"));
  ReadRange(r, at("target_range"), &a.target_lo, &a.target_hi);
  a.prob_floor = r.Required<double>(at("prob_floor"));
  a.outside_range = r.Required<bool>(at("outside_range"));
  a.queries = r.Optional<uint64_t>(at("queries"));
  a.answer_index = r.Required<uint64_t>(at("answer_index"));
  a.log_share = r.Required<double>(at("log_share"));
  a.reveals_before = r.Required<uint64_t>(at("reveals_before"));
  a.log_transcript = r.Required<double>(at("log_transcript"));
  a.log_question = r.Required<double>(at("log_question"));
  a.log_hypotheses = r.Required<double>(at("log_hypotheses"));
  a.repeat_of = r.Nullable<int64_t>(at("repeat_of"), /*required=*/true);
  a.contaminated = r.Required<bool>(at("contaminated"));
  a.taints = r.Optional<std::vector<std::string>>(at("taints"));
  a.mode = r.Optional<std::string>(at("mode"), "plain");
  a.improved = r.Optional<bool>(at("improved"), false);
  a.leader = r.Optional<std::string>(at("leader"));
  a.ladder_step = r.Optional<double>(at("ladder_step"), 0.0);
  a.tau = r.Optional<double>(at("tau"), 0.0);
  a.code_length = r.Nullable<double>(at("code_length"));
  a.ladder_max_submissions = r.Nullable<uint64_t>(at("ladder_max_submissions"));
  return a;
}

json ThresholdoutJson(const EvalThresholdout& t) {
  return {{"tau", t.params.tau},
          {"threshold", t.params.threshold},
          {"sigma", t.params.sigma},
          {"m", t.params.m},
          {"budget", t.params.budget},
          {"beta", t.params.beta},
          {"state", ToHex(t.state)},
          {"run_start", t.run_start},
          {"run_answers", t.run_answers}};
}

EvalThresholdout ReadThresholdout(BodyReader& r) {
  EvalThresholdout t;
  t.params.tau = r.Required<double>("thresholdout.tau");
  t.params.threshold = r.Required<double>("thresholdout.threshold");
  t.params.sigma = r.Required<double>("thresholdout.sigma");
  t.params.m = r.Required<uint64_t>("thresholdout.m");
  t.params.budget = r.Required<uint64_t>("thresholdout.budget");
  t.params.beta = r.Required<double>("thresholdout.beta");
  t.state = r.RequiredDigest("thresholdout.state");
  t.run_start = r.Required<uint64_t>("thresholdout.run_start");
  t.run_answers = r.Required<uint64_t>("thresholdout.run_answers");
  return t;
}

json ExternalJson(const EvalExternal& e) {
  json attached = json::array();
  for (const FileRecord& f : e.attached) attached.push_back(FileJson(f));
  json j = {{"name", e.name},
            {"command", e.command},
            {"attached", attached},
            {"timeout_seconds", e.timeout_seconds}};
  if (!e.confinement.empty()) j["confinement"] = e.confinement;
  return j;
}

EvalExternal ReadExternal(BodyReader& r) {
  EvalExternal e;
  e.name = r.Optional<std::string>("external.name");
  e.command = r.Optional<std::string>("external.command");
  const size_t n = r.ArraySize("external.attached", /*required=*/false);
  for (size_t i = 0; i < n; ++i) {
    e.attached.push_back({r.Optional<std::string>(Path("external.attached", i, "path")),
                          r.OptionalDigest(Path("external.attached", i, "sha256"))});
  }
  e.timeout_seconds = r.Optional<double>("external.timeout_seconds");
  e.confinement = r.Optional<ConfinementRecord>("external.confinement");
  return e;
}

}  // namespace

std::string EncodeFields(const EvalBody& b) {
  json answers = json::array();
  for (const EvalAnswerRecord& a : b.answers) answers.push_back(AnswerRecordJson(a));
  const json j = {
      {"answers", answers},
      {"thresholdout", b.thresholdout ? ThresholdoutJson(*b.thresholdout) : json(nullptr)},
      {"external", b.external ? ExternalJson(*b.external) : json(nullptr)},
      {"queries_spent", b.queries_spent},
      {"queries_total", b.queries_total},
      {"budget", b.budget},
      {"log_hypotheses", b.log_hypotheses},
      {"holdout_rows", b.holdout_rows},
      {"parents", b.parents},
      {"accept_contamination",
       b.accept_contamination ? json(*b.accept_contamination) : json(nullptr)},
      {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, EvalBody* b) {
  BodyReader r(entry, EvalBody::kKind);
  b->answers.clear();
  const size_t n = r.ArraySize("answers", /*required=*/true);
  for (size_t i = 0; i < n; ++i) b->answers.push_back(ReadAnswer(r, i));
  b->thresholdout.reset();
  if (r.Has("thresholdout")) b->thresholdout = ReadThresholdout(r);
  b->external.reset();
  if (r.Has("external")) b->external = ReadExternal(r);
  b->queries_spent = r.Optional<uint64_t>("queries_spent", 0);
  b->queries_total = r.Optional<uint64_t>("queries_total");
  b->budget = r.Optional<uint64_t>("budget");
  b->log_hypotheses = r.Optional<double>("log_hypotheses");
  b->holdout_rows = r.Optional<uint64_t>("holdout_rows");
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->accept_contamination = r.Nullable<std::string>("accept_contamination");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- budget ---

std::string EncodeFields(const BudgetBody& b) {
  const json j = {{"add_queries", b.add_queries},
                  {"budget_before", b.budget_before},
                  {"budget_after", b.budget_after},
                  {"queries_used", b.queries_used},
                  {"reason", b.reason},
                  {"parents", b.parents},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, BudgetBody* b) {
  BodyReader r(entry, BudgetBody::kKind);
  b->add_queries = r.Required<uint64_t>("add_queries");
  b->budget_before = r.Optional<uint64_t>("budget_before");
  b->budget_after = r.Optional<uint64_t>("budget_after");
  b->queries_used = r.Optional<uint64_t>("queries_used");
  b->reason = r.Optional<std::string>("reason");
  b->parents = r.Optional<std::vector<int64_t>>("parents");
  b->summary = r.Optional<std::string>("summary");
  return r.Finish();
}

// --- refusal ---

std::string EncodeFields(const RefusalBody& b) {
  const json j = {{"command", b.command},
                  {"code", b.code},
                  {"reason", b.reason},
                  {"details", b.details},
                  {"summary", b.summary}};
  return j.dump();
}

Status DecodeBody(const Entry& entry, RefusalBody* b) {
  BodyReader r(entry, RefusalBody::kKind);
  b->command = r.Required<std::string>("command");
  b->code = r.Required<int>("code");
  b->reason = r.Required<std::string>("reason");
  b->details = r.Required<json>("details");
  b->summary = r.Required<std::string>("summary");
  return r.Finish();
}

// --- equality ---

namespace {

auto Tie(const EvalAnswerRecord& a) {
  return std::tie(a.model, a.kind, a.model_digest, a.metric, a.method, a.delta, a.n, a.estimate,
                  a.lower, a.upper, a.step, a.range_lo, a.range_hi, a.range_source, a.target_lo,
                  a.target_hi, a.prob_floor, a.outside_range,
                  a.queries, a.answer_index, a.log_share, a.reveals_before, a.log_transcript,
                  a.log_question, a.log_hypotheses, a.repeat_of,
                  a.contaminated, a.taints, a.mode, a.improved, a.leader, a.ladder_step, a.tau,
                  a.code_length, a.ladder_max_submissions);
}

}  // namespace

bool operator==(const EvalAnswerRecord& a, const EvalAnswerRecord& b) { return Tie(a) == Tie(b); }

bool operator==(const EvalThresholdout& a, const EvalThresholdout& b) {
  const ThresholdoutParams& p = a.params;
  const ThresholdoutParams& q = b.params;
  return std::tie(p.tau, p.threshold, p.sigma, p.m, p.budget, p.beta, a.state, a.run_start,
                  a.run_answers) ==
         std::tie(q.tau, q.threshold, q.sigma, q.m, q.budget, q.beta, b.state, b.run_start,
                  b.run_answers);
}

bool operator==(const EvalExternal& a, const EvalExternal& b) {
  return std::tie(a.name, a.command, a.attached, a.timeout_seconds, a.confinement) ==
         std::tie(b.name, b.command, b.attached, b.timeout_seconds, b.confinement);
}

bool operator==(const EvalBody& a, const EvalBody& b) {
  return std::tie(a.answers, a.thresholdout, a.external, a.queries_spent, a.queries_total, a.budget,
                  a.log_hypotheses, a.holdout_rows, a.parents, a.accept_contamination, a.summary) ==
         std::tie(b.answers, b.thresholdout, b.external, b.queries_spent, b.queries_total, b.budget,
                  b.log_hypotheses, b.holdout_rows, b.parents, b.accept_contamination, b.summary);
}

bool operator==(const BudgetBody& a, const BudgetBody& b) {
  return std::tie(a.add_queries, a.budget_before, a.budget_after, a.queries_used, a.reason,
                  a.parents, a.summary) == std::tie(b.add_queries, b.budget_before, b.budget_after,
                                                    b.queries_used, b.reason, b.parents, b.summary);
}

bool operator==(const RefusalBody& a, const RefusalBody& b) {
  return std::tie(a.command, a.code, a.reason, a.details, a.summary) ==
         std::tie(b.command, b.code, b.reason, b.details, b.summary);
}

}  // namespace unseen
