// `stump`: a decision stump, the best single threshold on one feature, for
// classification (least weighted misclassification) and regression (least
// weighted squared error). It takes sample weights natively, which makes it
// the default base learner of bagging and adaboost. No parameters.
//
// Candidate thresholds are midpoints between consecutive distinct values of
// a feature; x <= threshold goes left. A split must beat the constant model
// (no split, "feature": null) and every earlier candidate by more than 1e-12
// relative, so among equal splits the first feature, then the smaller
// threshold, wins, and rounding never invents a split. Leaves predict the weighted
// majority class (ties to the smaller index) with the side's weighted class
// shares as probabilities, or the weighted mean of the target.
#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <numeric>
#include <vector>

#include "harness/pipeline/learners/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

// One side of the split: its weighted class totals (classification) or
// weighted target sum (regression), and its weight.
struct Side {
  Eigen::VectorXd totals;
  double sum = 0;
  double weight = 0;
};

// The goodness of a side: its weighted majority (classification) or
// sum^2/weight (regression); a split maximises the sum over both sides.
double Score(const Side& s, bool classification) {
  if (classification) return s.totals.maxCoeff();
  return s.weight > 0 ? s.sum * s.sum / s.weight : 0.0;
}

// A threshold strictly between a < b (a itself when no double lies between).
double Midpoint(double a, double b) {
  const double mid = 0.5 * a + 0.5 * b;
  return mid >= a && mid < b ? mid : a;
}

class Stump : public LearnerBase {
 public:
  Stump() : LearnerBase("stump", true, true) {}

  bool SupportsWeights() const override { return true; }

  Status SetParams(const json& params) override {
    ParamReader reader(kind(), params);
    return reader.Finish();
  }

  json Params() const override { return json::object(); }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    return FitWeightedImpl(X, y, Eigen::VectorXd::Ones(X.rows()));
  }

  Status FitWeightedImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y,
                         const Eigen::VectorXd& w) override {
    const bool classification = task() == LearnTask::kClassification;
    const Side all = Totals(y, w, classification);
    double best = Score(all, classification);
    feature_ = -1;
    threshold_ = 0;
    SetLeaf(all, &left_);
    right_ = left_;
    std::vector<Eigen::Index> order(static_cast<size_t>(X.rows()));
    for (Eigen::Index j = 0; j < X.cols(); ++j) {
      std::iota(order.begin(), order.end(), Eigen::Index{0});
      const auto col = X.col(j);
      std::stable_sort(order.begin(), order.end(),
                       [&](Eigen::Index a, Eigen::Index b) { return col[a] < col[b]; });
      Side left = Totals(y, Eigen::VectorXd::Zero(y.size()), classification);
      for (size_t s = 0; s + 1 < order.size(); ++s) {
        const Eigen::Index i = order[s];
        Add(y[i], w[i], classification, &left);
        const double a = col[i], b = col[order[s + 1]];
        if (!(a < b)) continue;
        const Side right = Minus(all, left);
        if (!(left.weight > 0) || !(right.weight > 0)) continue;
        const double score = Score(left, classification) + Score(right, classification);
        // A relative margin keeps rounding from inventing a split that does
        // not improve (e.g. a constant target).
        if (score > best + 1e-12 * std::abs(best)) {
          best = score;
          feature_ = j;
          threshold_ = Midpoint(a, b);
          SetLeaf(left, &left_);
          SetLeaf(right, &right_);
        }
      }
    }
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    Eigen::VectorXd out(X.rows());
    for (Eigen::Index i = 0; i < X.rows(); ++i) out[i] = LeafOf(X, i).value;
    return out;
  }

  Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const override {
    Eigen::MatrixXd out(X.rows(), classes());
    for (Eigen::Index i = 0; i < X.rows(); ++i) out.row(i) = LeafOf(X, i).proba.transpose();
    return out;
  }

  json Body() const override {
    json body{{"threshold", threshold_}, {"left", LeafJson(left_)}, {"right", LeafJson(right_)}};
    body["feature"] =
        feature_ < 0 ? json(nullptr) : json(features()[static_cast<size_t>(feature_)]);
    return body;
  }

  Status LoadBody(const json& fitted) override {
    auto feature = fitted.find("feature");
    if (feature == fitted.end() || !(feature->is_null() || feature->is_string())) {
      return Invalid("fitted params: 'feature' must be a feature name or null");
    }
    feature_ = -1;
    if (feature->is_string()) {
      auto it = std::find(features().begin(), features().end(), feature->get<std::string>());
      if (it == features().end()) return Invalid("fitted params: 'feature' names no feature");
      feature_ = it - features().begin();
    }
    UNSEEN_ASSIGN_OR_RETURN(threshold_, GetNumber(kind(), fitted, "threshold"));
    UNSEEN_RETURN_IF_ERROR(LoadLeaf(fitted, "left", &left_));
    return LoadLeaf(fitted, "right", &right_);
  }

 private:
  struct Leaf {
    double value = 0;       // the class index or the mean
    Eigen::VectorXd proba;  // classification only
  };

  Side Totals(const Eigen::VectorXd& y, const Eigen::VectorXd& w, bool classification) const {
    Side s;
    s.totals = Eigen::VectorXd::Zero(classification ? classes() : 0);
    for (Eigen::Index i = 0; i < y.size(); ++i) Add(y[i], w[i], classification, &s);
    return s;
  }

  static void Add(double y, double w, bool classification, Side* s) {
    if (classification) s->totals[static_cast<Eigen::Index>(y)] += w;
    s->sum += w * y;
    s->weight += w;
  }

  static Side Minus(const Side& all, const Side& part) {
    return Side{all.totals - part.totals, all.sum - part.sum, all.weight - part.weight};
  }

  void SetLeaf(const Side& s, Leaf* leaf) const {
    if (task() == LearnTask::kClassification) {
      leaf->value = static_cast<double>(ArgMax(s.totals));
      leaf->proba = s.totals / s.totals.sum();
    } else {
      leaf->value = s.weight > 0 ? s.sum / s.weight : 0.0;
      leaf->proba.resize(0);
    }
  }

  const Leaf& LeafOf(const Eigen::MatrixXd& X, Eigen::Index i) const {
    return feature_ < 0 || X(i, feature_) <= threshold_ ? left_ : right_;
  }

  json LeafJson(const Leaf& leaf) const {
    if (task() == LearnTask::kRegression) return json{{"value", leaf.value}};
    return json{{"class", static_cast<int64_t>(leaf.value)}, {"proba", ToArray(leaf.proba)}};
  }

  Status LoadLeaf(const json& fitted, const std::string& key, Leaf* leaf) const {
    auto it = fitted.find(key);
    if (it == fitted.end() || !it->is_object()) {
      return Invalid("fitted params: '" + key + "' must be an object");
    }
    if (task() == LearnTask::kRegression) {
      UNSEEN_ASSIGN_OR_RETURN(leaf->value, GetNumber(kind(), *it, "value"));
      return Status::OK();
    }
    UNSEEN_ASSIGN_OR_RETURN(int64_t c, GetInteger(kind(), *it, "class"));
    if (c < 0 || c >= classes())
      return Invalid("fitted params: '" + key + ".class' is out of range");
    leaf->value = static_cast<double>(c);
    UNSEEN_ASSIGN_OR_RETURN(leaf->proba, GetArray(kind(), *it, "proba", classes()));
    return Status::OK();
  }

  Eigen::Index feature_ = -1;
  double threshold_ = 0;
  Leaf left_, right_;
};

}  // namespace

std::unique_ptr<LearnerBase> NewStump() { return std::make_unique<Stump>(); }

}  // namespace unseen::internal
