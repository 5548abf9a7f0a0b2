// `logistic`: L2-penalised logistic regression, binary (one weight vector)
// and multinomial softmax (one weight vector per class) for k > 2 classes.
//
// Objective: F(W, b) = sum_i logloss_i + (l2/2) ||W||^2, intercepts b
// unpenalised; scikit-learn's LogisticRegression(C = 1/l2, lbfgs,
// multinomial) minimises the same function.
//
// Solver: Newton's method from W = 0, b = 0, the Hessian Cholesky-factored
// (LDLT as a fallback), with a backtracking (Armijo) line search. The
// multinomial model has one unpenalised flat direction (adding a constant to
// every intercept; with l2 = 0 also adding one vector to every weight
// vector): the projector onto it is added to the Hessian, so steps stay
// orthogonal to it and the intercepts keep summing to zero.
//
// Convergence criterion: stop when ||grad F||_inf <= tol * max(1,
// ||grad F(0)||_inf), a gradient infinity-norm relative to the starting
// gradient (so it does not depend on the row count or the feature scale).
// After max_iter Newton steps, or when the line search cannot decrease F,
// the fit still succeeds with "converged": false; FittedParams always
// reports "converged", "iterations" and the final "gradient_inf".
#include <Eigen/Cholesky>
#include <algorithm>
#include <cmath>
#include <limits>
#include <nlohmann/json.hpp>

#include "harness/pipeline/learners/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

constexpr Eigen::Index kChunkRows = 2048;

double Softplus(double z) { return z > 0 ? z + std::log1p(std::exp(-z)) : std::log1p(std::exp(z)); }

double Sigmoid(double z) {
  if (z >= 0) return 1.0 / (1.0 + std::exp(-z));
  const double e = std::exp(z);
  return e / (1.0 + e);
}

// Row-wise softmax of Z in place, returning sum_i logsumexp(Z_i).
double SoftmaxRows(Eigen::MatrixXd* z) {
  double total = 0;
  for (Eigen::Index i = 0; i < z->rows(); ++i) {
    const double m = z->row(i).maxCoeff();
    z->row(i).array() = (z->row(i).array() - m).exp();
    const double s = z->row(i).sum();
    z->row(i) /= s;
    total += m + std::log(s);
  }
  return total;
}

// The model: W is p x K (K = 1 for two classes), b has K entries. The
// parameter vector stacks, per class k, the p weights then the intercept.
struct Model {
  Eigen::MatrixXd w;
  Eigen::VectorXd b;
};

Model Unpack(const Eigen::VectorXd& theta, Eigen::Index p, Eigen::Index k) {
  Model m{Eigen::MatrixXd(p, k), Eigen::VectorXd(k)};
  for (Eigen::Index c = 0; c < k; ++c) {
    m.w.col(c) = theta.segment(c * (p + 1), p);
    m.b[c] = theta[c * (p + 1) + p];
  }
  return m;
}

// Linear scores X W + 1 b'.
Eigen::MatrixXd Scores(const Eigen::MatrixXd& X, const Model& m) {
  Eigen::MatrixXd z = X * m.w;
  z.rowwise() += m.b.transpose();
  return z;
}

// The objective, gradient and Hessian of one of the two models.
class Objective {
 public:
  Objective(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, int classes, double l2)
      : X_(X), y_(y), p_(X.cols()), k_(classes == 2 ? 1 : classes), l2_(l2) {}

  Eigen::Index size() const { return k_ * (p_ + 1); }
  Eigen::Index k() const { return k_; }

  double Value(const Eigen::VectorXd& theta) const {
    const Model m = Unpack(theta, p_, k_);
    Eigen::MatrixXd z = Scores(X_, m);
    double loss = 0;
    if (k_ == 1) {
      for (Eigen::Index i = 0; i < z.rows(); ++i) loss += Softplus(z(i, 0)) - y_[i] * z(i, 0);
    } else {
      for (Eigen::Index i = 0; i < z.rows(); ++i) loss -= z(i, static_cast<Eigen::Index>(y_[i]));
      loss += SoftmaxRows(&z);
    }
    return loss + 0.5 * l2_ * m.w.squaredNorm();
  }

  // The gradient at theta; *prob receives the class probabilities there
  // (n x K), which Hessian() takes.
  void Gradient(const Eigen::VectorXd& theta, Eigen::VectorXd* gradient,
                Eigen::MatrixXd* prob) const {
    const Model m = Unpack(theta, p_, k_);
    *prob = Scores(X_, m);
    if (k_ == 1) {
      *prob = prob->unaryExpr([](double z) { return Sigmoid(z); });
    } else {
      (void)SoftmaxRows(prob);
    }
    Eigen::MatrixXd residual = *prob;  // P - Y
    for (Eigen::Index i = 0; i < residual.rows(); ++i) {
      if (k_ == 1) {
        residual(i, 0) -= y_[i];
      } else {
        residual(i, static_cast<Eigen::Index>(y_[i])) -= 1.0;
      }
    }
    const Eigen::MatrixXd gw = X_.transpose() * residual + l2_ * m.w;
    const Eigen::RowVectorXd gb = residual.colwise().sum();
    gradient->resize(size());
    for (Eigen::Index c = 0; c < k_; ++c) {
      gradient->segment(c * (p_ + 1), p_) = gw.col(c);
      (*gradient)[c * (p_ + 1) + p_] = gb[c];
    }
  }

  // Adds the projector onto the flat directions (none for two classes).
  void AddFlatDirections(Eigen::MatrixXd* h) const {
    if (k_ == 1) return;
    const Eigen::Index q = p_ + 1;
    for (Eigen::Index j = l2_ > 0 ? p_ : 0; j < q; ++j) {
      for (Eigen::Index a = 0; a < k_; ++a) {
        for (Eigen::Index c = 0; c < k_; ++c) (*h)(a * q + j, c * q + j) += 1.0 / k_;
      }
    }
  }

  // The Hessian at the point where Gradient() gave `prob`: the sum over rows
  // of x1 x1' (x1 = [x, 1]) times P_a (delta_ac - P_c) in block (a, c), plus
  // l2 on the weight diagonal. Rows go in chunks so the scaled copies stay
  // in cache.
  void Hessian(const Eigen::MatrixXd& prob, Eigen::MatrixXd* h) const {
    const Eigen::Index q = p_ + 1;
    h->setZero(size(), size());
    Eigen::MatrixXd x1, scaled;
    for (Eigen::Index start = 0; start < X_.rows(); start += kChunkRows) {
      const Eigen::Index rows = std::min(kChunkRows, X_.rows() - start);
      const auto pc = prob.middleRows(start, rows);
      if (k_ == 1) {
        // Two classes: one block, the Gram matrix of the rows scaled by
        // sqrt(p (1 - p)), by a symmetric rank update (half the work).
        const Eigen::ArrayXd sd = (pc.col(0).array() * (1.0 - pc.col(0).array())).sqrt();
        scaled.resize(rows, q);
        scaled.leftCols(p_) = X_.middleRows(start, rows).array().colwise() * sd;
        scaled.col(p_) = sd;
        h->selfadjointView<Eigen::Lower>().rankUpdate(scaled.transpose());
        continue;
      }
      x1.resize(rows, q);
      x1.leftCols(p_) = X_.middleRows(start, rows);
      x1.col(p_).setOnes();
      for (Eigen::Index a = 0; a < k_; ++a) {
        for (Eigen::Index c = a; c < k_; ++c) {
          Eigen::ArrayXd weight = -pc.col(a).array() * pc.col(c).array();
          if (a == c) weight += pc.col(a).array();
          scaled = x1.array().colwise() * weight;
          // Block (c, a) of the lower triangle.
          h->block(c * q, a * q, q, q).noalias() += scaled.transpose() * x1;
        }
      }
    }
    for (Eigen::Index c = 0; c < k_; ++c) {
      h->block(c * q, c * q, p_, p_).diagonal().array() += l2_;
    }
    *h = h->selfadjointView<Eigen::Lower>();
  }

 private:
  const Eigen::MatrixXd& X_;
  const Eigen::VectorXd& y_;
  const Eigen::Index p_;
  const Eigen::Index k_;
  const double l2_;
};

struct NewtonResult {
  Eigen::VectorXd theta;
  bool converged = false;
  int64_t iterations = 0;
  double gradient_inf = 0;
};

// The Newton direction -H^{-1} g (Cholesky, else LDLT); empty on failure.
Eigen::VectorXd NewtonStep(const Eigen::MatrixXd& h, const Eigen::VectorXd& g) {
  Eigen::LLT<Eigen::MatrixXd, Eigen::Lower> llt(h);
  if (llt.info() == Eigen::Success) return -llt.solve(g);
  Eigen::LDLT<Eigen::MatrixXd, Eigen::Lower> ldlt(h);
  if (ldlt.info() != Eigen::Success) return Eigen::VectorXd();
  Eigen::VectorXd step = -ldlt.solve(g);
  return step.allFinite() ? step : Eigen::VectorXd();
}

NewtonResult Minimise(const Objective& f, double tol, int64_t max_iter) {
  NewtonResult r;
  r.theta = Eigen::VectorXd::Zero(f.size());
  Eigen::VectorXd g;
  Eigen::MatrixXd h, prob;
  f.Gradient(r.theta, &g, &prob);
  const double threshold = tol * std::max(1.0, g.lpNorm<Eigen::Infinity>());
  double value = f.Value(r.theta);
  while (true) {
    r.gradient_inf = g.lpNorm<Eigen::Infinity>();
    if (r.gradient_inf <= threshold) {
      r.converged = true;
      break;
    }
    if (r.iterations >= max_iter) break;
    f.Hessian(prob, &h);
    f.AddFlatDirections(&h);
    const Eigen::VectorXd step = NewtonStep(h, g);
    const double slope = step.size() ? g.dot(step) : 0.0;
    if (!(slope < 0)) break;
    // Backtracking line search (Armijo, c = 1e-4). Close to the optimum the
    // decrease falls below rounding of F; the full Newton step is then taken.
    const bool tiny = -slope <= 1e-12 * std::max(1.0, std::abs(value));
    double t = 1.0;
    double next = f.Value(r.theta + step);
    while (!(next <= value + 1e-4 * t * slope) && !(tiny && t == 1.0) && t > 1e-12) {
      t *= 0.5;
      next = f.Value(r.theta + t * step);
    }
    if (!(next <= value + 1e-4 * t * slope) && !(tiny && t == 1.0)) break;
    r.theta += t * step;
    value = next;
    ++r.iterations;
    f.Gradient(r.theta, &g, &prob);
  }
  return r;
}

class Logistic : public LearnerBase {
 public:
  Logistic() : LearnerBase("logistic", true, false) {}

  Status SetParams(const json& params) override {
    ParamReader reader(kind(), params);
    double l2 = 1.0, tol = 1e-8;
    int64_t max_iter = 1000;
    UNSEEN_RETURN_IF_ERROR(reader.Number("l2", 0.0, &l2));
    UNSEEN_RETURN_IF_ERROR(reader.Number("tol", 0.0, &tol));
    UNSEEN_RETURN_IF_ERROR(reader.Integer("max_iter", 1, 1000000000, &max_iter));
    UNSEEN_RETURN_IF_ERROR(reader.Finish());
    l2_ = l2;
    tol_ = tol;
    max_iter_ = max_iter;
    return Status::OK();
  }

  json Params() const override { return json{{"l2", l2_}, {"tol", tol_}, {"max_iter", max_iter_}}; }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    const Objective f(X, y, classes(), l2_);
    const NewtonResult r = Minimise(f, tol_, max_iter_);
    model_ = Unpack(r.theta, X.cols(), f.k());
    solver_ = json{
        {"converged", r.converged}, {"iterations", r.iterations}, {"gradient_inf", r.gradient_inf}};
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    const Eigen::MatrixXd z = Scores(X, model_);
    Eigen::VectorXd out(X.rows());
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      // Two classes: class 1 iff its probability exceeds 1/2, i.e. z > 0.
      out[i] = z.cols() == 1 ? (z(i, 0) > 0 ? 1.0 : 0.0)
                             : static_cast<double>(ArgMax(z.row(i).transpose()));
    }
    return out;
  }

  Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const override {
    Eigen::MatrixXd z = Scores(X, model_);
    if (z.cols() > 1) {
      (void)SoftmaxRows(&z);
      return z;
    }
    Eigen::MatrixXd out(X.rows(), 2);
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      out(i, 1) = Sigmoid(z(i, 0));
      out(i, 0) = Sigmoid(-z(i, 0));
    }
    return out;
  }

  json Body() const override {
    json body = solver_;
    if (model_.w.cols() == 1) {
      body["intercept"] = model_.b[0];
      body["coefficients"] = ByName(model_.w.col(0), features());
    } else {
      body["intercept"] = ToArray(model_.b);
      body["coefficients"] = ByNameRows(model_.w.transpose(), features());
    }
    return body;
  }

  Status LoadBody(const json& fitted) override {
    const Eigen::Index k = classes() == 2 ? 1 : classes();
    const Eigen::Index p = static_cast<Eigen::Index>(features().size());
    model_.b.resize(k);
    if (k == 1) {
      UNSEEN_ASSIGN_OR_RETURN(model_.b[0], GetNumber(kind(), fitted, "intercept"));
      UNSEEN_ASSIGN_OR_RETURN(model_.w, GetByName(kind(), fitted, "coefficients", features()));
    } else {
      UNSEEN_ASSIGN_OR_RETURN(model_.b, GetArray(kind(), fitted, "intercept", k));
      UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd wt,
                              GetByNameRows(kind(), fitted, "coefficients", features(), k));
      model_.w = wt.transpose();
    }
    if (model_.w.rows() != p) return Invalid("fitted params: coefficient shape mismatch");
    auto converged = fitted.find("converged");
    if (converged == fitted.end() || !converged->is_boolean()) {
      return Invalid("fitted params: 'converged' must be true or false");
    }
    UNSEEN_ASSIGN_OR_RETURN(int64_t iterations, GetInteger(kind(), fitted, "iterations"));
    UNSEEN_ASSIGN_OR_RETURN(double gradient_inf, GetNumber(kind(), fitted, "gradient_inf"));
    solver_ = json{{"converged", converged->get<bool>()},
                   {"iterations", iterations},
                   {"gradient_inf", gradient_inf}};
    return Status::OK();
  }

 private:
  double l2_ = 1.0;
  double tol_ = 1e-8;
  int64_t max_iter_ = 1000;
  Model model_;
  json solver_ = json::object();
};

}  // namespace

std::unique_ptr<LearnerBase> NewLogistic() { return std::make_unique<Logistic>(); }

}  // namespace unseen::internal
