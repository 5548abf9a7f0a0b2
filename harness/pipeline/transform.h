// Transform: one fitted preprocessing step of a pipeline (impute,
// standardize, minmax, onehot, poly, pca, select_variance, select_topk).
//
// Lifecycle: Make -> Fit (on the rows of its own training partition only)
// -> Apply (any rows) -> FittedParams (every fitted constant, as JSON that
// LoadFitted reads back to an identical transform). Apply before Fit
// returns FailedPrecondition. Not thread-safe while fitting; Apply is const.
#ifndef UNSEEN_HARNESS_PIPELINE_TRANSFORM_H_
#define UNSEEN_HARNESS_PIPELINE_TRANSFORM_H_

#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/frame.h"
#include "harness/pipeline/learner.h"
#include "storage/status.h"

namespace unseen {

class Transform {
 public:
  virtual ~Transform() = default;
  virtual std::string kind() const = 0;
  // Learns constants from `train`. `target` is the training target (class
  // index for classification, value for regression); only supervised
  // transforms (select_topk) read it.
  virtual Status Fit(const Frame& train, const Eigen::VectorXd& target) = 0;
  // Tells a supervised transform how to read `target`; call before Fit.
  // Only select_topk with score "f" needs it (F test between classes, or
  // against a continuous target) and fails Fit with FailedPrecondition
  // without it; every other kind ignores it.
  virtual void SetTask(LearnTask task) { (void)task; }
  virtual Result<Frame> Apply(const Frame& in) const = 0;
  virtual nlohmann::json FittedParams() const = 0;
  virtual Status LoadFitted(const nlohmann::json& fitted) = 0;
};

// Creates an unfitted transform. `params` is a JSON object of scalar
// parameters (grids are expanded before this). InvalidArgument with a
// message naming the kind and the parameter: unknown kind ("unknown
// transform kind 'x'; expected one of ..."), unknown parameter, wrong type
// or out-of-range value.
Result<std::unique_ptr<Transform>> MakeTransform(const std::string& kind,
                                                 const nlohmann::json& params);

// The transform kinds, for error messages and docs.
const std::vector<std::string>& TransformKinds();

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_TRANSFORM_H_
