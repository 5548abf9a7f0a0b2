// A fitted pipeline: transforms in order, then a learner, each fitted on
// the training rows given to FitPipeline only. Serialises to the canonical
// JSON that a frozen model's digest covers. Thread-compatible; Predict is const.
#ifndef UNSEEN_HARNESS_PIPELINE_PIPELINE_H_
#define UNSEEN_HARNESS_PIPELINE_PIPELINE_H_

#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/metrics.h"
#include "harness/pipeline/frame.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/spec.h"
#include "harness/pipeline/transform.h"

namespace unseen {

class FittedPipeline {
 public:
  FittedPipeline() = default;
  FittedPipeline(FittedPipeline&&) = default;
  FittedPipeline& operator=(FittedPipeline&&) = default;

  // Predictions for `x`, which must have the input columns the pipeline was
  // fitted on (by name; extra columns are ignored).
  Result<Predictions> Predict(const Frame& x) const;
  // {"input_columns", "task", "classes", "transforms": [{"kind","params","fitted"}],
  //  "learner": {"kind","params","fitted"}}
  nlohmann::json ToJson() const;
  static Result<FittedPipeline> FromJson(const nlohmann::json& j);

  LearnTask task() const { return task_; }
  int classes() const { return classes_; }

 private:
  friend Result<FittedPipeline> FitPipeline(const Candidate&, const Frame&, const Eigen::VectorXd&,
                                            LearnTask, int);
  Result<Frame> Transform(const Frame& x) const;

  std::vector<std::unique_ptr<unseen::Transform>> transforms_;
  std::vector<nlohmann::json> transform_params_;
  std::unique_ptr<Learner> learner_;
  nlohmann::json learner_params_;
  std::vector<std::string> input_columns_;
  LearnTask task_ = LearnTask::kClassification;
  int classes_ = 0;
};

// Fits every transform, then the learner, on `train` only.
Result<FittedPipeline> FitPipeline(const Candidate& candidate, const Frame& train,
                                   const Eigen::VectorXd& y, LearnTask task, int classes);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_PIPELINE_H_
