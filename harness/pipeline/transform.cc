#include "harness/pipeline/transform.h"

#include <functional>
#include <utility>

#include "harness/pipeline/transforms/common.h"

namespace unseen {

namespace {

using Factory = std::function<std::unique_ptr<internal::TransformBase>()>;

const std::vector<std::pair<std::string, Factory>>& Factories() {
  static const auto* factories = new std::vector<std::pair<std::string, Factory>>{
      {"impute", internal::NewImpute},
      {"standardize", internal::NewStandardize},
      {"minmax", internal::NewMinMax},
      {"onehot", internal::NewOneHot},
      {"poly", internal::NewPoly},
      {"pca", internal::NewPca},
      {"select_variance", internal::NewSelectVariance},
      {"select_topk", internal::NewSelectTopK},
  };
  return *factories;
}

}  // namespace

const std::vector<std::string>& TransformKinds() {
  static const auto* kinds = [] {
    auto* k = new std::vector<std::string>;
    for (const auto& f : Factories()) k->push_back(f.first);
    return k;
  }();
  return *kinds;
}

Result<std::unique_ptr<Transform>> MakeTransform(const std::string& kind,
                                                 const nlohmann::json& params) {
  for (const auto& f : Factories()) {
    if (f.first != kind) continue;
    std::unique_ptr<internal::TransformBase> t = f.second();
    UNSEEN_RETURN_IF_ERROR(t->Configure(params));
    return std::unique_ptr<Transform>(std::move(t));
  }
  return Status::InvalidArgument("unknown transform kind '" + kind + "'; expected one of " +
                                 internal::JoinNames(TransformKinds()));
}

}  // namespace unseen
