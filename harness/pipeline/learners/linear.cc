// `linear` (ordinary least squares) and `ridge` (L2-penalised least squares,
// intercept unpenalised), both by orthogonal factorisations, never by the
// normal equations.
//
// Method. X and y are centred (when there is an intercept), then the
// augmented matrix [Xc | yc] is reduced to an upper-triangular R by a
// tall-skinny QR: row blocks are stacked under the current R and refactored
// with Householder QR, so the work streams through cache. For ridge the rows
// sqrt(l2)*[I | 0] are one more block, which is the QR of the augmented
// system [Xc; sqrt(l2) I]. Then R = [R11 z; 0 rho] and the coefficients
// solve R11 b = z by a complete orthogonal decomposition (column-pivoted QR
// with rank detection) of R11 with its columns scaled to unit norm. Since
// R11 = Q'Xc, this is a rank-revealing orthogonal decomposition of Xc
// itself: the pivots and the rank decision are the ones column-pivoted QR of
// Xc would make, and a rank-deficient X gets the minimum-norm solution (in the
// scaled columns). The intercept is mean(y) - mean(X) b.
#include <Eigen/QR>
#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>

#include "harness/pipeline/learners/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

// Rows per tall-skinny QR block, at least a few times the width.
Eigen::Index BlockRows(Eigen::Index width) { return std::max<Eigen::Index>(512, 8 * width); }

struct LeastSquaresFit {
  Eigen::VectorXd coefficients;
  double intercept = 0;
  Eigen::Index rank = 0;
};

// Replaces *r (k x q upper triangular, k <= q) by the R factor of [*r; block]. *stacked is
// workspace, kept between calls: blocks of one size reuse it rather than allocate and free a
// few hundred KiB each (same shape, same arithmetic).
void AbsorbBlock(const Eigen::MatrixXd& block, Eigen::MatrixXd* r, Eigen::MatrixXd* stacked_ws) {
  const Eigen::Index q = block.cols();
  Eigen::MatrixXd& stacked = *stacked_ws;
  stacked.resize(r->rows() + block.rows(), q);  // no allocation when the size is unchanged
  stacked << *r, block;
  Eigen::HouseholderQR<Eigen::Ref<Eigen::MatrixXd>> qr(stacked);
  const Eigen::Index k = std::min(stacked.rows(), q);
  *r = stacked.topRows(k).triangularView<Eigen::Upper>();
}

// Least squares of y on X (centred first when `intercept`), with penalty
// l2*||b||^2 (l2 may be 0).
LeastSquaresFit SolveLeastSquares(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                                  bool intercept, double l2) {
  const Eigen::Index n = X.rows();
  const Eigen::Index p = X.cols();
  Eigen::RowVectorXd x_mean = Eigen::RowVectorXd::Zero(p);
  double y_mean = 0;
  if (intercept) {
    x_mean = X.colwise().mean();
    y_mean = y.mean();
  }
  // Stage 1: R of [Xc | yc] (| penalty rows), block by block.
  Eigen::MatrixXd r(0, p + 1);
  const Eigen::Index step = BlockRows(p + 1);
  Eigen::MatrixXd block, stacked;
  for (Eigen::Index start = 0; start < n; start += step) {
    const Eigen::Index rows = std::min(step, n - start);
    block.resize(rows, p + 1);
    block.leftCols(p) = X.middleRows(start, rows).rowwise() - x_mean;
    block.col(p) = y.segment(start, rows).array() - y_mean;
    AbsorbBlock(block, &r, &stacked);
  }
  if (l2 > 0) {
    block = Eigen::MatrixXd::Zero(p, p + 1);
    block.leftCols(p).diagonal().setConstant(std::sqrt(l2));
    AbsorbBlock(block, &r, &stacked);
  }
  // Stage 2: rank-revealing solve of R11 b = z in unit-norm columns.
  Eigen::MatrixXd r11 = Eigen::MatrixXd::Zero(p, p);
  Eigen::VectorXd z = Eigen::VectorXd::Zero(p);
  const Eigen::Index k = std::min(r.rows(), p);
  r11.topRows(k) = r.topLeftCorner(k, p);
  z.head(k) = r.col(p).head(k);
  Eigen::VectorXd scale = r11.colwise().norm().transpose();
  for (Eigen::Index j = 0; j < p; ++j) {
    if (scale[j] > 0) r11.col(j) /= scale[j];
  }
  Eigen::CompleteOrthogonalDecomposition<Eigen::MatrixXd> cod(r11);
  LeastSquaresFit fit;
  fit.coefficients = cod.solve(z);
  for (Eigen::Index j = 0; j < p; ++j) {
    fit.coefficients[j] = scale[j] > 0 ? fit.coefficients[j] / scale[j] : 0.0;
  }
  fit.rank = cod.rank();
  fit.intercept = intercept ? y_mean - x_mean.dot(fit.coefficients) : 0.0;
  return fit;
}

class LinearModel : public LearnerBase {
 public:
  explicit LinearModel(bool ridge)
      : LearnerBase(ridge ? "ridge" : "linear", false, true), ridge_(ridge) {}

  Status SetParams(const json& params) override {
    ParamReader reader(kind(), params);
    bool intercept = true;
    double l2 = 1.0;
    if (ridge_) {
      UNSEEN_RETURN_IF_ERROR(reader.Number("l2", 0.0, &l2));
    } else {
      UNSEEN_RETURN_IF_ERROR(reader.Bool("intercept", &intercept));
    }
    UNSEEN_RETURN_IF_ERROR(reader.Finish());
    use_intercept_ = intercept;
    l2_ = l2;
    return Status::OK();
  }

  json Params() const override {
    return ridge_ ? json{{"l2", l2_}} : json{{"intercept", use_intercept_}};
  }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    const LeastSquaresFit fit = SolveLeastSquares(X, y, use_intercept_, ridge_ ? l2_ : 0.0);
    coefficients_ = fit.coefficients;
    intercept_ = fit.intercept;
    // Residual statistics from the residuals themselves (one more pass).
    const double rss = (y - *PredictImpl(X)).squaredNorm();
    const Eigen::Index df = X.rows() - fit.rank - (use_intercept_ ? 1 : 0);
    training_ = json{{"rows", X.rows()}, {"rank", fit.rank}, {"rss", rss}};
    if (df > 0) training_["residual_sd"] = std::sqrt(rss / static_cast<double>(df));
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    Eigen::VectorXd out = X * coefficients_;
    out.array() += intercept_;
    return out;
  }

  json Body() const override {
    return json{{"intercept", intercept_},
                {"coefficients", ByName(coefficients_, features())},
                {"training", training_}};
  }

  Status LoadBody(const json& fitted) override {
    UNSEEN_ASSIGN_OR_RETURN(intercept_, GetNumber(kind(), fitted, "intercept"));
    UNSEEN_ASSIGN_OR_RETURN(coefficients_, GetByName(kind(), fitted, "coefficients", features()));
    auto training = fitted.find("training");
    training_ = training != fitted.end() && training->is_object() ? *training : json::object();
    return Status::OK();
  }

 private:
  const bool ridge_;
  bool use_intercept_ = true;
  double l2_ = 1.0;
  Eigen::VectorXd coefficients_;
  double intercept_ = 0;
  json training_ = json::object();  // rows, rank, rss, residual_sd: diagnostics only
};

}  // namespace

std::unique_ptr<LearnerBase> NewLinear() { return std::make_unique<LinearModel>(false); }
std::unique_ptr<LearnerBase> NewRidge() { return std::make_unique<LinearModel>(true); }

}  // namespace unseen::internal
