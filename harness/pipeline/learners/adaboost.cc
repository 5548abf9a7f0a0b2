// `adaboost`: SAMME, multi-class AdaBoost (Zhu, Zou, Rosset & Hastie 2009,
// "Multi-class AdaBoost", Statistics and Its Interface 2). Classification
// only.
//
// Row weights start at 1/n. Round m fits the base learner with the weights
// (natively for a base that takes them, the stump; otherwise on n rows
// resampled by weight with unseen::Random(seed)), takes its weighted
// training error err, gives it the vote alpha = log((1-err)/err) + log(K-1),
// multiplies the weights of its misclassified rows by exp(alpha) and
// renormalises. Stopping: a member with err >= 1 - 1/K (no better than
// chance) ends the boosting and is dropped, unless it is the first, which
// is then kept alone with alpha = 1; a member with err = 0 ends it and is
// kept with alpha = 1 + the sum of the earlier alphas, so it outvotes them.
// Prediction: the class with the largest sum of alphas, ties to the smaller
// index; PredictProba: those sums divided by the total alpha.
#include <cmath>
#include <nlohmann/json.hpp>
#include <vector>

#include "harness/pipeline/learners/common.h"
#include "harness/sampling/random.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class AdaBoost : public LearnerBase {
 public:
  AdaBoost() : LearnerBase("adaboost", true, false) {}

  Status SetParams(const json& params) override {
    return ReadEnsembleParams(kind(), params, 50, &ensemble_);
  }

  json Params() const override { return ensemble_.ToJson(); }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    members_.clear();
    alphas_.clear();
    errors_.clear();
    const Eigen::Index n = X.rows();
    const double k = classes();
    Eigen::VectorXd w = Eigen::VectorXd::Constant(n, 1.0 / static_cast<double>(n));
    Random random(ensemble_.seed);
    double alpha_sum = 0;
    for (int64_t m = 0; m < ensemble_.estimators; ++m) {
      UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<LearnerBase> member,
                              MakeNested(kind(), "base", ensemble_.base));
      Status s;
      if (member->SupportsWeights()) {
        s = member->FitWeighted(X, y, w, task(), classes(), features());
      } else {
        const std::vector<Eigen::Index> rows = ResampleByWeight(w, &random);
        s = member->Fit(X(rows, Eigen::all), y(rows), task(), classes(), features());
      }
      if (!s.ok()) return Invalid("estimator " + std::to_string(m) + ": " + s.message());
      UNSEEN_ASSIGN_OR_RETURN(Eigen::VectorXd pred, member->Predict(X));
      const Eigen::ArrayXd miss = (pred.array() != y.array()).cast<double>();
      const double err = (miss * w.array()).sum() / w.sum();
      if (err >= 1.0 - 1.0 / k) {
        if (m == 0) Keep(std::move(member), 1.0, err);
        break;
      }
      if (err <= 0) {
        Keep(std::move(member), 1.0 + alpha_sum, err);
        break;
      }
      const double alpha = std::log((1.0 - err) / err) + std::log(k - 1.0);
      Keep(std::move(member), alpha, err);
      alpha_sum += alpha;
      w.array() *= (alpha * miss).exp();
      w /= w.sum();
    }
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd votes, Votes(X));
    Eigen::VectorXd out(X.rows());
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      out[i] = static_cast<double>(ArgMax(votes.row(i).transpose()));
    }
    return out;
  }

  Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const override {
    UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd votes, Votes(X));
    double total = 0;
    for (double a : alphas_) total += a;
    return Eigen::MatrixXd(votes / total);
  }

  json Body() const override {
    json members = json::array();
    for (size_t m = 0; m < members_.size(); ++m) {
      members.push_back(json{
          {"alpha", alphas_[m]}, {"error", errors_[m]}, {"model", members_[m]->FittedParams()}});
    }
    return json{{"estimators", members}};
  }

  Status LoadBody(const json& fitted) override {
    auto it = fitted.find("estimators");
    if (it == fitted.end() || !it->is_array() || it->empty()) {
      return Invalid("fitted params: 'estimators' must be a non-empty array");
    }
    members_.clear();
    alphas_.clear();
    errors_.clear();
    for (const json& member : *it) {
      if (!member.is_object() || !member.contains("model")) {
        return Invalid("fitted params: each estimator must hold 'alpha', 'error' and 'model'");
      }
      UNSEEN_ASSIGN_OR_RETURN(double alpha, GetNumber(kind(), member, "alpha"));
      UNSEEN_ASSIGN_OR_RETURN(double error, GetNumber(kind(), member, "error"));
      if (!(alpha > 0)) return Invalid("fitted params: an estimator's 'alpha' must be positive");
      UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<LearnerBase> m, LoadMember(*this, member["model"]));
      Keep(std::move(m), alpha, error);
    }
    return Status::OK();
  }

 private:
  void Keep(std::unique_ptr<LearnerBase> member, double alpha, double error) {
    members_.push_back(std::move(member));
    alphas_.push_back(alpha);
    errors_.push_back(error);
  }

  // n x classes sums of the alphas of the members voting for each class.
  Result<Eigen::MatrixXd> Votes(const Eigen::MatrixXd& X) const {
    Eigen::MatrixXd votes = Eigen::MatrixXd::Zero(X.rows(), classes());
    for (size_t m = 0; m < members_.size(); ++m) {
      UNSEEN_ASSIGN_OR_RETURN(Eigen::VectorXd pred, members_[m]->Predict(X));
      for (Eigen::Index i = 0; i < X.rows(); ++i) {
        votes(i, static_cast<Eigen::Index>(pred[i])) += alphas_[m];
      }
    }
    return votes;
  }

  EnsembleParams ensemble_ = {json{{"kind", "stump"}}, 50, 0};
  std::vector<std::unique_ptr<LearnerBase>> members_;
  std::vector<double> alphas_;
  std::vector<double> errors_;
};

}  // namespace

std::unique_ptr<LearnerBase> NewAdaBoost() { return std::make_unique<AdaBoost>(); }

}  // namespace unseen::internal
