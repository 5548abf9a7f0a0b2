// Steps the `fit` workflow shares between ordinary pipelines (fit.cc) and
// blends (blend_fit.cc). Internal to harness/workflow. Thread-compatible.
#ifndef UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_
#define UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_

#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/metrics.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/spec.h"
#include "harness/ledger/admit.h"
#include "harness/workflow/fit.h"
#include "harness/ledger/ledger_state.h"
#include "storage/ledger.h"

namespace unseen::internal {

// Loads the fit's data (request.data_path, else the dev file seal wrote) as
// development rows and sets *data_path to the file read. When the data is
// refused (holdout rows, rows that are not dev rows) it rolls `ledger`
// back, appends a `refusal` entry and returns the refusal.
Result<LoadedData> LoadFitData(const FitRequest& request, const LedgerState& state, Ledger* ledger,
                               std::string* data_path);

// Rolls `ledger` back and records `reason` as a `refusal` entry of the fit
// command with `details` (a JSON object); returns `reason` (or the error
// that kept the refusal from being recorded).
Status RefuseFit(const FitRequest& request, Ledger* ledger, const Status& reason,
                 const nlohmann::json& details);

// The fields every frozen model starts with: format, name, ledger_id,
// source_sha256 and target {column, classes}.
nlohmann::json FrozenModelHeader(const LedgerState& state, const std::string& name);

// Fits `candidate` (every transform, then the learner) on the rows of `data` with fold[i] != f
// only, and scores it on the rows with fold[i] == f: no statistic of the scored rows reaches
// the fit.
Result<double> ScoreOnFold(const Candidate& candidate, const LoadedData& data,
                           const std::vector<int>& fold, int f, Metric metric, LearnTask task,
                           int classes);

// The source rows of each fold's validation part (fold[i] == f), as row sets.
std::vector<RowSet> FoldRowSets(const LoadedData& data, const std::vector<int>& fold, int k);

// The spec file's bytes, stored as the fit's `spec` blob.
Result<std::string> ReadSpecBytes(const std::string& path);

// Fits the blend that `spec` describes inside the transaction the caller
// opened on `ledger` (after the seal and name checks), appends its `fit`
// entry and commits. Errors as FitModel documents for blends.
Result<FitReport> FitBlend(const FitRequest& request, const LedgerState& state,
                           const PipelineSpec& spec, Ledger* ledger);

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_WORKFLOW_FIT_STEPS_H_
