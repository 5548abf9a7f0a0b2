#include "harness/pipeline/learners/common.h"

#include <algorithm>
#include <cmath>
#include <exception>
#include <set>
#include <utility>

namespace unseen::internal {

using nlohmann::json;

// ---------------------------------------------------------------------------
// ParamReader

ParamReader::ParamReader(std::string kind, const json& params)
    : kind_(std::move(kind)), params_(params.is_null() ? json::object() : params) {
  if (!params_.is_object()) {
    status_ = Status::InvalidArgument("learner '" + kind_ +
                                      "': parameters must be a JSON object; got " + params.dump());
  }
}

const json* ParamReader::Find(const std::string& name) {
  known_.push_back(name);
  if (!status_.ok()) return nullptr;
  auto it = params_.find(name);
  return it == params_.end() ? nullptr : &*it;
}

Status ParamReader::Bad(const std::string& name, const std::string& expected) const {
  return Status::InvalidArgument("learner '" + kind_ + "': parameter '" + name + "' must be " +
                                 expected + "; got " + params_.at(name).dump());
}

Status ParamReader::Bool(const std::string& name, bool* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  if (!j->is_boolean()) return Bad(name, "true or false");
  *value = j->get<bool>();
  return Status::OK();
}

Status ParamReader::Number(const std::string& name, double min, double* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  const std::string expected = "a number >= " + json(min).dump();
  if (!j->is_number()) return Bad(name, expected);
  const double v = j->get<double>();
  if (!std::isfinite(v) || v < min) return Bad(name, expected);
  *value = v;
  return Status::OK();
}

Status ParamReader::Integer(const std::string& name, int64_t min, int64_t max, int64_t* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  const std::string expected =
      "an integer in [" + std::to_string(min) + ", " + std::to_string(max) + "]";
  int64_t v = 0;
  if (j->is_number_unsigned()) {
    const uint64_t u = j->get<uint64_t>();
    if (u > static_cast<uint64_t>(max)) return Bad(name, expected);
    v = static_cast<int64_t>(u);
  } else if (j->is_number_integer()) {
    v = j->get<int64_t>();
  } else if (j->is_number_float()) {
    // A grid expanded from a float list may give 5.0; accept integral values.
    const double d = j->get<double>();
    if (!(d == std::floor(d)) || d < static_cast<double>(min) || d > static_cast<double>(max)) {
      return Bad(name, expected);
    }
    v = static_cast<int64_t>(d);
  } else {
    return Bad(name, expected);
  }
  if (v < min || v > max) return Bad(name, expected);
  *value = v;
  return Status::OK();
}

Status ParamReader::Seed(const std::string& name, uint64_t* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  const char* expected = "a non-negative integer below 2^64";
  if (j->is_number_unsigned()) {
    *value = j->get<uint64_t>();
  } else if (j->is_number_integer()) {
    const int64_t v = j->get<int64_t>();
    if (v < 0) return Bad(name, expected);
    *value = static_cast<uint64_t>(v);
  } else if (j->is_number_float()) {
    const double d = j->get<double>();
    if (!(d == std::floor(d)) || d < 0 || d > 9007199254740992.0) return Bad(name, expected);
    *value = static_cast<uint64_t>(d);
  } else {
    return Bad(name, expected);
  }
  return Status::OK();
}

Status ParamReader::Choice(const std::string& name, const std::vector<std::string>& choices,
                           std::string* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  std::string expected = "one of";
  for (size_t i = 0; i < choices.size(); ++i) {
    expected += (i == 0 ? " \"" : ", \"") + choices[i] + "\"";
  }
  if (!j->is_string()) return Bad(name, expected);
  const std::string v = j->get<std::string>();
  if (std::find(choices.begin(), choices.end(), v) == choices.end()) return Bad(name, expected);
  *value = v;
  return Status::OK();
}

Status ParamReader::Learner(const std::string& name, json* value) {
  const json* j = Find(name);
  if (j == nullptr) return status_;
  const char* expected = "a learner object {\"kind\": ..., parameters...}";
  if (!j->is_object()) return Bad(name, expected);
  auto kind = j->find("kind");
  if (kind == j->end() || !kind->is_string()) return Bad(name, expected);
  *value = *j;
  return Status::OK();
}

Status ParamReader::Finish() const {
  if (!status_.ok()) return status_;
  for (const auto& item : params_.items()) {
    if (std::find(known_.begin(), known_.end(), item.key()) != known_.end()) continue;
    std::string expected;
    for (const std::string& k : known_) expected += (expected.empty() ? "" : ", ") + k;
    return Status::InvalidArgument("learner '" + kind_ + "': unknown parameter '" + item.key() +
                                   "'; expected " +
                                   (expected.empty() ? "no parameters" : "one of: " + expected));
  }
  return Status::OK();
}

// ---------------------------------------------------------------------------
// LearnerBase

namespace {

const char* TaskName(LearnTask task) {
  return task == LearnTask::kClassification ? "classification" : "regression";
}

}  // namespace

LearnerBase::LearnerBase(std::string kind, bool classification, bool regression)
    : kind_(std::move(kind)), classification_(classification), regression_(regression) {}

Status LearnerBase::Invalid(const std::string& what) const {
  return Status::InvalidArgument("learner '" + kind_ + "': " + what);
}

Status LearnerBase::CheckFitInput(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                                  LearnTask task, int classes,
                                  const std::vector<std::string>& feature_names) const {
  if (task == LearnTask::kClassification && !classification_) {
    return Invalid("does not support classification; expected a regression target");
  }
  if (task == LearnTask::kRegression && !regression_) {
    return Invalid("does not support regression; expected a classification target");
  }
  if (X.rows() == 0) return Invalid("no training rows");
  if (X.cols() == 0) return Invalid("no feature columns");
  if (y.size() != X.rows()) {
    return Invalid("X has " + std::to_string(X.rows()) + " rows but y has " +
                   std::to_string(y.size()) + " values");
  }
  if (static_cast<Eigen::Index>(feature_names.size()) != X.cols()) {
    return Invalid("X has " + std::to_string(X.cols()) + " columns but " +
                   std::to_string(feature_names.size()) + " feature names were given");
  }
  std::set<std::string> seen;
  for (const std::string& name : feature_names) {
    if (name.empty()) return Invalid("empty feature name");
    if (!seen.insert(name).second) return Invalid("duplicate feature name '" + name + "'");
  }
  for (Eigen::Index j = 0; j < X.cols(); ++j) {
    if (!X.col(j).allFinite()) {
      return Invalid("feature '" + feature_names[j] + "' holds a missing or infinite value");
    }
  }
  if (!y.allFinite()) return Invalid("the target holds a missing or infinite value");
  if (task == LearnTask::kClassification) {
    if (classes < 2) {
      return Invalid("classification needs at least 2 classes; got " + std::to_string(classes));
    }
    for (Eigen::Index i = 0; i < y.size(); ++i) {
      if (y[i] != std::floor(y[i]) || y[i] < 0 || y[i] >= classes) {
        return Invalid("row " + std::to_string(i) + ": class index " + json(y[i]).dump() +
                       " is not an integer in [0, " + std::to_string(classes) + ")");
      }
    }
  }
  return Status::OK();
}

Status LearnerBase::Fit(const Eigen::MatrixXd& X, const Eigen::VectorXd& y, LearnTask task,
                        int classes, const std::vector<std::string>& feature_names) {
  fitted_ = false;
  try {
    UNSEEN_RETURN_IF_ERROR(CheckFitInput(X, y, task, classes, feature_names));
    task_ = task;
    classes_ = task == LearnTask::kClassification ? classes : 0;
    features_ = feature_names;
    Status s = FitImpl(X, y);
    fitted_ = s.ok();
    return s;
  } catch (const std::exception& e) {
    return Status::Internal("learner '" + kind_ + "': fit failed: " + e.what());
  }
}

Status LearnerBase::FitWeighted(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                                const Eigen::VectorXd& w, LearnTask task, int classes,
                                const std::vector<std::string>& feature_names) {
  fitted_ = false;
  if (!SupportsWeights()) {
    return Status::FailedPrecondition("learner '" + kind_ + "' does not take sample weights");
  }
  try {
    UNSEEN_RETURN_IF_ERROR(CheckFitInput(X, y, task, classes, feature_names));
    if (w.size() != X.rows() || !w.allFinite() || (w.array() < 0).any() || !(w.sum() > 0)) {
      return Invalid("sample weights must be " + std::to_string(X.rows()) +
                     " finite non-negative numbers with a positive sum");
    }
    task_ = task;
    classes_ = task == LearnTask::kClassification ? classes : 0;
    features_ = feature_names;
    Status s = FitWeightedImpl(X, y, w);
    fitted_ = s.ok();
    return s;
  } catch (const std::exception& e) {
    return Status::Internal("learner '" + kind_ + "': fit failed: " + e.what());
  }
}

Status LearnerBase::FitWeightedImpl(const Eigen::MatrixXd&, const Eigen::VectorXd&,
                                    const Eigen::VectorXd&) {
  return Status::FailedPrecondition("learner '" + kind_ + "' does not take sample weights");
}

Status LearnerBase::CheckPredictInput(const Eigen::MatrixXd& X) const {
  if (!fitted_) {
    return Status::FailedPrecondition("learner '" + kind_ +
                                      "' is not fitted; call Fit or LoadFitted first");
  }
  if (X.cols() != static_cast<Eigen::Index>(features_.size())) {
    return Invalid("X has " + std::to_string(X.cols()) + " columns; expected " +
                   std::to_string(features_.size()) + " (the features it was fitted on)");
  }
  for (Eigen::Index j = 0; j < X.cols(); ++j) {
    if (!X.col(j).allFinite()) {
      return Invalid("feature '" + features_[j] + "' holds a missing or infinite value");
    }
  }
  return Status::OK();
}

Result<Eigen::VectorXd> LearnerBase::Predict(const Eigen::MatrixXd& X) const {
  try {
    UNSEEN_RETURN_IF_ERROR(CheckPredictInput(X));
    return PredictImpl(X);
  } catch (const std::exception& e) {
    return Status::Internal("learner '" + kind_ + "': predict failed: " + e.what());
  }
}

Result<Eigen::MatrixXd> LearnerBase::PredictProba(const Eigen::MatrixXd& X) const {
  try {
    UNSEEN_RETURN_IF_ERROR(CheckPredictInput(X));
    if (task_ != LearnTask::kClassification) {
      return Status::FailedPrecondition("learner '" + kind_ +
                                        "' was fitted for regression; it gives no probabilities");
    }
    return ProbaImpl(X);
  } catch (const std::exception& e) {
    return Status::Internal("learner '" + kind_ + "': predict failed: " + e.what());
  }
}

Result<Eigen::MatrixXd> LearnerBase::ProbaImpl(const Eigen::MatrixXd&) const {
  return Status::FailedPrecondition("learner '" + kind_ + "' gives no class probabilities");
}

json LearnerBase::FittedParams() const {
  json j = json::object();
  j["kind"] = kind_;
  j["params"] = Params();
  j["fitted"] = fitted_;
  if (!fitted_) return j;
  j["task"] = TaskName(task_);
  j["classes"] = classes_;
  j["features"] = features_;
  const json body = Body();
  for (const auto& item : body.items()) j[item.key()] = item.value();
  return j;
}

Status LearnerBase::LoadEnvelope(const json& fitted) {
  auto task = fitted.find("task");
  if (task == fitted.end() || !task->is_string() ||
      (*task != "classification" && *task != "regression")) {
    return Invalid("fitted params: 'task' must be \"classification\" or \"regression\"");
  }
  task_ = *task == "classification" ? LearnTask::kClassification : LearnTask::kRegression;
  UNSEEN_ASSIGN_OR_RETURN(int64_t classes, GetInteger(kind_, fitted, "classes"));
  if (task_ == LearnTask::kClassification ? classes < 2 || classes > (1 << 30) : classes != 0) {
    return Invalid("fitted params: 'classes' is out of range for the task");
  }
  classes_ = static_cast<int>(classes);
  auto features = fitted.find("features");
  if (features == fitted.end() || !features->is_array() || features->empty()) {
    return Invalid("fitted params: 'features' must be a non-empty array of names");
  }
  features_.clear();
  std::set<std::string> seen;
  for (const json& f : *features) {
    if (!f.is_string() || f.get<std::string>().empty() ||
        !seen.insert(f.get<std::string>()).second) {
      return Invalid("fitted params: 'features' must hold distinct non-empty names");
    }
    features_.push_back(f.get<std::string>());
  }
  return Status::OK();
}

Status LearnerBase::LoadFitted(const json& fitted) {
  try {
    if (!fitted.is_object()) return Invalid("fitted params must be a JSON object");
    auto kind = fitted.find("kind");
    if (kind == fitted.end() || !kind->is_string() || *kind != kind_) {
      return Invalid("fitted params are not for this kind (field 'kind')");
    }
    auto params = fitted.find("params");
    if (params == fitted.end() || !params->is_object()) {
      return Invalid("fitted params: missing object 'params'");
    }
    auto is_fitted = fitted.find("fitted");
    if (is_fitted == fitted.end() || !is_fitted->is_boolean()) {
      return Invalid("fitted params: missing boolean 'fitted'");
    }
    const json previous = Params();
    fitted_ = false;
    Status s = SetParams(*params);
    if (s.ok() && is_fitted->get<bool>()) {
      s = LoadEnvelope(fitted);
      if (s.ok()) s = LoadBody(fitted);
      fitted_ = s.ok();
    }
    if (!s.ok()) (void)SetParams(previous);
    return s;
  } catch (const std::exception& e) {
    fitted_ = false;
    return Invalid(std::string("fitted params are malformed: ") + e.what());
  }
}

// ---------------------------------------------------------------------------
// JSON helpers

json ByName(const Eigen::VectorXd& v, const std::vector<std::string>& names) {
  json j = json::object();
  for (size_t i = 0; i < names.size(); ++i) j[names[i]] = v[static_cast<Eigen::Index>(i)];
  return j;
}

json ToArray(const Eigen::VectorXd& v) {
  json j = json::array();
  for (Eigen::Index i = 0; i < v.size(); ++i) j.push_back(v[i]);
  return j;
}

json ByNameRows(const Eigen::MatrixXd& m, const std::vector<std::string>& names) {
  json j = json::object();
  for (size_t c = 0; c < names.size(); ++c) {
    j[names[c]] = ToArray(m.col(static_cast<Eigen::Index>(c)));
  }
  return j;
}

namespace {

Status Missing(const std::string& kind, const std::string& key, const std::string& expected) {
  return Status::InvalidArgument("learner '" + kind + "': fitted params: '" + key + "' must be " +
                                 expected);
}

}  // namespace

Result<double> GetNumber(const std::string& kind, const json& j, const std::string& key) {
  auto it = j.find(key);
  if (it == j.end() || !it->is_number()) return Missing(kind, key, "a number");
  return it->get<double>();
}

Result<int64_t> GetInteger(const std::string& kind, const json& j, const std::string& key) {
  auto it = j.find(key);
  if (it == j.end() || !it->is_number_integer()) return Missing(kind, key, "an integer");
  return it->get<int64_t>();
}

namespace {

bool ReadNumbers(const json& a, int64_t size, Eigen::VectorXd* out) {
  if (!a.is_array() || (size >= 0 && static_cast<int64_t>(a.size()) != size)) return false;
  out->resize(static_cast<Eigen::Index>(a.size()));
  for (size_t i = 0; i < a.size(); ++i) {
    if (!a[i].is_number()) return false;
    (*out)[static_cast<Eigen::Index>(i)] = a[i].get<double>();
  }
  return true;
}

}  // namespace

Result<Eigen::VectorXd> GetArray(const std::string& kind, const json& j, const std::string& key,
                                 int64_t size) {
  Eigen::VectorXd v;
  auto it = j.find(key);
  if (it == j.end() || !ReadNumbers(*it, size, &v)) {
    return Missing(
        kind, key,
        size < 0 ? "an array of numbers" : "an array of " + std::to_string(size) + " numbers");
  }
  return v;
}

Result<Eigen::VectorXd> GetByName(const std::string& kind, const json& j, const std::string& key,
                                  const std::vector<std::string>& names) {
  auto it = j.find(key);
  const std::string expected = "an object with a number for each feature";
  if (it == j.end() || !it->is_object() || it->size() != names.size()) {
    return Missing(kind, key, expected);
  }
  Eigen::VectorXd v(static_cast<Eigen::Index>(names.size()));
  for (size_t i = 0; i < names.size(); ++i) {
    auto f = it->find(names[i]);
    if (f == it->end() || !f->is_number()) return Missing(kind, key + "." + names[i], "a number");
    v[static_cast<Eigen::Index>(i)] = f->get<double>();
  }
  return v;
}

Result<Eigen::MatrixXd> GetByNameRows(const std::string& kind, const json& j,
                                      const std::string& key, const std::vector<std::string>& names,
                                      int64_t rows) {
  auto it = j.find(key);
  if (it == j.end() || !it->is_object() || it->size() != names.size()) {
    return Missing(kind, key, "an object with an array for each feature");
  }
  Eigen::MatrixXd m(rows, static_cast<Eigen::Index>(names.size()));
  for (size_t c = 0; c < names.size(); ++c) {
    auto f = it->find(names[c]);
    Eigen::VectorXd col;
    if (f == it->end() || !ReadNumbers(*f, rows, &col)) {
      return Missing(kind, key + "." + names[c],
                     "an array of " + std::to_string(rows) + " numbers");
    }
    m.col(static_cast<Eigen::Index>(c)) = col;
  }
  return m;
}

// ---------------------------------------------------------------------------
// Numeric helpers

Eigen::Index ArgMax(const Eigen::Ref<const Eigen::VectorXd>& v) {
  Eigen::Index best = 0;
  for (Eigen::Index i = 1; i < v.size(); ++i) {
    if (v[i] > v[best]) best = i;
  }
  return best;
}

std::vector<Eigen::Index> ResampleByWeight(const Eigen::VectorXd& w, Random* random) {
  const Eigen::Index n = w.size();
  std::vector<double> cumulative(static_cast<size_t>(n));
  double total = 0;
  Eigen::Index last_positive = 0;
  for (Eigen::Index i = 0; i < n; ++i) {
    cumulative[static_cast<size_t>(i)] = total += w[i];
    if (w[i] > 0) last_positive = i;
  }
  std::vector<Eigen::Index> out(static_cast<size_t>(n));
  for (Eigen::Index k = 0; k < n; ++k) {
    const double u = random->NextDouble() * total;
    // The first index whose cumulative weight exceeds u; zero-weight rows
    // own an empty interval and are never drawn.
    auto it = std::upper_bound(cumulative.begin(), cumulative.end(), u);
    Eigen::Index i = it - cumulative.begin();
    out[static_cast<size_t>(k)] = std::min(i, last_positive);
  }
  return out;
}

Result<std::unique_ptr<LearnerBase>> MakeNested(const std::string& parent_kind,
                                                const std::string& parameter, const json& spec) {
  json params = spec;
  const std::string kind = params.at("kind").get<std::string>();
  params.erase("kind");
  Result<std::unique_ptr<LearnerBase>> made = MakeLearnerBase(kind, params);
  if (!made.ok()) {
    return Status::InvalidArgument("learner '" + parent_kind + "': parameter '" + parameter +
                                   "': " + made.status().message());
  }
  return made;
}

Status ReadEnsembleParams(const std::string& kind, const json& params, int64_t default_estimators,
                          EnsembleParams* out) {
  ParamReader reader(kind, params);
  EnsembleParams e;
  e.estimators = default_estimators;
  UNSEEN_RETURN_IF_ERROR(reader.Learner("base", &e.base));
  UNSEEN_RETURN_IF_ERROR(reader.Integer("estimators", 1, 100000, &e.estimators));
  UNSEEN_RETURN_IF_ERROR(reader.Seed("seed", &e.seed));
  UNSEEN_RETURN_IF_ERROR(reader.Finish());
  UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<LearnerBase> probe, MakeNested(kind, "base", e.base));
  e.base = probe->Params();
  e.base["kind"] = probe->kind();
  *out = std::move(e);
  return Status::OK();
}

Result<std::unique_ptr<LearnerBase>> LoadMember(const LearnerBase& parent, const json& fitted) {
  const std::string where = "learner '" + parent.kind() + "': fitted params: estimator: ";
  if (!fitted.is_object() || !fitted.contains("kind") || !fitted["kind"].is_string() ||
      !fitted.contains("params")) {
    return Status::InvalidArgument(where + "expected an object with 'kind' and 'params'");
  }
  Result<std::unique_ptr<LearnerBase>> member =
      MakeLearnerBase(fitted["kind"].get<std::string>(), fitted["params"]);
  if (!member.ok()) return Status::InvalidArgument(where + member.status().message());
  Status s = (*member)->LoadFitted(fitted);
  if (!s.ok()) return Status::InvalidArgument(where + s.message());
  if (!(*member)->fitted() || (*member)->task() != parent.task() ||
      (*member)->classes() != parent.classes() || (*member)->features() != parent.features()) {
    return Status::InvalidArgument(where + "not fitted on the ensemble's task and features");
  }
  return member;
}

}  // namespace unseen::internal
