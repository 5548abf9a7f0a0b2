// Adaptivity: how many hypotheses a holdout score must be protected against,
// read from the ledger's history of reveals. A model frozen after r reveals,
// each rounded to one of R values, is one of at most R^r models the analyst
// could have produced, so the union bound of harness/bounds/bounds.h runs over
// H = sum_j R^(r_j). Everything is in log space. Pure functions: thread-safe.
#ifndef UNSEEN_HARNESS_BOUNDS_ADAPTIVITY_H_
#define UNSEEN_HARNESS_BOUNDS_ADAPTIVITY_H_

#include <cstdint>
#include <vector>

namespace unseen {

// ln( sum_j R^(r_j) ) with R = resolution_values and r_j the reveals that
// came before model j was frozen, computed by log-sum-exp so that huge r_j do
// not overflow. A batch of M models frozen before any reveal (all r_j = 0)
// gives ln M. An empty history gives 0 (a bound is always about at least one
// hypothesis). REQUIRES resolution_values >= 1; 0 (what ResolutionValues
// returns for a bad step) gives NaN, which ComputeBound rejects.
double LogHypotheses(const std::vector<uint64_t>& reveals_before_freeze,
                     uint64_t resolution_values);

// ln( sum_j exp(w_j) ): the general form, for reveals that can each take a
// different number of values. w_j is the sum of ln R_i over the reveals i
// that came before model j was frozen; LogHypotheses is this with every
// w_j = r_j ln R. An empty list gives 0; a NaN or infinite w_j gives NaN.
double LogHypothesesOfWeights(const std::vector<double>& log_weights);

// The number of values a reveal rounded by RoundToResolution can take: the
// grid lo, lo + step, lo + 2 step, ... up to hi, plus hi itself when the grid
// does not land on it (0.001 over [0, 1] gives 1001). Returns 0 for a step
// that is not positive and finite, a range that is not finite with lo < hi,
// or more than 2^40 steps (too few exact digits to place hi).
uint64_t ResolutionValues(double step, double lo, double hi);

// `value` clamped to [lo, hi] and rounded to the nearest point of the grid of
// ResolutionValues (ties go up). This is what a reveal may show, so that the
// count R above is honest. Returns NaN when ResolutionValues(step, lo, hi)
// would return 0 or when value is NaN.
double RoundToResolution(double value, double step, double lo, double hi);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_BOUNDS_ADAPTIVITY_H_
