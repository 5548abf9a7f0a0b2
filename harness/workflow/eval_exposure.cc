// A model or an external predictor that failed on the holdout: the eval's
// transaction is rolled back, and an `exposure` entry says what was exposed.
#include "harness/ledger/exposure.h"
#include "harness/workflow/eval_steps.h"

namespace unseen::internal {

ConfinementRecord ConfinementOf(const ExternalRun& run) {
  ConfinementRecord out;
  for (const Protection& p : run.protections) out[p.name] = p.enforced;
  return out;
}

Status RecordFailure(EvalRun* run, const Query& q, const Status& error) {
  run->ledger->Rollback();
  ExposureBody body;
  body.model = q.name;
  body.model_kind = q.kind;
  body.model_digest = q.digest;
  body.reason = error.message();
  std::string lacking;
  if (q.kind == "external" && run->external_run) {
    body.holdout_rows_sent = run->external_run->rows_sent;
    body.confinement = ConfinementOf(*run->external_run);
    for (const Protection& p : run->external_run->protections) {
      if (!p.enforced) lacking += (lacking.empty() ? "" : ", ") + p.name;
    }
  }
  UNSEEN_ASSIGN_OR_RETURN(int64_t seq,
                          RecordExposure(run->req->ledger_path, run->req->actor, body));
  std::string message = "model '" + q.name + "': " + error.message() + "; no answer was shown";
  if (body.holdout_rows_sent > 0) {
    message += ", but it received the features of " + std::to_string(body.holdout_rows_sent) +
               " holdout rows";
    if (!lacking.empty()) message += " while not confined by: " + lacking;
  }
  message += " (recorded as exposure entry " + std::to_string(seq) + ")";
  if (error.code() == StatusCode::kInternal) return Status::Internal(message);
  return Status::InvalidArgument(message);
}

}  // namespace unseen::internal
