// pca: projects the numeric columns on the principal axes of the training
// rows (centred, SVD of the centred data), giving columns pc1..pcK that
// stand where the first input column stood. Sign convention: each axis is
// flipped so that its largest absolute loading (first one on ties) is
// positive; scikit-learn flips by the scores instead, so the two agree only
// up to the sign of each component.
#include <algorithm>
#include <cmath>

#include "harness/pipeline/transforms/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class Pca : public TransformBase {
 public:
  Pca() : TransformBase("pca") {}

  Status Fit(const Frame& train, const Eigen::VectorXd& /*target*/) override {
    fitted_ = false;
    UNSEEN_ASSIGN_OR_RETURN(std::vector<std::string> names,
                            ResolveColumns(kind_, train, requested_, ColumnNeed::kNumeric));
    if (names.empty()) return Invalid("there are no numeric columns to project");
    UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd x, Matrix(train, names));
    if (x.rows() < 2) return Invalid("needs at least 2 training rows");
    Eigen::RowVectorXd mean = x.colwise().mean();
    x.rowwise() -= mean;
    Eigen::BDCSVD<Eigen::MatrixXd> svd(x, Eigen::ComputeThinV);
    const Eigen::VectorXd& s = svd.singularValues();  // descending
    Eigen::Index rank = s.size();                     // min(rows, columns)
    Eigen::VectorXd var = s.array().square() / static_cast<double>(x.rows() - 1);
    double total = var.sum();
    Eigen::VectorXd ratio = total > 0 ? Eigen::VectorXd(var / total) : Eigen::VectorXd::Zero(rank);
    UNSEEN_ASSIGN_OR_RETURN(Eigen::Index k, Count(ratio));
    Eigen::MatrixXd axes = svd.matrixV().leftCols(k).transpose();  // k x columns
    for (Eigen::Index i = 0; i < k; ++i) {
      Eigen::Index big = 0;
      for (Eigen::Index j = 1; j < axes.cols(); ++j) {
        if (std::abs(axes(i, j)) > std::abs(axes(i, big))) big = j;
      }
      if (axes(i, big) < 0) axes.row(i) *= -1.0;
    }
    columns_ = names;
    mean_ = mean.transpose();
    axes_ = axes;
    variance_ = var.head(k);
    ratio_ = ratio.head(k);
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
    UNSEEN_ASSIGN_OR_RETURN(Eigen::MatrixXd x, Matrix(in, columns_));
    x.rowwise() -= mean_.transpose();
    Eigen::MatrixXd scores = x * axes_.transpose();
    std::vector<FrameColumn> block;
    for (Eigen::Index i = 0; i < scores.cols(); ++i) {
      FrameColumn c{"pc" + std::to_string(i + 1), true, {}, {}};
      c.num.assign(scores.col(i).data(), scores.col(i).data() + scores.rows());
      block.push_back(std::move(c));
    }
    Frame out = ReplaceColumns(in, at, std::move(block));
    UNSEEN_RETURN_IF_ERROR(CheckUniqueNames(kind_, out));
    return out;
  }

 protected:
  Status ConfigureParams(const TransformParams& r) override {
    UNSEEN_RETURN_IF_ERROR(r.CheckKnown({"components", "variance", "columns"}));
    if (r.Has("components") && r.Has("variance")) {
      return r.Error("variance", "cannot be given together with 'components'; choose one");
    }
    UNSEEN_ASSIGN_OR_RETURN(components_, r.Int("components", 0, 1, 1 << 20));
    UNSEEN_ASSIGN_OR_RETURN(variance_kept_, r.Number("variance", 0));
    if (r.Has("variance") && !(variance_kept_ > 0 && variance_kept_ <= 1)) {
      return r.Error("variance", "must be a fraction in (0, 1], got " + r.Get("variance").dump());
    }
    UNSEEN_ASSIGN_OR_RETURN(requested_, r.Columns());
    return Status::OK();
  }

  json SaveState() const override {
    json mean = json::object(), axes = json::array();
    for (size_t j = 0; j < columns_.size(); ++j)
      mean[columns_[j]] = mean_(static_cast<Eigen::Index>(j));
    for (Eigen::Index i = 0; i < axes_.rows(); ++i) {
      json row = json::array();
      for (Eigen::Index j = 0; j < axes_.cols(); ++j) row.push_back(axes_(i, j));
      axes.push_back(row);
    }
    return {{"columns", columns_},
            {"mean", mean},
            {"components", axes},
            {"explained_variance",
             std::vector<double>(variance_.data(), variance_.data() + variance_.size())},
            {"explained_variance_ratio",
             std::vector<double>(ratio_.data(), ratio_.data() + ratio_.size())}};
  }

  Status LoadState(const json& state) override {
    std::vector<std::string> columns = state.at("columns").get<std::vector<std::string>>();
    auto p = static_cast<Eigen::Index>(columns.size());
    Eigen::VectorXd mean(p);
    for (Eigen::Index j = 0; j < p; ++j)
      mean(j) = state.at("mean").at(columns[static_cast<size_t>(j)]).get<double>();
    const json& rows = state.at("components");
    Eigen::MatrixXd axes(static_cast<Eigen::Index>(rows.size()), p);
    for (Eigen::Index i = 0; i < axes.rows(); ++i) {
      std::vector<double> row = rows.at(static_cast<size_t>(i)).get<std::vector<double>>();
      if (static_cast<Eigen::Index>(row.size()) != p) {
        return Invalid("component " + std::to_string(i + 1) + " has " + std::to_string(row.size()) +
                       " loadings; expected " + std::to_string(p));
      }
      for (Eigen::Index j = 0; j < p; ++j) axes(i, j) = row[static_cast<size_t>(j)];
    }
    std::vector<double> var = state.at("explained_variance").get<std::vector<double>>();
    std::vector<double> ratio = state.at("explained_variance_ratio").get<std::vector<double>>();
    columns_ = std::move(columns);
    mean_ = mean;
    axes_ = axes;
    variance_ = Eigen::Map<Eigen::VectorXd>(var.data(), static_cast<Eigen::Index>(var.size()));
    ratio_ = Eigen::Map<Eigen::VectorXd>(ratio.data(), static_cast<Eigen::Index>(ratio.size()));
    return Status::OK();
  }

 private:
  // The named numeric columns as a rows x columns matrix; InvalidArgument
  // naming a column with a missing value.
  Result<Eigen::MatrixXd> Matrix(const Frame& in, const std::vector<std::string>& names) const {
    Eigen::MatrixXd m(static_cast<Eigen::Index>(in.rows()),
                      static_cast<Eigen::Index>(names.size()));
    for (size_t j = 0; j < names.size(); ++j) {
      const std::vector<double>& x = in.columns[static_cast<size_t>(in.Find(names[j]))].num;
      for (size_t r = 0; r < x.size(); ++r) {
        if (std::isnan(x[r])) {
          return Invalid("column '" + names[j] + "' has missing values; impute it before pca");
        }
        m(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(j)) = x[r];
      }
    }
    return m;
  }

  // How many components to keep: `components`, or the fewest whose ratios
  // sum to more than `variance` (as scikit-learn), or all of them.
  Result<Eigen::Index> Count(const Eigen::VectorXd& ratio) const {
    Eigen::Index rank = ratio.size();
    if (components_ > 0) {
      if (components_ > rank) {
        return Invalid("parameter 'components' is " + std::to_string(components_) +
                       " but the training data allow at most " + std::to_string(rank) +
                       " (the smaller of rows and columns)");
      }
      return static_cast<Eigen::Index>(components_);
    }
    if (variance_kept_ > 0 && variance_kept_ < 1) {
      double sum = 0;
      for (Eigen::Index i = 0; i < rank; ++i) {
        sum += ratio(i);
        if (sum > variance_kept_) return i + 1;
      }
    }
    return rank;
  }

  int64_t components_ = 0;    // 0: not given
  double variance_kept_ = 0;  // 0: not given
  std::vector<std::string> requested_;
  std::vector<std::string> columns_;
  Eigen::VectorXd mean_;
  Eigen::MatrixXd axes_;  // k x columns, one principal axis per row
  Eigen::VectorXd variance_;
  Eigen::VectorXd ratio_;
};

}  // namespace

std::unique_ptr<TransformBase> NewPca() { return std::make_unique<Pca>(); }

}  // namespace unseen::internal
