#include "harness/bounds/accounting.h"

#include <algorithm>
#include <cmath>

namespace unseen {

double LogDeltaShare(uint64_t answer, uint64_t sealed_budget) {
  const double j = static_cast<double>(std::max<uint64_t>(answer, 1));
  const double b = static_cast<double>(std::max<uint64_t>(sealed_budget, 1));
  // 1/(j(j+1)) in log space, so that huge j do not underflow.
  const double log_early = -std::log(j) - std::log1p(j);
  if (answer > sealed_budget) return std::log(2.0) - log_early;
  const double log_flat = -std::log(b);
  // ln(a + c) = max + log1p(exp(min - max)).
  const double hi = std::max(log_early, log_flat), lo = std::min(log_early, log_flat);
  return std::log(2.0) - (hi + std::log1p(std::exp(lo - hi)));
}

double LogQuestionCode(uint64_t reveals_before, double log_transcript,
                       std::optional<double> log_advance_choices) {
  if (reveals_before == 0) return 0;
  double code = log_transcript;
  if (log_advance_choices) code = std::min(code, *log_advance_choices);
  return std::log(2.0) + code;
}

double NoFailureCodeLength() { return -std::log1p(-1.0 / 1001); }

double FailureCodeLength(uint64_t source_columns) {
  return std::log(1001.0) + std::log(16.0 * (static_cast<double>(source_columns) + 2));
}

double PlainAnswerCodeLength(double log_values) { return log_values; }

double LadderAnswerCodeLength(bool moved, uint64_t max_submissions, uint64_t grid_values) {
  const double k = static_cast<double>(std::max<uint64_t>(max_submissions, 2));
  const double g = static_cast<double>(std::max<uint64_t>(grid_values, 1));
  if (moved) return std::log(k) + std::log(g);
  return -std::log1p(-1 / k);
}

double ThresholdoutAnswerCodeLength(bool used_holdout, uint64_t m, double log_values) {
  const double mm = static_cast<double>(std::max<uint64_t>(m, 2));
  if (used_holdout) return std::log(mm) + log_values;
  return -std::log1p(-1 / mm);
}

}  // namespace unseen
