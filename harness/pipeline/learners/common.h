// Shared machinery of the learners (private to harness/pipeline/learners/):
// a strict reader for learner parameters, a base class that validates every
// Fit/Predict call and writes the FittedParams envelope, and JSON helpers for
// values keyed by feature name. Thread-compatible, like the learners.
#ifndef UNSEEN_HARNESS_PIPELINE_LEARNERS_COMMON_H_
#define UNSEEN_HARNESS_PIPELINE_LEARNERS_COMMON_H_

#include <Eigen/Dense>
#include <cstdint>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/learner.h"
#include "harness/sampling/random.h"
#include "storage/status.h"

namespace unseen::internal {

// Reads the parameters of one learner kind from a JSON object. Each getter
// leaves *value (the default) alone when the parameter is absent, and returns
// InvalidArgument naming the kind and the parameter when it has the wrong type
// or an out-of-range value. Finish() then rejects any parameter no getter
// asked for.
class ParamReader {
 public:
  // `params` must be an object or null (no parameters); status() says which.
  ParamReader(std::string kind, const nlohmann::json& params);

  // OK, or InvalidArgument if `params` is neither an object nor null.
  const Status& status() const { return status_; }

  Status Bool(const std::string& name, bool* value);
  // A finite number >= min.
  Status Number(const std::string& name, double min, double* value);
  // An integer in [min, max]; a number with a fractional part is rejected.
  Status Integer(const std::string& name, int64_t min, int64_t max, int64_t* value);
  // A non-negative integer below 2^64.
  Status Seed(const std::string& name, uint64_t* value);
  // One of `choices`.
  Status Choice(const std::string& name, const std::vector<std::string>& choices,
                std::string* value);
  // A nested learner object {"kind": ..., params...}.
  Status Learner(const std::string& name, nlohmann::json* value);

  // InvalidArgument naming the first parameter that no getter asked for.
  Status Finish() const;

 private:
  const nlohmann::json* Find(const std::string& name);
  Status Bad(const std::string& name, const std::string& expected) const;

  std::string kind_;
  nlohmann::json params_;
  Status status_;
  std::vector<std::string> known_;
};

// The base of every learner: Fit/Predict/PredictProba validate their input
// (shapes, finite values, class indexes, unique feature names, task support,
// fitted state) and catch exceptions; the subclass implements the *Impl hooks
// on validated input. FittedParams() is the envelope
//   {"kind", "params" (all parameters, defaults filled in), "fitted": bool,
//    "task": "classification"|"regression", "classes", "features": [names],
//    ...the subclass's Body()}
// and LoadFitted() reads it back (InvalidArgument naming the missing or
// mistyped field on a malformed document). A failed Fit or LoadFitted leaves
// the learner unfitted (its parameters unchanged).
class LearnerBase : public unseen::Learner {
 public:
  std::string kind() const override { return kind_; }
  Status Fit(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, LearnTask task, int classes,
             const std::vector<std::string>& feature_names) final;
  Result<Eigen::VectorXd> Predict(const Eigen::MatrixXd& X) const final;
  Result<Eigen::MatrixXd> PredictProba(const Eigen::MatrixXd& X) const final;
  nlohmann::json FittedParams() const final;
  Status LoadFitted(const nlohmann::json& fitted) final;

  // Fit with non-negative sample weights w (n entries, positive sum). For a
  // learner without native weights (SupportsWeights() false) this is
  // FailedPrecondition; callers resample instead (see ResampleByWeight).
  Status FitWeighted(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, const Eigen::VectorXd& w,
                     LearnTask task, int classes, const std::vector<std::string>& feature_names);
  virtual bool SupportsWeights() const { return false; }

  // Sets the parameters from a JSON object (the same rules as MakeLearner).
  virtual Status SetParams(const nlohmann::json& params) = 0;
  // Every parameter with its value, defaults included.
  virtual nlohmann::json Params() const = 0;

  bool fitted() const { return fitted_; }
  LearnTask task() const { return task_; }
  int classes() const { return classes_; }
  const std::vector<std::string>& features() const { return features_; }

 protected:
  // `classification` and `regression` say which tasks the kind supports.
  LearnerBase(std::string kind, bool classification, bool regression);

  // REQUIRES (all hooks): input validated; task(), classes(), features() set.
  virtual Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) = 0;
  virtual Status FitWeightedImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                                 const Eigen::VectorXd& w);
  virtual Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const = 0;
  // Default: FailedPrecondition (the kind gives no probabilities).
  virtual Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const;
  // The subclass's fitted fields, merged into the envelope.
  virtual nlohmann::json Body() const = 0;
  virtual Status LoadBody(const nlohmann::json& fitted) = 0;

  // "learner 'KIND': " + what.
  Status Invalid(const std::string& what) const;

 private:
  Status CheckFitInput(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, LearnTask task,
                       int classes, const std::vector<std::string>& feature_names) const;
  Status CheckPredictInput(const Eigen::MatrixXd& X) const;
  Status LoadEnvelope(const nlohmann::json& fitted);

  std::string kind_;
  bool classification_;
  bool regression_;
  bool fitted_ = false;
  LearnTask task_ = LearnTask::kRegression;
  int classes_ = 0;
  std::vector<std::string> features_;
};

// ---- JSON helpers for LoadBody (errors name the kind and the field) ----

// {name: v[j]} over the features.
nlohmann::json ByName(const Eigen::VectorXd& v, const std::vector<std::string>& names);
// {name: [m(0,j), m(1,j), ...]}: column j of `m` is feature j.
nlohmann::json ByNameRows(const Eigen::MatrixXd& m, const std::vector<std::string>& names);
nlohmann::json ToArray(const Eigen::VectorXd& v);

Result<double> GetNumber(const std::string& kind, const nlohmann::json& j, const std::string& key);
Result<int64_t> GetInteger(const std::string& kind, const nlohmann::json& j,
                           const std::string& key);
// An array of numbers, of length `size` unless size < 0.
Result<Eigen::VectorXd> GetArray(const std::string& kind, const nlohmann::json& j,
                                 const std::string& key, int64_t size);
// The inverse of ByName: every feature present, each a number.
Result<Eigen::VectorXd> GetByName(const std::string& kind, const nlohmann::json& j,
                                  const std::string& key, const std::vector<std::string>& names);
// The inverse of ByNameRows, with `rows` entries per feature.
Result<Eigen::MatrixXd> GetByNameRows(const std::string& kind, const nlohmann::json& j,
                                      const std::string& key, const std::vector<std::string>& names,
                                      int64_t rows);

// ---- small numeric helpers shared by several learners ----

// The index of the largest entry; ties go to the smallest index.
Eigen::Index ArgMax(const Eigen::Ref<const Eigen::VectorXd>& v);

// w.size() indexes drawn with replacement, index i with probability
// w[i]/sum(w), by inverting the cumulative weights at random->NextDouble()
// uniforms. REQUIRES: w non-negative with a positive sum.
std::vector<Eigen::Index> ResampleByWeight(const Eigen::VectorXd& w, Random* random);

// MakeLearner, returning the base type (defined in harness/pipeline/learner.cc).
Result<std::unique_ptr<LearnerBase>> MakeLearnerBase(const std::string& kind,
                                                     const nlohmann::json& params);

// Makes a learner from a nested {"kind": ..., params...} object; errors are
// prefixed with the parent kind and the parameter.
Result<std::unique_ptr<LearnerBase>> MakeNested(const std::string& parent_kind,
                                                const std::string& parameter,
                                                const nlohmann::json& spec);

// The parameters bagging and adaboost share: a nested base learner (made
// once here, so a bad base fails at make time, and stored with its defaults
// filled in), the number of estimators and a seed.
struct EnsembleParams {
  nlohmann::json base = nlohmann::json{{"kind", "stump"}};
  int64_t estimators = 0;
  uint64_t seed = 0;
  nlohmann::json ToJson() const {
    return nlohmann::json{{"base", base}, {"estimators", estimators}, {"seed", seed}};
  }
};
// Reads `base` [{"kind": "stump"}], `estimators` [default_estimators] and
// `seed` [0]. InvalidArgument naming the kind and parameter; *out is
// unchanged on error.
Status ReadEnsembleParams(const std::string& kind, const nlohmann::json& params,
                          int64_t default_estimators, EnsembleParams* out);

// Rebuilds a fitted member of an ensemble from its FittedParams; it must be
// fitted on the same task, classes and features as `parent`.
Result<std::unique_ptr<LearnerBase>> LoadMember(const LearnerBase& parent,
                                                const nlohmann::json& fitted);

// Factories of the learner families, one per file.
std::unique_ptr<LearnerBase> NewLinear();    // linear.cc
std::unique_ptr<LearnerBase> NewRidge();     // linear.cc
std::unique_ptr<LearnerBase> NewLogistic();  // logistic.cc
std::unique_ptr<LearnerBase> NewPocket();    // pocket.cc
std::unique_ptr<LearnerBase> NewKnn();       // knn.cc
std::unique_ptr<LearnerBase> NewStump();     // stump.cc
std::unique_ptr<LearnerBase> NewBagging();   // bagging.cc
std::unique_ptr<LearnerBase> NewAdaBoost();  // adaboost.cc

}  // namespace unseen::internal

#endif  // UNSEEN_HARNESS_PIPELINE_LEARNERS_COMMON_H_
