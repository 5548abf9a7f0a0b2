// standardize and minmax: per-column affine maps x -> (x - offset) / scale
// whose constants come from the training rows. Missing values are ignored
// when fitting and stay missing.
#include <algorithm>
#include <cmath>
#include <limits>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

struct Affine {
  std::string name;
  double offset = 0;
  double scale = 1;
};

class AffineTransform : public TransformBase {
 public:
  using TransformBase::TransformBase;

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kNumeric));
    std::vector<Affine> maps;
    for (const std::string& name : names) {
      const FrameColumn& c = train.columns[static_cast<size_t>(train.Find(name))];
      UNSEEN_ASSIGN_OR_RETURN(Affine a, Learn(c));
      maps.push_back(a);
    }
    maps_ = std::move(maps);
    MarkFitted();
    return Status::OK();
  }

  Result<Frame> Apply(const Frame& in) const override {
    UNSEEN_RETURN_IF_ERROR(CheckFitted());
    Frame out = in;
    for (const Affine& a : maps_) {
      UNSEEN_ASSIGN_OR_RETURN(size_t index, FindColumn(kind_, in, a.name, ColumnNeed::kNumeric));
      for (double& x : out.columns[index].num) x = (x - a.offset) / a.scale;
    }
    return out;
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"columns"}));
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }

  virtual Result<Affine> Learn(const FrameColumn& c) const = 0;
  virtual const char* OffsetKey() const = 0;
  virtual const char* ScaleKey() const = 0;

  json SaveState() const override {
    json columns = json::array(), offset = json::object(), scale = json::object();
    for (const Affine& a : maps_) {
      columns.push_back(a.name);
      offset[a.name] = a.offset;
      scale[a.name] = a.scale;
    }
    return {{"columns", columns}, {OffsetKey(), offset}, {ScaleKey(), scale}};
  }

  Status LoadState(const json& state) override {
    std::vector<Affine> maps;
    for (const json& name : state.at("columns")) {
      const std::string& n = name.get_ref<const std::string&>();
      Affine a{n, state.at(OffsetKey()).at(n).get<double>(),
               state.at(ScaleKey()).at(n).get<double>()};
      if (!(a.scale > 0) || !std::isfinite(a.offset)) {
        return Invalid("column '" + a.name + "' has a non-positive scale or non-finite offset");
      }
      maps.push_back(a);
    }
    maps_ = std::move(maps);
    return Status::OK();
  }

  Status NoValues(const std::string& name) const {
    return Invalid("column '" + name + "' has no values in the training rows; impute it first");
  }

  std::vector<std::string> requested_;
  std::vector<Affine> maps_;  // in frame order
};

// (x - mean) / std with the population std (ddof = 0), as scikit-learn's
// StandardScaler; a constant column keeps scale 1 and so maps to 0.
class Standardize : public AffineTransform {
 public:
  Standardize() : AffineTransform("standardize") {}

 protected:
  Result<Affine> Learn(const FrameColumn& c) const override {
    Moments m = ColumnMoments(c.num);
    if (m.count == 0) return NoValues(c.name);
    // scikit-learn's _is_constant_feature: a variance this small is rounding
    // noise of a constant column, not spread.
    constexpr double kEps = std::numeric_limits<double>::epsilon();
    double n = static_cast<double>(m.count);
    double bound = n * kEps * m.var + (n * m.mean * kEps) * (n * m.mean * kEps);
    double scale = m.var <= bound ? 1.0 : std::sqrt(m.var);
    return Affine{c.name, m.mean, scale};
  }
  const char* OffsetKey() const override { return "mean"; }
  const char* ScaleKey() const override { return "scale"; }
};

// (x - min) / (max - min) over the training rows, as scikit-learn's
// MinMaxScaler (no clipping: new rows may fall outside [0, 1]); a constant
// column keeps range 1 and so maps to 0.
class MinMax : public AffineTransform {
 public:
  MinMax() : AffineTransform("minmax") {}

 protected:
  Result<Affine> Learn(const FrameColumn& c) const override {
    double lo = std::numeric_limits<double>::infinity();
    double hi = -lo;
    for (double x : c.num) {
      if (std::isnan(x)) continue;
      lo = std::min(lo, x);
      hi = std::max(hi, x);
    }
    if (lo > hi) return NoValues(c.name);
    double range = hi - lo;
    // scikit-learn's _handle_zeros_in_scale: ranges below 10 eps count as 0.
    if (range < 10 * std::numeric_limits<double>::epsilon()) range = 1.0;
    return Affine{c.name, lo, range};
  }
  const char* OffsetKey() const override { return "min"; }
  const char* ScaleKey() const override { return "range"; }
};

}  // namespace

std::unique_ptr<TransformBase> NewStandardize() { return std::make_unique<Standardize>(); }
std::unique_ptr<TransformBase> NewMinMax() { return std::make_unique<MinMax>(); }

}  // namespace unseen::internal
