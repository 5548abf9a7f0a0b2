// Learner: the final, fitted model of a pipeline (linear, ridge, logistic,
// pocket, knn, bagging, adaboost; decision stumps as a base learner).
//
// Lifecycle: Make -> Fit -> Predict / PredictProba -> FittedParams (every
// fitted parameter as JSON that LoadFitted reads back to an identical
// learner). Deterministic: any randomness comes from the `seed` parameter
// through harness/sampling/random.h. Not thread-safe while fitting; Predict is const.
#ifndef UNSEEN_HARNESS_PIPELINE_LEARNER_H_
#define UNSEEN_HARNESS_PIPELINE_LEARNER_H_

#include <Eigen/Dense>

#include <memory>
#include <nlohmann/json.hpp>
#include <optional>
#include <string>
#include <vector>

#include "storage/status.h"

namespace unseen {

enum class LearnTask { kClassification, kRegression };

class Learner {
 public:
  virtual ~Learner() = default;
  virtual std::string kind() const = 0;
  // Classification: y holds class indexes 0..classes-1 (classes >= 2).
  // Regression: y holds values and classes is 0. `feature_names` label the
  // columns of X in FittedParams. InvalidArgument if the learner does not
  // support the task (e.g. linear for classification).
  virtual Status Fit(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, LearnTask task,
                     int classes, const std::vector<std::string>& feature_names) = 0;
  // Regression: the predicted value. Classification: the predicted class index.
  virtual Result<Eigen::VectorXd> Predict(const Eigen::MatrixXd& X) const = 0;
  // Classification: n x classes probabilities (rows sum to 1); FailedPrecondition
  // for learners that give none (pocket) and for regression.
  virtual Result<Eigen::MatrixXd> PredictProba(const Eigen::MatrixXd& X) const = 0;
  virtual nlohmann::json FittedParams() const = 0;
  virtual Status LoadFitted(const nlohmann::json& fitted) = 0;
};

// Creates an unfitted learner from scalar parameters (grids already
// expanded). InvalidArgument naming the kind and parameter, as MakeTransform.
//
// Kinds and parameters (defaults in brackets; the methods are described at
// the top of harness/pipeline/learners/KIND.cc; ridge is in linear.cc):
//   linear    regression; intercept [true]
//   ridge     regression; l2 [1.0] (>= 0, intercept unpenalised)
//   logistic  classification; l2 [1.0], tol [1e-8] (gradient infinity-norm
//             relative to the gradient at zero), max_iter [1000] (>= 1)
//   pocket    binary classification, no probabilities; epochs [100], seed [0]
//   knn       both; k [5] (>= 1, <= training rows), weights ["uniform"] or "distance"
//   stump     both; no parameters; takes sample weights
//   bagging   both; base [{"kind": "stump"}], estimators [10], seed [0]
//   adaboost  classification (SAMME); base [{"kind": "stump"}], estimators [50], seed [0]
// FittedParams() is {"kind", "params" (defaults filled in), "fitted", and
// when fitted "task", "classes", "features" and the kind's fitted values,
// coefficients keyed by feature name}. LoadFitted() on a learner of the
// same kind (any parameters) restores it, parameters included.
Result<std::unique_ptr<Learner>> MakeLearner(const std::string& kind, const nlohmann::json& params);

const std::vector<std::string>& LearnerKinds();

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_LEARNER_H_
