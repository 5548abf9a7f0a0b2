#include "harness/workflow/bound.h"

#include <stdexcept>

#include <cmath>

#include "harness/bounds/accounting.h"

namespace unseen {

namespace {

Status CheckCounts(const BoundCalcRequest& req) {
  if (!req.errors && !req.mean) return Status::InvalidArgument("expected --errors K or --mean X");
  if (req.errors && req.mean) {
    return Status::InvalidArgument("--errors and --mean exclude each other; expected one");
  }
  if (req.n == 0) return Status::InvalidArgument("--n: expected at least 1 row");
  if (req.models == 0) return Status::InvalidArgument("--models: expected at least 1");
  const bool ledger = req.answer || req.reveals > 0 || req.advance;
  if (ledger && req.models != 1) {
    return Status::InvalidArgument(
        "--models counts questions compared without a ledger; with --answer, --reveals or "
        "--advance, give the questions fixed in advance as --advance");
  }
  if (req.answer && *req.answer <= req.reveals) {
    return Status::InvalidArgument("--answer " + std::to_string(*req.answer) + ": answer j comes after the " +
                                   std::to_string(req.reveals) +
                                   " answers shown before it; expected j > --reveals");
  }
  if (req.budget == 0) return Status::InvalidArgument("--budget: expected at least 1");
  if (req.advance && *req.advance == 0)
    return Status::InvalidArgument("--advance: expected at least 1");
  if (req.resolution_values == 0)
    return Status::InvalidArgument("--resolution-values: expected at least 1");
  if (req.errors && *req.errors > req.n)
    return Status::InvalidArgument("--errors: more errors than --n rows");
  return Status::OK();
}

// "LO:HI" into the request's range.
Status ParseLossRange(const std::string& text, BoundRequest* r) {
  size_t colon = text.find(':', 1);
  try {
    if (colon == std::string::npos) throw std::invalid_argument("");
    r->range_lo = std::stod(text.substr(0, colon));
    r->range_hi = std::stod(text.substr(colon + 1));
  } catch (const std::exception&) {
    return Status::InvalidArgument("--range '" + text + "': expected LO:HI");
  }
  return Status::OK();
}

// The unbiased variance of k ones among n 0/1 values, scaled to the range.
double CountVariance(uint64_t k, uint64_t n, double width) {
  if (n < 2) return 0.0;
  const double p = static_cast<double>(k) / static_cast<double>(n);
  return width * width * p * (1 - p) * static_cast<double>(n) / static_cast<double>(n - 1);
}

}  // namespace

Result<BoundCalcReport> CalculateBound(const BoundCalcRequest& req) {
  UNSEEN_RETURN_IF_ERROR(CheckCounts(req));
  BoundRequest r;
  r.n = req.n;
  r.delta = req.delta;
  UNSEEN_RETURN_IF_ERROR(ParseLossRange(req.range, &r));
  r.method = req.errors ? BoundMethod::kClopperPearson : BoundMethod::kHoeffding;
  if (!req.method.empty()) {
    auto m = ParseBoundMethod(req.method);
    if (!m.ok()) return Status::InvalidArgument("--method: " + m.status().message());
    r.method = *m;
  }
  const double width = r.range_hi - r.range_lo;
  if (req.errors) {
    r.successes = *req.errors;
    r.mean = r.range_lo + width * static_cast<double>(*req.errors) / static_cast<double>(req.n);
    if (r.method == BoundMethod::kBernstein && !req.variance) {
      r.variance = CountVariance(*req.errors, req.n, width);
    }
  } else {
    r.mean = *req.mean;
  }
  if (req.variance) r.variance = *req.variance;
  if (req.answer || req.reveals > 0 || req.advance) {
    const uint64_t j = req.answer.value_or(req.reveals + 1);
    const double transcript =
        static_cast<double>(req.reveals) * std::log(static_cast<double>(req.resolution_values));
    std::optional<double> advance;
    if (req.advance) advance = std::log(static_cast<double>(*req.advance));
    r.log_hypotheses = LogDeltaShare(j, req.budget) + LogQuestionCode(req.reveals, transcript, advance);
  } else {
    r.log_hypotheses = std::log(static_cast<double>(req.models));
  }
  auto b = ComputeBound(r);
  if (!b.ok()) return Status::InvalidArgument(b.status().message());
  BoundCalcReport out;
  out.bound = std::move(*b);
  out.metric = req.errors ? "error_rate" : "mean_loss";
  out.log_hypotheses = r.log_hypotheses;
  return out;
}

}  // namespace unseen
