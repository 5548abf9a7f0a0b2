// FrozenModel: a frozen model's JSON made ready to apply. Either an ordinary
// pipeline (the model's `pipeline` object) or a blend (its `blend` object),
// whose members are FrozenModels themselves, loaded once through a
// MemberSource. A FrozenModel holds no reference to where its members came
// from, so code that must not touch the ledger while it holds rows (the
// evaluation guard) can be handed one. Movable, not copyable;
// thread-compatible (Predict is const).
#ifndef UNSEEN_HARNESS_PIPELINE_FROZEN_MODEL_H_
#define UNSEEN_HARNESS_PIPELINE_FROZEN_MODEL_H_

#include <functional>
#include <memory>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/metrics.h"
#include "harness/pipeline/frame.h"
#include "harness/pipeline/learner.h"
#include "harness/pipeline/nnls.h"
#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

class FittedPipeline;

class FrozenModel {
 public:
  // The frozen model JSON stored under a digest (a blend's member).
  using MemberSource = std::function<Result<nlohmann::json>(const Digest256& digest)>;

  // At most this many blends nested inside one another.
  static constexpr int kMaxBlendDepth = 16;

  FrozenModel();
  ~FrozenModel();
  FrozenModel(FrozenModel&&) noexcept;
  FrozenModel& operator=(FrozenModel&&) noexcept;

  // Reads a frozen model (as `fit` stores it). A blend's members are read
  // through `members`, by the digests the blend recorded, recursively.
  // Corruption if the JSON (or a member's) is malformed, has neither a
  // pipeline nor a blend, or nests more than kMaxBlendDepth blends; errors
  // of `members` are returned as they are.
  static Result<FrozenModel> FromJson(const nlohmann::json& model, const MemberSource& members);

  // The task of a frozen model's JSON, without loading it. Corruption if it
  // has neither a pipeline nor a blend with a task.
  static Result<LearnTask> TaskOf(const nlohmann::json& model);

  // Predictions for the rows of `x`, which must hold the input columns of
  // the pipeline (of every member, for a blend) by name; extra columns are
  // ignored. A blend combines its members' scores (harness/pipeline/blend.h:
  // regression values, or probabilities of class 1 clipped to [0, 1]).
  // InvalidArgument if `x` lacks a column; FailedPrecondition if a
  // classification member gives no probabilities.
  Result<Predictions> Predict(const Frame& x) const;

  LearnTask task() const { return task_; }
  bool is_blend() const { return pipeline_ == nullptr; }

 private:
  static Result<FrozenModel> Load(const nlohmann::json& model, const MemberSource& members,
                                  int depth);

  LearnTask task_ = LearnTask::kRegression;
  std::unique_ptr<FittedPipeline> pipeline_;  // null for a blend
  std::vector<FrozenModel> members_;
  std::vector<std::string> member_names_;
  LinearWeights weights_;
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_FROZEN_MODEL_H_
