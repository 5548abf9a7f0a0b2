// The `eval` command as named steps (workflow/eval_steps.h): plan the
// questions, refuse what the guard must refuse, replay the reuse
// mechanisms, weigh adaptivity, open the holdout only if a question is new,
// answer, and record one entry for the batch.
#include "harness/workflow/eval.h"

#include <cmath>

#include "harness/bounds/bounds.h"
#include "harness/ledger/keys.h"
#include "harness/workflow/eval_steps.h"

namespace unseen {

namespace internal {

using json = nlohmann::json;

Status Refuse(EvalRun* run, const std::string& why, const json& details) {
  run->ledger->Rollback();
  Status s = Status::Refused(why);
  UNSEEN_RETURN_IF_ERROR(
      RecordRefusal(run->req->ledger_path, run->req->actor, "eval", s, details.dump()));
  return s;
}

namespace {

// Opens the ledger in the command's transaction and fixes the metric.
Result<std::unique_ptr<EvalRun>> OpenRun(const EvalRequest& req) {
  if (req.models.empty() && !req.external) {
    return Status::InvalidArgument("eval: expected at least one model name (or --command)");
  }
  auto run = std::make_unique<EvalRun>();
  run->req = &req;
  UNSEEN_ASSIGN_OR_RETURN(SealedLedger opened, OpenSealedLedger(req.ledger_path));
  run->ledger = std::move(opened.ledger);
  run->st = std::move(opened.state);
  UNSEEN_ASSIGN_OR_RETURN(run->setup, SetUpMetric(req, run->st));
  run->metric_name = MetricName(run->setup.metric);
  run->method_name = req.ladder         ? "ladder"
                     : req.thresholdout ? "thresholdout"
                                        : BoundMethodName(run->setup.method);
  UNSEEN_RETURN_IF_ERROR(CheckModes(*run));
  UNSEEN_ASSIGN_OR_RETURN(run->past, PastAnswers(*run->ledger));
  return run;
}

// A tainted model is refused unless the caller accepts the contamination.
Status RefuseTainted(EvalRun* run) {
  json tainted = json::array();
  for (const Query& q : run->queries) {
    if (!q.taints.empty()) tainted.push_back({{"model", q.name}, {"taints", q.taints}});
  }
  if (tainted.empty() || !run->req->accept_contamination.empty()) return Status::OK();
  std::string why = "model '" + tainted[0]["model"].get<std::string>() +
                    "' is tainted: " + tainted[0]["taints"][0].get<std::string>() +
                    "; its holdout score would not be an honest estimate (use "
                    "--accept-contamination REASON to evaluate it anyway, marked contaminated)";
  json details = {{"tainted", tainted}};
  for (const Query& q : run->queries) {
    // One bit the accounting counts (PlaceAnswers): the key holder's check found holdout rows.
    if (q.attachments_hold_holdout_rows) details["attachments_hold_holdout_rows"] = true;
  }
  return Refuse(run, why, details);
}

// Counts the new queries against the budget.
Status RefuseOverBudget(EvalRun* run) {
  EvalReport& r = run->report;
  const uint64_t used = run->st.holdout_queries;
  r.budget = run->st.seal->budget_queries;
  r.budget_raises = run->st.budget_raises;
  r.queries_spent = run->new_queries;
  r.queries_total = used + run->new_queries;
  if (r.queries_total <= r.budget) return Status::OK();
  std::string why = "the holdout budget is spent: " + std::to_string(used) + " of " +
                    std::to_string(r.budget) + " queries used, and this call asks " +
                    std::to_string(run->new_queries) +
                    " more (raise it with `unseen budget --raise N`)";
  return Refuse(run, why,
                json{{"queries_used", used}, {"budget", r.budget}, {"asked", run->new_queries}});
}

// The half-width accepted at seal, known before any holdout value is read:
// it depends on n and the level of the call's last new answer only.
Status RefuseTooWide(EvalRun* run) {
  const SealInfo& seal = *run->st.seal;
  if (!(seal.budget_half_width > 0) || run->new_queries == 0) return Status::OK();
  UNSEEN_ASSIGN_OR_RETURN(double eps,
                          OneSidedHoeffdingEpsilon(seal.holdout_rows, 1.0, seal.budget_delta,
                                                   run->log_h + std::log(2.0)));
  if (eps <= seal.budget_half_width) return Status::OK();
  return Refuse(run,
                "the holdout budget is spent: after " + std::to_string(run->st.holdout_queries) +
                    " answers (level delta * exp(-" + std::to_string(run->log_h) +
                    ") for this call's last), the Hoeffding half-width would be " +
                    std::to_string(eps) + ", wider than the " +
                    std::to_string(seal.budget_half_width) + " accepted at seal (delta " +
                    std::to_string(seal.budget_delta) + ")",
                json{{"half_width", eps},
                     {"budget_half_width", seal.budget_half_width},
                     {"log_hypotheses", run->log_h}});
}

// The holdout, opened only if some question is new.
Status OpenGuard(EvalRun* run) {
  if (run->new_queries == 0) return Status::OK();
  if (!run->req->key)
    return Status::InvalidArgument("--key-file: the seal key is needed to read the holdout");
  if (!run->key) {
    UNSEEN_ASSIGN_OR_RETURN(run->key,
                            KeyForSeal(*run->req->key, *run->st.seal, run->st.ledger_id));
  }
  UNSEEN_ASSIGN_OR_RETURN(run->guard, HoldoutGuard::Open(*run->ledger, run->st, *run->key));
  return Status::OK();
}

// An external predictor's identity as the entry records it.
Result<EvalExternal> ExternalRecord(const EvalRun& run, const ExternalModelRequest& ext,
                                    const Query& q) {
  EvalExternal out;
  out.name = ext.name;
  out.command = ext.command;
  out.timeout_seconds = ext.timeout_seconds;
  if (run.external_run) out.confinement = ConfinementOf(*run.external_run);
  for (const json& a : q.model.at("attached")) {
    UNSEEN_ASSIGN_OR_RETURN(Digest256 d, Digest256FromHex(a.at("sha256").get<std::string>()));
    out.attached.push_back(FileRecord{a.at("path").get<std::string>(), d});
  }
  return out;
}

// One entry for the batch, then the commit.
Status RecordAnswers(EvalRun* run) {
  const EvalRequest& req = *run->req;
  const EvalReport& r = run->report;
  EvalBody body;
  std::string names;
  for (const Query& q : run->queries) {
    if (q.kind == "frozen") body.parents.push_back(q.frozen_at);
    names += (names.empty() ? "" : ", ") + q.name;
  }
  if (req.external) {
    UNSEEN_ASSIGN_OR_RETURN(body.external,
                            ExternalRecord(*run, *req.external, run->queries.back()));
  }
  if (req.thresholdout && run->new_queries > 0) {
    UNSEEN_ASSIGN_OR_RETURN(body.thresholdout, SealThresholdoutState(run));
  }
  body.answers = std::move(run->answers);
  body.queries_spent = r.queries_spent;
  body.queries_total = r.queries_total;
  body.budget = r.budget;
  body.log_hypotheses = run->log_h;
  body.holdout_rows = run->st.seal->holdout_rows;
  if (!req.accept_contamination.empty()) body.accept_contamination = req.accept_contamination;
  body.summary = "evaluated " + names + " on the holdout (" + run->metric_name + ", " +
                 std::to_string(r.queries_spent) + " new queries, " +
                 std::to_string(r.queries_total) + " of " + std::to_string(r.budget) + " used)";
  UNSEEN_ASSIGN_OR_RETURN(Entry e, AppendEntry(run->ledger.get(), req.actor, body, run->blobs));
  UNSEEN_RETURN_IF_ERROR(run->ledger->Commit());
  run->report.head = e.hash;
  return Status::OK();
}

}  // namespace
}  // namespace internal

Result<EvalReport> EvaluateModels(const EvalRequest& req) {
  using namespace internal;
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<EvalRun> run, OpenRun(req));
  // What is asked, and whether the guard refuses it; nothing is revealed yet.
  UNSEEN_RETURN_IF_ERROR(PlanQueries(run.get()));
  UNSEEN_RETURN_IF_ERROR(PlaceAnswers(run.get()));
  UNSEEN_RETURN_IF_ERROR(RefuseTainted(run.get()));
  UNSEEN_RETURN_IF_ERROR(RefuseOverBudget(run.get()));
  UNSEEN_RETURN_IF_ERROR(ReplayLadder(run.get()));
  UNSEEN_RETURN_IF_ERROR(LoadThresholdout(run.get()));
  UNSEEN_RETURN_IF_ERROR(RefuseTooWide(run.get()));
  // The holdout is read only past this point.
  UNSEEN_RETURN_IF_ERROR(OpenGuard(run.get()));
  for (const Query& q : run->queries) {
    UNSEEN_RETURN_IF_ERROR(AnswerQuery(run.get(), q));
  }
  UNSEEN_RETURN_IF_ERROR(RecordAnswers(run.get()));
  if (run->external_run) run->report.confinement = run->external_run->protections;
  return std::move(run->report);
}

}  // namespace unseen
