#include "harness/pipeline/blend.h"

#include <algorithm>
#include <nlohmann/json.hpp>
#include <set>
#include <utility>

namespace unseen {

namespace {

using Eigen::Index;
using nlohmann::json;

Status ErrorAt(const std::string& file, SpecPosition pos, const std::string& what) {
  return Status::InvalidArgument(SpecWhere(file, pos) + what);
}

class BlendReader {
 public:
  explicit BlendReader(const PipelineSpec& spec) : spec_(spec), learner_(spec.learner) {
    out_.learner_at = {learner_.line, learner_.column};
  }

  Result<BlendSpec> Read() {
    if (!spec_.transforms.empty()) {
      const StepSpec& t = spec_.transforms[0];
      return ErrorAt(spec_.path, {t.line, t.column},
                     "a blend takes no [[transform]]: its members carry their own pipelines; "
                     "expected only [learner] (and [select])");
    }
    for (const auto& item : learner_.params.items()) {
      const std::string& key = item.key();
      if (key == "members") {
        UNSEEN_RETURN_IF_ERROR(Members(item.value()));
      } else if (key == "nonnegative") {
        if (item.value().is_array()) return NoGrid(key);
        if (!item.value().is_boolean()) {
          return ErrorAt(spec_.path, At(key), "blend: 'nonnegative' must be true or false");
        }
        out_.nonnegative = item.value().get<bool>();
      } else if (key == "partition") {
        if (item.value().is_array()) return NoGrid(key);
        if (!item.value().is_string() || item.value().get<std::string>().empty()) {
          return ErrorAt(spec_.path, At(key),
                         "blend: 'partition' must be the name of a carved partition "
                         "(`unseen carve --name NAME`)");
        }
        out_.partition = item.value().get<std::string>();
        out_.partition_at = At(key);
      } else {
        return ErrorAt(
            spec_.path, At(key),
            "blend: unknown parameter '" + key + "'; expected members, nonnegative or partition");
      }
    }
    if (out_.members.empty()) {
      return ErrorAt(spec_.path, out_.learner_at,
                     "blend has no 'members'; expected members = [\"model-a\", \"model-b\"], "
                     "the names of frozen models");
    }
    if (out_.partition.empty()) {
      return ErrorAt(spec_.path, out_.learner_at,
                     "blend has no 'partition'; expected partition = \"NAME\", a partition "
                     "carved by `unseen carve` that no member was fitted on");
    }
    return out_;
  }

 private:
  SpecPosition At(const std::string& key) const {
    auto it = learner_.keys.find(key);
    return it != learner_.keys.end() ? it->second : out_.learner_at;
  }

  Status NoGrid(const std::string& key) const {
    return ErrorAt(spec_.path, At(key),
                   "blend: '" + key + "' is an array; a blend has no grid, expected one value");
  }

  Status Members(const json& v) {
    out_.members_at = At("members");
    if (!v.is_array()) {
      return ErrorAt(spec_.path, out_.members_at,
                     "blend: 'members' must be a list of model names, e.g. [\"a\", \"b\"]");
    }
    std::set<std::string> seen;
    for (const json& m : v) {
      if (m.is_array()) {
        return ErrorAt(spec_.path, out_.members_at,
                       "blend: 'members' is a list of lists; a blend has no grid over members, "
                       "expected one list of model names");
      }
      if (!m.is_string() || m.get<std::string>().empty()) {
        return ErrorAt(spec_.path, out_.members_at,
                       "blend: every member must be a model name (a non-empty string)");
      }
      if (!seen.insert(m.get<std::string>()).second) {
        return ErrorAt(spec_.path, out_.members_at,
                       "blend: member '" + m.get<std::string>() + "' is named twice");
      }
      out_.members.push_back(m.get<std::string>());
    }
    if (out_.members.size() < 2) {
      return ErrorAt(spec_.path, out_.members_at,
                     "blend: 'members' names " + std::to_string(out_.members.size()) +
                         " model; expected at least two");
    }
    return Status::OK();
  }

  const PipelineSpec& spec_;
  const StepSpec& learner_;
  BlendSpec out_;
};

Eigen::MatrixXd Rows(const Eigen::MatrixXd& m, const std::vector<Index>& rows) {
  Eigen::MatrixXd out(static_cast<Index>(rows.size()), m.cols());
  for (size_t i = 0; i < rows.size(); ++i) out.row(static_cast<Index>(i)) = m.row(rows[i]);
  return out;
}

Eigen::VectorXd Rows(const Eigen::VectorXd& v, const std::vector<Index>& rows) {
  Eigen::VectorXd out(static_cast<Index>(rows.size()));
  for (size_t i = 0; i < rows.size(); ++i) out(static_cast<Index>(i)) = v(rows[i]);
  return out;
}

// `m` without column `drop` (or all of it when drop < 0).
Eigen::MatrixXd WithoutColumn(const Eigen::MatrixXd& m, Index drop) {
  if (drop < 0) return m;
  Eigen::MatrixXd out(m.rows(), m.cols() - 1);
  for (Index j = 0, k = 0; j < m.cols(); ++j) {
    if (j != drop) out.col(k++) = m.col(j);
  }
  return out;
}

struct FoldData {
  Eigen::MatrixXd train_scores, test_scores;
  Eigen::VectorXd train_y, test_y;
};

// The loss on the test part of the blend fitted on the train part, without
// member `drop` (none when drop < 0).
Result<double> FoldLoss(const FoldData& d, Index drop, bool nonnegative, Metric metric,
                        LearnTask task) {
  UNSEEN_ASSIGN_OR_RETURN(LinearWeights w, FitLinearWeights(WithoutColumn(d.train_scores, drop),
                                                            d.train_y, nonnegative));
  Predictions p = BlendPredictions(w, WithoutColumn(d.test_scores, drop), task);
  return Score(metric, d.test_y, p, task == LearnTask::kClassification ? 2 : 0);
}

}  // namespace

Result<BlendSpec> ReadBlendSpec(const PipelineSpec& spec) { return BlendReader(spec).Read(); }

Result<Eigen::VectorXd> MemberScore(const Predictions& p, LearnTask task) {
  if (task == LearnTask::kRegression) return p.value;
  if (p.proba.cols() != 2 || p.proba.rows() != p.value.size()) {
    return Status::FailedPrecondition(
        "gives no probabilities of two classes; a classification blend combines the members' "
        "probabilities of class 1");
  }
  return Eigen::VectorXd(p.proba.col(1));
}

Predictions BlendPredictions(const LinearWeights& weights, const Eigen::MatrixXd& scores,
                             LearnTask task) {
  Eigen::VectorXd s = (scores * weights.weights).array() + weights.intercept;
  Predictions p;
  if (task == LearnTask::kRegression) {
    p.value = std::move(s);
    return p;
  }
  const Index n = s.size();
  p.value.resize(n);
  p.proba.resize(n, 2);
  for (Index i = 0; i < n; ++i) {
    double q = std::clamp(s(i), 0.0, 1.0);
    p.proba(i, 0) = 1.0 - q;
    p.proba(i, 1) = q;
    p.value(i) = q >= 0.5 ? 1.0 : 0.0;
  }
  return p;
}

Result<BlendContributions> CrossValidateBlend(const Eigen::MatrixXd& scores,
                                              const Eigen::VectorXd& y,
                                              const std::vector<int>& fold, int k,
                                              bool validation_only, bool nonnegative, Metric metric,
                                              LearnTask task) {
  if (scores.rows() != y.size() || fold.size() != static_cast<size_t>(y.size())) {
    return Status::InvalidArgument("blend contributions: scores, targets and folds differ in size");
  }
  if (!LowerIsBetter(metric)) {
    return Status::InvalidArgument(std::string("blend contributions: metric ") +
                                   MetricName(metric) + " is not a loss");
  }
  const Index members = scores.cols();
  BlendContributions out;
  out.loss_without.assign(static_cast<size_t>(members), 0.0);
  for (int f = validation_only ? 1 : 0; f < k; ++f) {
    std::vector<Index> train, test;
    for (size_t i = 0; i < fold.size(); ++i)
      (fold[i] == f ? test : train).push_back(static_cast<Index>(i));
    if (train.empty() || test.empty()) {
      return Status::InvalidArgument("blend contributions: fold " + std::to_string(f) +
                                     " leaves no rows on one side");
    }
    FoldData d{Rows(scores, train), Rows(scores, test), Rows(y, train), Rows(y, test)};
    UNSEEN_ASSIGN_OR_RETURN(double all, FoldLoss(d, -1, nonnegative, metric, task));
    out.fold_loss_all.push_back(all);
    for (Index m = 0; m < members; ++m) {
      UNSEEN_ASSIGN_OR_RETURN(double without, FoldLoss(d, m, nonnegative, metric, task));
      out.loss_without[static_cast<size_t>(m)] += without;
    }
  }
  const double folds = static_cast<double>(out.fold_loss_all.size());
  for (double l : out.fold_loss_all) out.loss_all += l;
  out.loss_all /= folds;
  for (double& l : out.loss_without) {
    l /= folds;
    out.contribution.push_back(l - out.loss_all);
  }
  return out;
}

}  // namespace unseen
