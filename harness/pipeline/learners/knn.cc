// `knn`: k nearest neighbours by Euclidean distance, brute force over the
// stored training rows (which FittedParams carries, column by column).
//
// Neighbours are the k training rows with the smallest squared distance,
// ties broken by the smaller training row number. Weights: "uniform" (each
// neighbour counts 1) or "distance" (1/d; when some neighbours are at
// distance 0 they count 1 and the others 0, as scikit-learn does).
// Classification: class shares of the weighted votes are the probabilities
// and the prediction is the largest share, ties to the smaller class index.
// Regression: the weighted mean of the neighbours' targets.
#include <algorithm>
#include <cmath>
#include <nlohmann/json.hpp>
#include <utility>
#include <vector>

#include "harness/pipeline/learners/common.h"

namespace unseen::internal {
namespace {

using nlohmann::json;

class Knn : public LearnerBase {
 public:
  Knn() : LearnerBase("knn", true, true) {}

  Status SetParams(const json& params) override {
    ParamReader reader(kind(), params);
    int64_t k = 5;
    std::string weights = "uniform";
    UNSEEN_RETURN_IF_ERROR(reader.Integer("k", 1, 1000000000, &k));
    UNSEEN_RETURN_IF_ERROR(reader.Choice("weights", {"uniform", "distance"}, &weights));
    UNSEEN_RETURN_IF_ERROR(reader.Finish());
    k_ = k;
    distance_weights_ = weights == "distance";
    return Status::OK();
  }

  json Params() const override {
    return json{{"k", k_}, {"weights", distance_weights_ ? "distance" : "uniform"}};
  }

 protected:
  Status FitImpl(const Eigen::MatrixXd& X, const Eigen::VectorXd& y) override {
    UNSEEN_RETURN_IF_ERROR(CheckK(X.rows()));
    X_ = X;
    y_ = y;
    return Status::OK();
  }

  Result<Eigen::VectorXd> PredictImpl(const Eigen::MatrixXd& X) const override {
    Eigen::VectorXd out(X.rows());
    if (task() == LearnTask::kClassification) {
      const Eigen::MatrixXd votes = Votes(X);
      for (Eigen::Index i = 0; i < X.rows(); ++i) {
        out[i] = static_cast<double>(ArgMax(votes.row(i).transpose()));
      }
      return out;
    }
    std::vector<std::pair<double, Eigen::Index>> nearest;
    Eigen::VectorXd weight;
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      Neighbours(X.row(i), &nearest, &weight);
      double sum = 0;
      for (size_t r = 0; r < nearest.size(); ++r) {
        sum += weight[static_cast<Eigen::Index>(r)] * y_[nearest[r].second];
      }
      out[i] = sum / weight.sum();
    }
    return out;
  }

  Result<Eigen::MatrixXd> ProbaImpl(const Eigen::MatrixXd& X) const override {
    Eigen::MatrixXd votes = Votes(X);
    for (Eigen::Index i = 0; i < votes.rows(); ++i) votes.row(i) /= votes.row(i).sum();
    return votes;
  }

  json Body() const override {
    return json{
        {"rows", X_.rows()}, {"training", ByNameRows(X_, features())}, {"target", ToArray(y_)}};
  }

  Status LoadBody(const json& fitted) override {
    UNSEEN_ASSIGN_OR_RETURN(int64_t rows, GetInteger(kind(), fitted, "rows"));
    if (rows < 1) return Invalid("fitted params: 'rows' must be positive");
    UNSEEN_RETURN_IF_ERROR(CheckK(rows));
    UNSEEN_ASSIGN_OR_RETURN(X_, GetByNameRows(kind(), fitted, "training", features(), rows));
    UNSEEN_ASSIGN_OR_RETURN(y_, GetArray(kind(), fitted, "target", rows));
    if (task() == LearnTask::kClassification) {
      for (Eigen::Index i = 0; i < y_.size(); ++i) {
        if (y_[i] != std::floor(y_[i]) || y_[i] < 0 || y_[i] >= classes()) {
          return Invalid("fitted params: 'target' holds a value that is not a class index");
        }
      }
    }
    return Status::OK();
  }

 private:
  Status CheckK(int64_t rows) const {
    if (k_ > rows) {
      return Invalid("parameter 'k' is " + std::to_string(k_) + " but there are only " +
                     std::to_string(rows) + " training rows");
    }
    return Status::OK();
  }

  // The k nearest training rows of `query` as (squared distance, row),
  // nearest first, and their vote weights.
  void Neighbours(const Eigen::Ref<const Eigen::RowVectorXd>& query,
                  std::vector<std::pair<double, Eigen::Index>>* nearest,
                  Eigen::VectorXd* weight) const {
    const Eigen::VectorXd d2 = (X_.rowwise() - query).rowwise().squaredNorm();
    nearest->resize(static_cast<size_t>(d2.size()));
    for (Eigen::Index r = 0; r < d2.size(); ++r) (*nearest)[static_cast<size_t>(r)] = {d2[r], r};
    const auto kth = nearest->begin() + static_cast<std::ptrdiff_t>(k_);
    // Pairs compare by distance, then row number: a total order, so the
    // selection does not depend on the algorithm's tie handling.
    std::nth_element(nearest->begin(), kth - 1, nearest->end());
    nearest->resize(static_cast<size_t>(k_));
    std::sort(nearest->begin(), nearest->end());
    weight->setOnes(k_);
    if (!distance_weights_) return;
    if ((*nearest)[0].first == 0) {
      for (Eigen::Index r = 0; r < k_; ++r) {
        (*weight)[r] = (*nearest)[static_cast<size_t>(r)].first == 0 ? 1.0 : 0.0;
      }
      return;
    }
    for (Eigen::Index r = 0; r < k_; ++r) {
      (*weight)[r] = 1.0 / std::sqrt((*nearest)[static_cast<size_t>(r)].first);
    }
  }

  // n x classes weighted votes.
  Eigen::MatrixXd Votes(const Eigen::MatrixXd& X) const {
    Eigen::MatrixXd votes = Eigen::MatrixXd::Zero(X.rows(), classes());
    std::vector<std::pair<double, Eigen::Index>> nearest;
    Eigen::VectorXd weight;
    for (Eigen::Index i = 0; i < X.rows(); ++i) {
      Neighbours(X.row(i), &nearest, &weight);
      for (size_t r = 0; r < nearest.size(); ++r) {
        votes(i, static_cast<Eigen::Index>(y_[nearest[r].second])) +=
            weight[static_cast<Eigen::Index>(r)];
      }
    }
    return votes;
  }

  int64_t k_ = 5;
  bool distance_weights_ = false;
  Eigen::MatrixXd X_;
  Eigen::VectorXd y_;
};

}  // namespace

std::unique_ptr<LearnerBase> NewKnn() { return std::make_unique<Knn>(); }

}  // namespace unseen::internal
