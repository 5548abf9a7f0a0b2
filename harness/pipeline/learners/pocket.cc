// `pocket`: the pocket perceptron with ratchet (Gallant 1990, "Perceptron-
// based learning algorithms", IEEE Trans. Neural Networks 1(2)). Binary
// classification only; it gives no probabilities.
//
// Labels t = +1 (class 1) / -1 (class 0); score w.x + b, class 1 iff > 0.
// Each epoch visits the rows in an order shuffled by unseen::Random(seed);
// a row with t * score <= 0 gets the perceptron update w += t x, b += t.
// The pocket holds the weights with the fewest training errors seen: when
// the current weights' run of consecutive correct visits grows longer than
// the pocket's run, their training errors are counted (a full pass) and they
// replace the pocket only if they make strictly fewer (the ratchet). The
// pocket starts at w = 0, b = 0. Training stops after `epochs` epochs, or
// once the pocket makes no training error.
#include <cstdint>
#include <nlohmann/json.hpp>
#include <numeric>
#include <vector>

#include "harness/pipeline/learners/common.h"
#include "harness/sampling/random.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class Pocket : public LearnerBase {
 public:
  Pocket() : LearnerBase("pocket", true, false) {}

  Status SetParams(const json& params) override {
    ParamReader reader(kind(), params);
    int64_t epochs = 100;
    uint64_t seed = 0;
    UNSEEN_RETURN_IF_ERROR(reader.Integer("epochs", 1, 1000000000, &epochs));
    UNSEEN_RETURN_IF_ERROR(reader.Seed("seed", &seed));
    UNSEEN_RETURN_IF_ERROR(reader.Finish());
    epochs_ = epochs;
    seed_ = seed;
    return Status::OK();
  }

  json Params() const override { return json{{"epochs", epochs_}, {"seed", seed_}}; }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    if (classes() != 2) {
      return Invalid("is a binary classifier; got " + std::to_string(classes()) + " classes");
    }
    const Eigen::Index n = X.rows();
    Eigen::VectorXd w = Eigen::VectorXd::Zero(X.cols());
    double b = 0;
    w_ = w;
    b_ = b;
    errors_ = Errors(X, y, w_, b_);
    // `in_pocket`: the current weights are the pocket's (their run is the
    // pocket's run); `checked`: they were already compared with the pocket.
    int64_t pocket_run = 0, run = 0, epoch = 0;
    bool in_pocket = true, checked = true;
    std::vector<Eigen::Index> order(static_cast<size_t>(n));
    std::iota(order.begin(), order.end(), Eigen::Index{0});
    Random random(seed_);
    for (; epoch < epochs_ && errors_ > 0; ++epoch) {
      random.Shuffle(order.data(), order.size());
      for (Eigen::Index i : order) {
        const double t = y[i] > 0.5 ? 1.0 : -1.0;
        if (t * (X.row(i).dot(w) + b) <= 0) {
          w += t * X.row(i).transpose();
          b += t;
          run = 0;
          in_pocket = checked = false;
          continue;
        }
        ++run;
        if (in_pocket) {
          pocket_run = run;
        } else if (!checked && run > pocket_run) {
          checked = true;
          const int64_t errors = Errors(X, y, w, b);
          if (errors < errors_) {
            w_ = w;
            b_ = b;
            errors_ = errors;
            pocket_run = run;
            in_pocket = true;
            if (errors_ == 0) break;
          }
        }
      }
    }
    epochs_run_ = epoch;
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    Eigen::VectorXd score = X * w_;
    return Eigen::VectorXd((score.array() + b_ > 0).cast<double>());
  }

  json Body() const override {
    return json{{"intercept", b_},
                {"coefficients", ByName(w_, features())},
                {"training_errors", errors_},
                {"epochs_run", epochs_run_}};
  }

  Status LoadBody(const json& fitted) override {
    if (classes() != 2) return Invalid("fitted params: 'classes' must be 2");
    UNSEEN_ASSIGN_OR_RETURN(b_, GetNumber(kind(), fitted, "intercept"));
    UNSEEN_ASSIGN_OR_RETURN(w_, GetByName(kind(), fitted, "coefficients", features()));
    UNSEEN_ASSIGN_OR_RETURN(errors_, GetInteger(kind(), fitted, "training_errors"));
    UNSEEN_ASSIGN_OR_RETURN(epochs_run_, GetInteger(kind(), fitted, "epochs_run"));
    return Status::OK();
  }

 private:
  static int64_t Errors(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                        const Eigen::VectorXd& w, double b) {
    const Eigen::VectorXd score = X * w;
    int64_t errors = 0;
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      errors += ((score[i] + b > 0) != (y[i] > 0.5)) ? 1 : 0;
    }
    return errors;
  }

  int64_t epochs_ = 100;
  uint64_t seed_ = 0;
  Eigen::VectorXd w_;
  double b_ = 0;
  int64_t errors_ = 0;
  int64_t epochs_run_ = 0;
};

}  // namespace

std::unique_ptr<LearnerBase> NewPocket() { return std::make_unique<Pocket>(); }

}  // namespace unseen::internal
