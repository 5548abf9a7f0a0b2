// `bagging`: bootstrap aggregation (Breiman 1996) of a base learner.
//
// Estimator e is fitted on n rows drawn with replacement by
// unseen::Random(seed).Bounded(n), one stream for all estimators in order.
// The base learner's own parameters (its seed too, if it has one) are used
// as given. Classification: the mean of the estimators' class probabilities,
// or of their one-hot votes for a base that gives none (pocket); the
// prediction is the largest mean, ties to the smaller class index.
// Regression: the mean prediction.
#include <nlohmann/json.hpp>
#include <vector>

#include "harness/pipeline/learners/common.h"
#include "harness/sampling/random.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class Bagging : public LearnerBase {
 public:
  Bagging() : LearnerBase("bagging", true, true) {}

  Status SetParams(const json& params) override {
    return ReadEnsembleParams(kind(), params, 10, &ensemble_);
  }

  json Params() const override { return ensemble_.ToJson(); }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    members_.clear();
    Random random(ensemble_.seed);
    const Eigen::Index n = X.rows();
    std::vector<Eigen::Index> rows(static_cast<size_t>(n));
    for (int64_t e = 0; e < ensemble_.estimators; ++e) {
      for (Eigen::Index& r : rows) r = static_cast<Eigen::Index>(random.Bounded(n));
      UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<LearnerBase> member,
                              MakeNested(kind(), "base", ensemble_.base));
      Status s = member->Fit(X(rows, Eigen::all), y(rows), task(), classes(), features());
      if (!s.ok()) {
        return Invalid("estimator " + std::to_string(e) + ": " + s.message());
      }
      members_.push_back(std::move(member));
    }
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    if (task() == LearnTask::kClassification) {
      UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd proba, ProbaImpl(X));
      Eigen::VectorXd out(X.rows());
      for (Eigen::Index i = 0; i < X.rows(); ++i) {
        out[i] = static_cast<double>(ArgMax(proba.row(i).transpose()));
      }
      return out;
    }
    Eigen::VectorXd sum = Eigen::VectorXd::Zero(X.rows());
    for (const auto& member : members_) {
      UNSEEN_ASSIGN_OR_RETURN(Eigen::VectorXd p, member->Predict(X));
      sum += p;
    }
    return Eigen::VectorXd(sum / static_cast<double>(members_.size()));
  }

  Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const override {
    Eigen::MatrixXd sum = Eigen::MatrixXd::Zero(X.rows(), classes());
    for (const auto& member : members_) {
      Result<Eigen::MatrixXd> proba = member->PredictProba(X);
      if (proba.ok()) {
        sum += *proba;
        continue;
      }
      if (!proba.status().IsFailedPrecondition()) return proba.status();
      UNSEEN_ASSIGN_OR_RETURN(Eigen::VectorXd votes, member->Predict(X));
      for (Eigen::Index i = 0; i < X.rows(); ++i) sum(i, static_cast<Eigen::Index>(votes[i])) += 1;
    }
    return Eigen::MatrixXd(sum / static_cast<double>(members_.size()));
  }

  json Body() const override {
    json members = json::array();
    for (const auto& member : members_) members.push_back(member->FittedParams());
    return json{{"estimators", members}};
  }

  Status LoadBody(const json& fitted) override {
    auto it = fitted.find("estimators");
    if (it == fitted.end() || !it->is_array() || it->empty()) {
      return Invalid("fitted params: 'estimators' must be a non-empty array");
    }
    members_.clear();
    for (const json& member : *it) {
      UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<LearnerBase> m, LoadMember(*this, member));
      members_.push_back(std::move(m));
    }
    return Status::OK();
  }

 private:
  EnsembleParams ensemble_ = {json{{"kind", "stump"}}, 10, 0};
  std::vector<std::unique_ptr<LearnerBase>> members_;
};

}  // namespace

std::unique_ptr<LearnerBase> NewBagging() { return std::make_unique<Bagging>(); }

}  // namespace unseen::internal
