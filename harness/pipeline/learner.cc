#include "harness/pipeline/learner.h"

#include <exception>
#include <memory>

#include "harness/pipeline/learners/common.h"

namespace unseen {
namespace internal {

namespace {

std::unique_ptr<LearnerBase> NewByKind(const std::string& kind) {
  if (kind == "linear") return NewLinear();
  if (kind == "ridge") return NewRidge();
  if (kind == "logistic") return NewLogistic();
  if (kind == "pocket") return NewPocket();
  if (kind == "knn") return NewKnn();
  if (kind == "stump") return NewStump();
  if (kind == "bagging") return NewBagging();
  if (kind == "adaboost") return NewAdaBoost();
  return nullptr;
}

}  // namespace

Result<std::unique_ptr<LearnerBase>> MakeLearnerBase(const std::string& kind,
                                                     const nlohmann::json& params) {
  try {
    std::unique_ptr<LearnerBase> learner = NewByKind(kind);
    if (learner == nullptr) {
      std::string expected;
      for (const std::string& k : LearnerKinds()) expected += (expected.empty() ? "" : ", ") + k;
      return Status::InvalidArgument("unknown learner kind '" + kind + "'; expected one of " +
                                     expected);
    }
    UNSEEN_RETURN_IF_ERROR(learner->SetParams(params));
    return learner;
  } catch (const std::exception& e) {
    return Status::Internal("learner '" + kind + "': " + e.what());
  }
}

}  // namespace internal

Result<std::unique_ptr<Learner>> MakeLearner(const std::string& kind,
                                             const nlohmann::json& params) {
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<internal::LearnerBase> learner,
                          internal::MakeLearnerBase(kind, params));
  return std::unique_ptr<Learner>(std::move(learner));
}

const std::vector<std::string>& LearnerKinds() {
  static const std::vector<std::string>* const kinds = new std::vector<std::string>{
      "linear", "ridge", "logistic", "pocket", "knn", "stump", "bagging", "adaboost"};
  return *kinds;
}

}  // namespace unseen
