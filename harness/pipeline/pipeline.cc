#include "harness/pipeline/pipeline.h"

namespace unseen {

using json = nlohmann::json;

namespace {

Result<Frame> Inputs(const Frame& x, const std::vector<std::string>& names) {
  Frame out;
  for (const std::string& n : names) {
    int c = x.Find(n);
    if (c < 0) return Status::InvalidArgument("the data has no column '" + n + "' that the model needs");
    out.columns.push_back(x.columns[static_cast<size_t>(c)]);
  }
  return out;
}

}  // namespace

Result<Frame> FittedPipeline::Transform(const Frame& x) const {
  UNSEEN_ASSIGN_OR_RETURN(Frame cur, Inputs(x, input_columns_));
  for (const auto& t : transforms_) {
    UNSEEN_ASSIGN_OR_RETURN(cur, t->Apply(cur));
  }
  return cur;
}

Result<Predictions> FittedPipeline::Predict(const Frame& x) const {
  UNSEEN_ASSIGN_OR_RETURN(Frame f, Transform(x));
  UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd m, f.ToMatrix());
  Predictions p;
  UNSEEN_ASSIGN_OR_RETURN(p.value, learner_->Predict(m));
  if (task_ == LearnTask::kClassification) {
    auto proba = learner_->PredictProba(m);
    if (proba.ok()) p.proba = std::move(*proba);
  }
  return p;
}

json FittedPipeline::ToJson() const {
  json ts = json::array();
  for (size_t i = 0; i < transforms_.size(); ++i) {
    ts.push_back({{"kind", transforms_[i]->kind()}, {"params", transform_params_[i]},
                  {"fitted", transforms_[i]->FittedParams()}});
  }
  return {{"input_columns", input_columns_},
          {"task", task_ == LearnTask::kClassification ? "classification" : "regression"},
          {"classes", classes_},
          {"transforms", ts},
          {"learner", {{"kind", learner_->kind()}, {"params", learner_params_},
                       {"fitted", learner_->FittedParams()}}}};
}

Result<FittedPipeline> FittedPipeline::FromJson(const json& j) {
  FittedPipeline p;
  try {
    p.input_columns_ = j.at("input_columns").get<std::vector<std::string>>();
    p.task_ = j.at("task").get<std::string>() == "classification" ? LearnTask::kClassification
                                                                   : LearnTask::kRegression;
    p.classes_ = j.at("classes").get<int>();
    for (const json& t : j.at("transforms")) {
      UNSEEN_ASSIGN_OR_RETURN(auto tr, MakeTransform(t.at("kind").get<std::string>(), t.at("params")));
      tr->SetTask(p.task_);
      UNSEEN_RETURN_IF_ERROR(tr->LoadFitted(t.at("fitted")));
      p.transforms_.push_back(std::move(tr));
      p.transform_params_.push_back(t.at("params"));
    }
    const json& l = j.at("learner");
    UNSEEN_ASSIGN_OR_RETURN(p.learner_, MakeLearner(l.at("kind").get<std::string>(), l.at("params")));
    UNSEEN_RETURN_IF_ERROR(p.learner_->LoadFitted(l.at("fitted")));
    p.learner_params_ = l.at("params");
  } catch (const std::exception& e) {
    return Status::Corruption(std::string("frozen model is malformed: ") + e.what());
  }
  return p;
}

Result<FittedPipeline> FitPipeline(const Candidate& candidate, const Frame& train,
                                   const Eigen::VectorXd& y, LearnTask task, int classes) {
  FittedPipeline p;
  p.task_ = task;
  p.classes_ = classes;
  p.input_columns_ = train.Names();
  Frame cur = train;
  for (const StepSpec& step : candidate.transforms) {
    UNSEEN_ASSIGN_OR_RETURN(auto t, MakeTransform(step.kind, step.params));
    t->SetTask(task);
    UNSEEN_RETURN_IF_ERROR(t->Fit(cur, y));
    UNSEEN_ASSIGN_OR_RETURN(cur, t->Apply(cur));
    p.transforms_.push_back(std::move(t));
    p.transform_params_.push_back(step.params);
  }
  UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd x, cur.ToMatrix());
  UNSEEN_ASSIGN_OR_RETURN(p.learner_, MakeLearner(candidate.learner.kind, candidate.learner.params));
  UNSEEN_RETURN_IF_ERROR(p.learner_->Fit(x, y, task, classes, cur.Names()));
  p.learner_params_ = candidate.learner.params;
  return p;
}

}  // namespace unseen
