// Least squares for blend weights: non-negative least squares by the
// Lawson–Hanson active-set method, and plain least squares with an
// unpenalised intercept through a complete orthogonal decomposition (never
// the normal equations). Pure functions; thread-safe. Internal to harness/
// (uses Eigen types).
#ifndef UNSEEN_HARNESS_PIPELINE_NNLS_H_
#define UNSEEN_HARNESS_PIPELINE_NNLS_H_

#include <Eigen/Dense>

#include "storage/status.h"

namespace unseen {

struct NnlsResult {
  Eigen::VectorXd x;    // the solution, every entry >= 0
  double residual = 0;  // ||A x - b||_2
  int iterations = 0;   // outer iterations (columns moved into the passive set)
};

// min ||A x - b||_2 subject to x >= 0, by Lawson & Hanson, "Solving Least
// Squares Problems" (1974), chapter 23, algorithm NNLS. The unconstrained
// subproblems on the passive columns are solved by a complete orthogonal
// decomposition. A column enters the passive set while its gradient entry
// w_j = (A'(b - Ax))_j exceeds tol = 10 * eps * ||A||_1 * max(rows, cols).
// REQUIRES: b.size() == A.rows(). InvalidArgument on a size mismatch or a
// non-finite entry; FailedPrecondition if it has not converged after
// 3 * cols outer iterations (scipy's default limit).
Result<NnlsResult> NonNegativeLeastSquares(const Eigen::MatrixXd& a, const Eigen::VectorXd& b);

// Weights and intercept of y ~ intercept + P w.
struct LinearWeights {
  Eigen::VectorXd weights;
  double intercept = 0;
};

// Least squares of y on P with an intercept: P and y are centred on their
// means, the weights solve the centred problem (by a complete orthogonal
// decomposition, minimum-norm when P is rank-deficient; or by NNLS when
// `nonnegative`), and intercept = mean(y) - mean(P) w. The intercept is never
// constrained. InvalidArgument on a size mismatch, no rows, or a non-finite
// entry.
Result<LinearWeights> FitLinearWeights(const Eigen::MatrixXd& p, const Eigen::VectorXd& y,
                                       bool nonnegative);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_NNLS_H_
