// select_variance and select_topk: keep a subset of the numeric columns,
// chosen on the training rows; other columns pass through untouched.
#include <algorithm>
#include <cmath>
#include <limits>
#include <map>
#include <optional>
#include <set>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

constexpr double kHuge = std::numeric_limits<double>::max();  // stands for an infinite score

// The shared part: which numeric columns were considered, their scores, and
// which of them are kept.
class SelectBase : public TransformBase {
 public:
  using TransformBase::TransformBase;

  Result<Frame> Apply(const Frame& in) const override {
    UNSEEN_RETURN_IF_ERROR(CheckFitted());
    std::set<std::string> keep(kept_.begin(), kept_.end());
    for (const std::string& name : kept_) {
      UNSEEN_ASSIGN_OR_RETURN(size_t index, FindColumn(kind_, in, name, ColumnNeed::kNumeric));
      (void)index;
    }
    std::set<std::string> drop;
    for (const std::string& name : columns_) {
      if (keep.count(name) == 0) drop.insert(name);
    }
    Frame out;
    for (const FrameColumn& c : in.columns) {
      if (drop.count(c.name) == 0) out.columns.push_back(c);
    }
    return out;
  }

 protected:
  virtual const char* ScoreKey() const = 0;

  json SaveState() const override {
    json scores = json::object();
    for (size_t i = 0; i < columns_.size(); ++i) scores[columns_[i]] = scores_[i];
    return {{"columns", columns_}, {ScoreKey(), scores}, {"kept", kept_}};
  }

  Status LoadState(const json& state) override {
    std::vector<std::string> columns = state.at("columns").get<std::vector<std::string>>();
    std::vector<double> scores;
    for (const std::string& c : columns) scores.push_back(state.at(ScoreKey()).at(c).get<double>());
    std::vector<std::string> kept = state.at("kept").get<std::vector<std::string>>();
    for (const std::string& k : kept) {
      if (std::find(columns.begin(), columns.end(), k) == columns.end()) {
        return Invalid("kept column '" + k + "' is not among the fitted columns");
      }
    }
    columns_ = std::move(columns);
    scores_ = std::move(scores);
    kept_ = std::move(kept);
    return Status::OK();
  }

  std::vector<std::string> requested_;
  std::vector<std::string> columns_;  // considered, in frame order
  std::vector<double> scores_;        // one per considered column
  std::vector<std::string> kept_;     // in frame order
};

// Drops numeric columns whose population variance (ddof = 0, missing values
// ignored) is <= threshold. With threshold 0 the variance is also capped by
// the peak-to-peak range, as scikit-learn's VarianceThreshold does, so a
// constant column never survives on rounding noise.
class SelectVariance : public SelectBase {
 public:
  SelectVariance() : SelectBase("select_variance") {}

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kNumeric));
    std::vector<double> scores;
    std::vector<std::string> kept;
    for (const std::string& name : names) {
      const std::vector<double>& x = train.columns[static_cast<size_t>(train.Find(name))].num;
      Moments m = ColumnMoments(x);
      double var = m.var;  // 0 when the column has no values: dropped
      if (threshold_ == 0 && m.count > 0) {
        double lo = kHuge, hi = -kHuge;
        for (double v : x) {
          if (!std::isnan(v)) lo = std::min(lo, v), hi = std::max(hi, v);
        }
        var = std::min(var, hi - lo);
      }
      scores.push_back(var);
      if (m.count > 0 && var > threshold_) kept.push_back(name);
    }
    if (!names.empty() && kept.empty()) {
      return Invalid("no column has a variance above the threshold " + json(threshold_).dump() +
                     " in the training rows; lower 'threshold'");
    }
    columns_ = std::move(names);
    scores_ = std::move(scores);
    kept_ = std::move(kept);
    MarkFitted();
    return Status::OK();
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"threshold", "columns"}));
    UNSEEN_ASSIGN_OR_RETURN(threshold_, r.Number("threshold", 0));
    if (!(threshold_ >= 0) || !std::isfinite(threshold_)) {
      return r.Error("threshold", "must be a finite number >= 0, got " + r.Get("threshold").dump());
    }
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }
  const char* ScoreKey() const override { return "variance"; }

 private:
  double threshold_ = 0;
};

// Keeps the k numeric columns scoring highest against the target: the
// absolute Pearson correlation, or the univariate F statistic (scikit-learn
// f_regression for a regression task, f_classif / one-way ANOVA for
// classes). An undefined score (constant column) is 0, an infinite one the
// largest double. Ties go to the column that comes first.
class SelectTopK : public SelectBase {
 public:
  SelectTopK() : SelectBase("select_topk") {}

  void SetTask(LearnTask task) override { task_ = task; }

  Status Fit(const Frame& train, const Eigen::VectorXd& target) override {
    fitted_ = false;
    if (score_ == "f" && !task_) {
      return Status::FailedPrecondition(
          "transform 'select_topk': score \"f\" needs the task (SetTask) before Fit");
    }
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kNumeric));
    if (static_cast<size_t>(target.size()) != train.rows()) {
      return Invalid("the target has " + std::to_string(target.size()) + " values for " +
                     std::to_string(train.rows()) + " training rows");
    }
    std::vector<double> y(target.data(), target.data() + target.size());
    for (double v : y) {
      if (!std::isfinite(v)) return Invalid("the target has a missing or non-finite value");
    }
    std::vector<double> scores;
    for (const std::string& name : names) {
      const FrameColumn& c = train.columns[static_cast<size_t>(train.Find(name))];
      for (double v : c.num) {
        if (std::isnan(v)) {
          return Invalid("column '" + name + "' has missing values; impute it before select_topk");
        }
      }
      UNSEEN_ASSIGN_OR_RETURN(double s, Score(c.num, y));
      scores.push_back(s);
    }
    std::vector<size_t> order(names.size());
    for (size_t i = 0; i < order.size(); ++i) order[i] = i;
    std::stable_sort(order.begin(), order.end(),
                     [&](size_t a, size_t b) { return scores[a] > scores[b]; });
    order.resize(std::min(order.size(), static_cast<size_t>(k_)));
    std::sort(order.begin(), order.end());
    kept_.clear();
    for (size_t i : order) kept_.push_back(names[i]);
    columns_ = std::move(names);
    scores_ = std::move(scores);
    MarkFitted();
    return Status::OK();
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"k", "score", "columns"}));
    UNSEEN_ASSIGN_OR_RETURN(k_, r.Int("k", 10, 1, std::numeric_limits<int32_t>::max()));
    UNSEEN_ASSIGN_OR_RETURN(score_, r.Choice("score", {"correlation", "f"}, "correlation"));
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }
  const char* ScoreKey() const override { return "score"; }

  json SaveState() const override {
    json state = SelectBase::SaveState();
    if (task_)
      state["task"] = *task_ == LearnTask::kClassification ? "classification" : "regression";
    return state;
  }

  Status LoadState(const json& state) override {
    UNSEEN_RETURN_IF_ERROR(SelectBase::LoadState(state));
    task_.reset();
    if (state.contains("task")) {
      task_ = state.at("task") == "classification" ? LearnTask::kClassification
                                                   : LearnTask::kRegression;
    }
    return Status::OK();
  }

 private:
  // Pearson correlation; 0 when either side is constant.
  static double Correlation(const std::vector<double>& x, const std::vector<double>& y) {
    Moments mx = ColumnMoments(x), my = ColumnMoments(y);
    double sxy = 0;
    for (size_t i = 0; i < x.size(); ++i) sxy += (x[i] - mx.mean) * (y[i] - my.mean);
    double n = static_cast<double>(x.size());
    if (mx.var <= 0 || my.var <= 0) return 0;
    return sxy / n / std::sqrt(mx.var * my.var);
  }

  Result<double> Score(const std::vector<double>& x, const std::vector<double>& y) const {
    if (x.size() < 3) return Invalid("needs at least 3 training rows");
    double r = Correlation(x, y);
    if (score_ == "correlation") return std::abs(r);
    if (*task_ == LearnTask::kRegression) {
      // f_regression: r^2 / (1 - r^2) * (n - 2).
      double r2 = r * r;
      if (r2 >= 1) return kHuge;
      return r2 / (1 - r2) * static_cast<double>(x.size() - 2);
    }
    return AnovaF(x, y);
  }

  // One-way ANOVA F of x between the classes in y (f_classif), with the
  // sums of squares taken about the group means (two passes, no cancellation).
  Result<double> AnovaF(const std::vector<double>& x, const std::vector<double>& y) const {
    std::map<double, std::pair<double, size_t>> groups;  // class -> (sum, count)
    for (size_t i = 0; i < x.size(); ++i) {
      if (y[i] < 0 || y[i] != std::floor(y[i])) {
        return Invalid("score \"f\" for classification needs class indexes as the target, got " +
                       json(y[i]).dump());
      }
      groups[y[i]].first += x[i];
      groups[y[i]].second += 1;
    }
    size_t classes = groups.size();
    if (classes < 2 || x.size() <= classes) {
      return Invalid("score \"f\" needs at least 2 classes and more rows than classes");
    }
    double mean = ColumnMoments(x).mean;
    double between = 0, within = 0;
    for (const auto& [label, g] : groups) {
      double m = g.first / static_cast<double>(g.second);
      between += static_cast<double>(g.second) * (m - mean) * (m - mean);
    }
    for (size_t i = 0; i < x.size(); ++i) {
      const auto& g = groups[y[i]];
      double d = x[i] - g.first / static_cast<double>(g.second);
      within += d * d;
    }
    double msb = between / static_cast<double>(classes - 1);
    double msw = within / static_cast<double>(x.size() - classes);
    if (msw <= 0) return msb > 0 ? kHuge : 0.0;
    return msb / msw;
  }

  int64_t k_ = 10;
  std::string score_ = "correlation";
  std::optional<LearnTask> task_;
};

}  // namespace

std::unique_ptr<TransformBase> NewSelectVariance() { return std::make_unique<SelectVariance>(); }
std::unique_ptr<TransformBase> NewSelectTopK() { return std::make_unique<SelectTopK>(); }

}  // namespace unseen::internal
