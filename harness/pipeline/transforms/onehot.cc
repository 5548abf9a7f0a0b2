// onehot: each categorical column becomes one 0/1 column per category seen
// in the training rows, named "column=value", in sorted (byte-wise) order,
// standing where the categorical column stood.
#include <algorithm>
#include <set>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

struct Categories {
  std::string name;
  std::vector<std::string> values;  // sorted, distinct, never ""
};

class OneHot : public TransformBase {
 public:
  OneHot() : TransformBase("onehot") {}

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kCategorical));
    std::vector<Categories> cats;
    for (const std::string& name : names) {
      const FrameColumn& c = train.columns[static_cast<size_t>(train.Find(name))];
      std::set<std::string> seen;
      for (const std::string& v : c.cat) {
        if (!v.empty()) seen.insert(v);
      }
      cats.push_back({name, std::vector<std::string>(seen.begin(), seen.end())});
    }
    cats_ = std::move(cats);
    MarkFitted();
    return Status::OK();
  }

  Result<Frame> Apply(const Frame& in) const override {
    UNSEEN_RETURN_IF_ERROR(CheckFitted());
    std::vector<int> which(in.cols(), -1);  // input column -> index into cats_
    for (size_t k = 0; k < cats_.size(); ++k) {
      UNSEEN_ASSIGN_OR_RETURN(size_t index,
                              FindColumn(kind_, in, cats_[k].name, ColumnNeed::kCategorical));
      which[index] = static_cast<int>(k);
    }
    Frame out;
    for (size_t i = 0; i < in.cols(); ++i) {
      if (which[i] < 0) {
        out.columns.push_back(in.columns[i]);
        continue;
      }
      UNSEEN_RETURN_IF_ERROR(Expand(in.columns[i], cats_[static_cast<size_t>(which[i])], &out));
    }
    UNSEEN_RETURN_IF_ERROR(CheckUniqueNames(kind_, out));
    return out;
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"unknown", "columns"}));
    UNSEEN_ASSIGN_OR_RETURN(std::string unknown,
                            r.Choice("unknown", {"ignore", "error"}, "ignore"));
    error_on_unknown_ = unknown == "error";
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }

  json SaveState() const override {
    json columns = json::array(), categories = json::object();
    for (const Categories& c : cats_) {
      columns.push_back(c.name);
      categories[c.name] = c.values;
    }
    return {{"columns", columns}, {"categories", categories}};
  }

  Status LoadState(const json& state) override {
    std::vector<Categories> cats;
    for (const json& name : state.at("columns")) {
      const std::string& n = name.get_ref<const std::string&>();
      Categories c{n, state.at("categories").at(n).get<std::vector<std::string>>()};
      std::set<std::string> check(c.values.begin(), c.values.end());
      if (check.size() != c.values.size() || check.count("") > 0 ||
          !std::equal(check.begin(), check.end(), c.values.begin())) {
        return Invalid("categories of column '" + n + "' must be sorted, distinct, non-empty");
      }
      cats.push_back(std::move(c));
    }
    cats_ = std::move(cats);
    return Status::OK();
  }

 private:
  Status Expand(const FrameColumn& c, const Categories& cats, Frame* out) const {
    size_t first = out->columns.size();
    for (const std::string& v : cats.values) {
      out->columns.push_back({c.name + "=" + v, true, std::vector<double>(c.cat.size(), 0.0), {}});
    }
    for (size_t r = 0; r < c.cat.size(); ++r) {
      const std::string& v = c.cat[r];
      if (v.empty()) continue;  // missing: all zeros
      auto it = std::lower_bound(cats.values.begin(), cats.values.end(), v);
      if (it != cats.values.end() && *it == v) {
        out->columns[first + static_cast<size_t>(it - cats.values.begin())].num[r] = 1.0;
      } else if (error_on_unknown_) {
        return Invalid("column '" + c.name + "' has value '" + v + "' in row " +
                       std::to_string(r + 1) + ", not seen in the training rows; expected one of " +
                       JoinNames(cats.values) + " (or set unknown = \"ignore\")");
      }
    }
    return Status::OK();
  }

  bool error_on_unknown_ = false;
  std::vector<std::string> requested_;
  std::vector<Categories> cats_;  // in training frame order
};

}  // namespace

std::unique_ptr<TransformBase> NewOneHot() { return std::make_unique<OneHot>(); }

}  // namespace unseen::internal
