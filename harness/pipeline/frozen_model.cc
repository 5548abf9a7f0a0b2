#include "harness/pipeline/frozen_model.h"

#include <exception>
#include <utility>

#include "harness/pipeline/blend.h"
#include "harness/pipeline/pipeline.h"

namespace unseen {

using nlohmann::json;

FrozenModel::FrozenModel() = default;
FrozenModel::~FrozenModel() = default;
FrozenModel::FrozenModel(FrozenModel&&) noexcept = default;
FrozenModel& FrozenModel::operator=(FrozenModel&&) noexcept = default;

Result<LearnTask> FrozenModel::TaskOf(const json& model) {
  const char* key = model.contains("blend") ? "blend" : "pipeline";
  if (!model.is_object() || !model.contains(key) || !model[key].is_object() ||
      !model[key].contains("task") || !model[key]["task"].is_string()) {
    return Status::Corruption("frozen model has neither a pipeline nor a blend with a task");
  }
  return model[key]["task"].get<std::string>() == "classification" ? LearnTask::kClassification
                                                                   : LearnTask::kRegression;
}

Result<FrozenModel> FrozenModel::FromJson(const json& model, const MemberSource& members) {
  return Load(model, members, 0);
}

Result<FrozenModel> FrozenModel::Load(const json& model, const MemberSource& members, int depth) {
  UNSEEN_ASSIGN_OR_RETURN(LearnTask task, TaskOf(model));
  FrozenModel out;
  out.task_ = task;
  if (!model.contains("blend")) {
    UNSEEN_ASSIGN_OR_RETURN(FittedPipeline p, FittedPipeline::FromJson(model["pipeline"]));
    out.pipeline_ = std::make_unique<FittedPipeline>(std::move(p));
    return out;
  }
  if (depth >= kMaxBlendDepth) {
    return Status::Corruption("blend members are nested more than " +
                              std::to_string(kMaxBlendDepth) + " deep");
  }
  try {
    const json& blend = model["blend"];
    const json& list = blend.at("members");
    out.weights_.weights.resize(static_cast<Eigen::Index>(list.size()));
    out.weights_.intercept = blend.at("intercept").get<double>();
    for (size_t i = 0; i < list.size(); ++i) {
      const json& m = list[i];
      out.weights_.weights(static_cast<Eigen::Index>(i)) = m.at("weight").get<double>();
      UNSEEN_ASSIGN_OR_RETURN(Digest256 digest,
                              Digest256FromHex(m.at("model_digest").get<std::string>()));
      UNSEEN_ASSIGN_OR_RETURN(json member_json, members(digest));
      UNSEEN_ASSIGN_OR_RETURN(FrozenModel member, Load(member_json, members, depth + 1));
      if (member.task() != task) {
        return Status::Corruption("blend member '" + m.at("name").get<std::string>() +
                                  "' was fitted for another task");
      }
      out.members_.push_back(std::move(member));
      out.member_names_.push_back(m.at("name").get<std::string>());
    }
  } catch (const std::exception& e) {
    return Status::Corruption(std::string("frozen blend is malformed: ") + e.what());
  }
  return out;
}

Result<Predictions> FrozenModel::Predict(const Frame& x) const {
  if (pipeline_ != nullptr) return pipeline_->Predict(x);
  Eigen::MatrixXd scores(static_cast<Eigen::Index>(x.rows()),
                         static_cast<Eigen::Index>(members_.size()));
  for (size_t i = 0; i < members_.size(); ++i) {
    UNSEEN_ASSIGN_OR_RETURN(Predictions p, members_[i].Predict(x));
    Result<Eigen::VectorXd> score = MemberScore(p, task_);
    if (!score.ok()) {
      return Status::FailedPrecondition("blend member '" + member_names_[i] + "' " +
                                        score.status().message());
    }
    scores.col(static_cast<Eigen::Index>(i)) = *score;
  }
  return BlendPredictions(weights_, scores, task_);
}

}  // namespace unseen
