#include "harness/pipeline/nnls.h"

#include <Eigen/QR>
#include <algorithm>
#include <limits>
#include <string>
#include <vector>

namespace unseen {

namespace {

using Eigen::Index;

// The least-squares solution on the passive columns (ascending index order),
// zero elsewhere; minimum-norm if those columns are rank-deficient.
Eigen::VectorXd SolvePassive(const Eigen::MatrixXd& a, const Eigen::VectorXd& b,
                             const std::vector<bool>& passive) {
  std::vector<Index> cols;
  for (Index j = 0; j < a.cols(); ++j) {
    if (passive[static_cast<size_t>(j)]) cols.push_back(j);
  }
  Eigen::MatrixXd sub(a.rows(), static_cast<Index>(cols.size()));
  for (size_t k = 0; k < cols.size(); ++k) sub.col(static_cast<Index>(k)) = a.col(cols[k]);
  Eigen::VectorXd z = Eigen::CompleteOrthogonalDecomposition<Eigen::MatrixXd>(sub).solve(b);
  Eigen::VectorXd s = Eigen::VectorXd::Zero(a.cols());
  for (size_t k = 0; k < cols.size(); ++k) s(cols[k]) = z(static_cast<Index>(k));
  return s;
}

// The inner loop of NNLS: from a feasible x, moves towards the passive
// least-squares solution until it is strictly positive on the passive set,
// dropping the columns that hit zero on the way. Returns false (x unchanged)
// when the column `entering` just added gets a non-positive value at once,
// which happens only through rounding; the caller then tries another column.
bool InnerLoop(const Eigen::MatrixXd& a, const Eigen::VectorXd& b, Index entering,
               std::vector<bool>* passive, Eigen::VectorXd* x) {
  const Index n = a.cols();
  for (bool first = true;; first = false) {
    Eigen::VectorXd s = SolvePassive(a, b, *passive);
    if (first && s(entering) <= 0) return false;
    double alpha = std::numeric_limits<double>::infinity();
    Index blocking = -1;
    for (Index j = 0; j < n; ++j) {
      if (!(*passive)[static_cast<size_t>(j)] || s(j) > 0) continue;
      double step = (*x)(j) / ((*x)(j)-s(j));
      if (step < alpha) {
        alpha = step;
        blocking = j;
      }
    }
    if (blocking < 0) {
      *x = s;
      return true;
    }
    *x += alpha * (s - *x);
    (*x)(blocking) = 0;
    for (Index j = 0; j < n; ++j) {
      if ((*passive)[static_cast<size_t>(j)] && (*x)(j) <= 0) {
        (*passive)[static_cast<size_t>(j)] = false;
        (*x)(j) = 0;
      }
    }
  }
}

}  // namespace

Result<NnlsResult> NonNegativeLeastSquares(const Eigen::MatrixXd& a, const Eigen::VectorXd& b) {
  if (b.size() != a.rows()) {
    return Status::InvalidArgument("nnls: A has " + std::to_string(a.rows()) + " rows but b has " +
                                   std::to_string(b.size()) + " entries");
  }
  if (!a.allFinite() || !b.allFinite()) {
    return Status::InvalidArgument("nnls: A and b must be finite");
  }
  const Index m = a.rows(), n = a.cols();
  NnlsResult r;
  r.x = Eigen::VectorXd::Zero(n);
  if (n == 0 || m == 0) {
    r.residual = b.norm();
    return r;
  }
  const double norm1 = a.cwiseAbs().colwise().sum().maxCoeff();
  const double tol =
      10 * std::numeric_limits<double>::epsilon() * norm1 * static_cast<double>(std::max(m, n));
  const int max_outer = 3 * static_cast<int>(n);
  std::vector<bool> passive(static_cast<size_t>(n), false);
  std::vector<bool> blocked(static_cast<size_t>(n), false);  // rejected since x last changed
  while (true) {
    Eigen::VectorXd w = a.transpose() * (b - a * r.x);
    Index t = -1;
    double best = tol;
    for (Index j = 0; j < n; ++j) {
      auto u = static_cast<size_t>(j);
      if (!passive[u] && !blocked[u] && w(j) > best) {
        best = w(j);
        t = j;
      }
    }
    if (t < 0) break;
    if (r.iterations == max_outer) {
      return Status::FailedPrecondition("nnls: no convergence after " + std::to_string(max_outer) +
                                        " iterations");
    }
    ++r.iterations;
    passive[static_cast<size_t>(t)] = true;
    if (InnerLoop(a, b, t, &passive, &r.x)) {
      std::fill(blocked.begin(), blocked.end(), false);
    } else {
      passive[static_cast<size_t>(t)] = false;
      blocked[static_cast<size_t>(t)] = true;
    }
  }
  r.residual = (a * r.x - b).norm();
  return r;
}

Result<LinearWeights> FitLinearWeights(const Eigen::MatrixXd& p, const Eigen::VectorXd& y,
                                       bool nonnegative) {
  if (p.rows() != y.size()) {
    return Status::InvalidArgument("blend weights: " + std::to_string(p.rows()) +
                                   " rows of predictions for " + std::to_string(y.size()) +
                                   " targets");
  }
  if (p.rows() == 0) return Status::InvalidArgument("blend weights: no rows");
  if (!p.allFinite() || !y.allFinite()) {
    return Status::InvalidArgument("blend weights: member predictions and targets must be finite");
  }
  const double y_mean = y.mean();
  LinearWeights out;
  if (p.cols() == 0) {  // no members left: the intercept alone
    out.weights = Eigen::VectorXd(0);
    out.intercept = y_mean;
    return out;
  }
  const Eigen::RowVectorXd p_mean = p.colwise().mean();
  const Eigen::MatrixXd pc = p.rowwise() - p_mean;
  const Eigen::VectorXd yc = y.array() - y_mean;
  if (nonnegative) {
    UNSEEN_ASSIGN_OR_RETURN(NnlsResult r, NonNegativeLeastSquares(pc, yc));
    out.weights = r.x;
  } else {
    out.weights = Eigen::CompleteOrthogonalDecomposition<Eigen::MatrixXd>(pc).solve(yc);
  }
  out.intercept = y_mean - p_mean.dot(out.weights);
  return out;
}

}  // namespace unseen
