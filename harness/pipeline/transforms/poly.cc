// poly: the monomials of the numeric columns up to `degree`, in
// scikit-learn PolynomialFeatures order (by degree, then lexicographic in
// the column order), named "a", "a^2", "a*b", "a^2*b". The block replaces
// its columns, standing where the first of them stood.
#include <functional>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class Poly : public TransformBase {
 public:
  Poly() : TransformBase("poly") {}

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(columns_,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kNumeric));
    MarkFitted();
    return Status::OK();
  }

  Result<Frame> Apply(const Frame& in) const override {
    UNSEEN_RETURN_IF_ERROR(CheckFitted());
    std::vector<size_t> at;
    for (const std::string& name : columns_) {
      UNSEEN_ASSIGN_OR_RETURN(size_t index, FindColumn(kind_, in, name, ColumnNeed::kNumeric));
      at.push_back(index);
    }
    std::vector<FrameColumn> block;
    for (const std::vector<size_t>& term : Terms(columns_.size())) {
      FrameColumn c{TermName(term), true, std::vector<double>(in.rows(), 1.0), {}};
      for (size_t f : term) {
        const std::vector<double>& x = in.columns[at[f]].num;
        for (size_t r = 0; r < x.size(); ++r) c.num[r] *= x[r];  // NaN propagates
      }
      block.push_back(std::move(c));
    }
    Frame out = ReplaceColumns(in, at, std::move(block));
    UNSEEN_RETURN_IF_ERROR(CheckUniqueNames(kind_, out));
    return out;
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"degree", "interaction_only", "bias", "columns"}));
    UNSEEN_ASSIGN_OR_RETURN(degree_, r.Int("degree", 2, 2, 3));
    UNSEEN_ASSIGN_OR_RETURN(interaction_only_, r.Bool("interaction_only", false));
    UNSEEN_ASSIGN_OR_RETURN(bias_, r.Bool("bias", false));
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }

  json SaveState() const override {
    json names = json::array();
    for (const std::vector<size_t>& term : Terms(columns_.size())) names.push_back(TermName(term));
    return {{"columns", columns_}, {"features", names}};
  }

  Status LoadState(const json& state) override {
    columns_ = state.at("columns").get<std::vector<std::string>>();
    return Status::OK();
  }

 private:
  // Index tuples (non-decreasing; strictly increasing if interaction_only)
  // of every monomial, the empty tuple first when bias is on.
  std::vector<std::vector<size_t>> Terms(size_t n) const {
    std::vector<std::vector<size_t>> terms;
    if (bias_) terms.emplace_back();
    std::vector<size_t> cur;
    std::function<void(size_t, size_t)> grow = [&](size_t from, size_t left) {
      if (left == 0) {
        terms.push_back(cur);
        return;
      }
      for (size_t i = from; i < n; ++i) {
        cur.push_back(i);
        grow(interaction_only_ ? i + 1 : i, left - 1);
        cur.pop_back();
      }
    };
    for (int64_t d = 1; d <= degree_; ++d) grow(0, static_cast<size_t>(d));
    return terms;
  }

  std::string TermName(const std::vector<size_t>& term) const {
    if (term.empty()) return "1";
    std::string name;
    for (size_t i = 0; i < term.size();) {
      size_t j = i;
      while (j < term.size() && term[j] == term[i]) ++j;
      if (!name.empty()) name += "*";
      name += columns_[term[i]];
      if (j - i > 1) name += "^" + std::to_string(j - i);
      i = j;
    }
    return name;
  }

  int64_t degree_ = 2;
  bool interaction_only_ = false;
  bool bias_ = false;
  std::vector<std::string> requested_;
  std::vector<std::string> columns_;  // fitted: the numeric columns acted on
};

}  // namespace

std::unique_ptr<TransformBase> NewPoly() { return std::make_unique<Poly>(); }

}  // namespace unseen::internal
