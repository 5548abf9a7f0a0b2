// impute: fills missing values (NaN in numeric columns, "" in categorical
// ones) with a constant learned from the training rows.
#include <algorithm>
#include <cmath>
#include <map>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

// numpy.median: the middle value, or the mean of the two middle values.
double Median(std::vector<double> v) {
  std::sort(v.begin(), v.end());
  size_t n = v.size();
  return n % 2 == 1 ? v[n / 2] : (v[n / 2 - 1] + v[n / 2]) / 2.0;
}

// The most frequent value; among ties the smallest (as scikit-learn).
template <typename T>
T Mode(const std::vector<T>& v) {
  std::map<T, size_t> counts;
  for (const T& x : v) ++counts[x];
  auto best = counts.begin();
  for (auto it = counts.begin(); it != counts.end(); ++it) {
    if (it->second > best->second) best = it;
  }
  return best->first;
}

class Impute : public TransformBase {
 public:
  Impute() : TransformBase("impute") {}

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, Need()));
    std::vector<std::pair<std::string, json>> fill;
    for (const std::string& name : names) {
      const FrameColumn& c = train.columns[static_cast<size_t>(train.Find(name))];
      UNSEEN_ASSIGN_OR_RETURN(json value, Learn(c));
      fill.emplace_back(name, std::move(value));
    }
    fill_ = std::move(fill);
    MarkFitted();
    return Status::OK();
  }

  Result<Frame> Apply(const Frame& in) const override {
    UNSEEN_RETURN_IF_ERROR(CheckFitted());
    Frame out = in;
    for (const auto& [name, value] : fill_) {
      ColumnNeed need = value.is_number() ? ColumnNeed::kNumeric : ColumnNeed::kCategorical;
      UNSEEN_ASSIGN_OR_RETURN(size_t index, FindColumn(kind_, in, name, need));
      FrameColumn& c = out.columns[index];
      if (c.numeric) {
        double v = value.get<double>();
        for (double& x : c.num) x = std::isnan(x) ? v : x;
      } else {
        std::string v = value.get<std::string>();
        for (std::string& x : c.cat) x = x.empty() ? v : x;
      }
    }
    return out;
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"strategy", "fill", "columns"}));
    UNSEEN_ASSIGN_OR_RETURN(
        strategy_, r.Choice("strategy", {"mean", "median", "most_frequent", "constant"}, "mean"));
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    fill_param_ = json();
    if (r.Has("fill")) {
      if (strategy_ != "constant")
        return r.Error("fill", "is only used with strategy \"constant\"");
      const json& f = r.Get("fill");
      if (!f.is_number() && !f.is_string()) {
        return r.Error("fill", "must be a number or a string, got " + f.dump());
      }
      if (f.is_string() && f.get<std::string>().empty()) {
        return r.Error("fill", "must not be the empty string (that marks a missing value)");
      }
      fill_param_ = f;
    }
    return Status::OK();
  }

  json SaveState() const override {
    json columns = json::array();
    json fill = json::object();
    for (const auto& [name, value] : fill_) {
      columns.push_back(name);
      fill[name] = value;
    }
    return {{"columns", columns}, {"fill", fill}};
  }

  Status LoadState(const json& state) override {
    std::vector<std::pair<std::string, json>> fill;
    for (const json& name : state.at("columns")) {
      const json& v = state.at("fill").at(name.get<std::string>());
      if (!v.is_number() && !v.is_string())
        return Invalid("fill values must be numbers or strings");
      fill.emplace_back(name.get<std::string>(), v);
    }
    fill_ = std::move(fill);
    return Status::OK();
  }

 private:
  // mean/median act on numeric columns; a constant fill given as a number
  // (string) on numeric (categorical) ones; otherwise on every column.
  ColumnNeed Need() const {
    if (strategy_ == "mean" || strategy_ == "median") return ColumnNeed::kNumeric;
    if (strategy_ == "constant" && fill_param_.is_number()) return ColumnNeed::kNumeric;
    if (strategy_ == "constant" && fill_param_.is_string()) return ColumnNeed::kCategorical;
    return ColumnNeed::kAny;
  }

  Result<json> Learn(const FrameColumn& c) const {
    if (strategy_ == "constant") {
      if (!fill_param_.is_null()) return fill_param_;
      return c.numeric ? json(0.0) : json("missing");
    }
    if (c.numeric) {
      std::vector<double> seen;
      for (double x : c.num) {
        if (!std::isnan(x)) seen.push_back(x);
      }
      if (seen.empty()) return NoValues(c.name);
      if (strategy_ == "mean") return json(ColumnMoments(c.num).mean);
      if (strategy_ == "median") return json(Median(std::move(seen)));
      return json(Mode(seen));
    }
    std::vector<std::string> seen;
    for (const std::string& x : c.cat) {
      if (!x.empty()) seen.push_back(x);
    }
    if (seen.empty()) return NoValues(c.name);
    return json(Mode(seen));
  }

  Status NoValues(const std::string& name) const {
    return Invalid("column '" + name + "' has no values in the training rows to learn a " +
                   strategy_ + " from; use strategy \"constant\" or drop the column");
  }

  std::string strategy_ = "mean";
  json fill_param_;
  std::vector<std::string> requested_;
  std::vector<std::pair<std::string, json>> fill_;  // column -> fill value, in frame order
};

}  // namespace

std::unique_ptr<TransformBase> NewImpute() { return std::make_unique<Impute>(); }

}  // namespace unseen::internal
