// Frame: the typed table that pipelines work on — named numeric and
// categorical columns of equal length, held in memory. Plain value;
// thread-compatible. Internal to harness/ (uses Eigen types).
#ifndef UNSEEN_HARNESS_PIPELINE_FRAME_H_
#define UNSEEN_HARNESS_PIPELINE_FRAME_H_

#include <Eigen/Dense>
#include <cmath>
#include <string>
#include <vector>

#include "storage/status.h"

namespace unseen {

struct FrameColumn {
  std::string name;
  bool numeric = true;
  std::vector<double> num;       // numeric columns: NaN marks a missing value
  std::vector<std::string> cat;  // categorical columns: "" marks a missing value
  size_t size() const { return numeric ? num.size() : cat.size(); }
};

struct Frame {
  std::vector<FrameColumn> columns;

  size_t rows() const { return columns.empty() ? 0 : columns[0].size(); }
  size_t cols() const { return columns.size(); }
  // Room for `rows` rows in every column, so that filling them row by row copies nothing.
  void Reserve(size_t rows) {
    for (FrameColumn& c : columns) {
      if (c.numeric) {
        c.num.reserve(rows);
      } else {
        c.cat.reserve(rows);
      }
    }
  }
  // Index of the column named `name`, or -1.
  int Find(const std::string& name) const {
    for (size_t i = 0; i < columns.size(); ++i) {
      if (columns[i].name == name) return static_cast<int>(i);
    }
    return -1;
  }
  // The rows listed in `rows` (in that order), all columns.
  Frame Select(const std::vector<size_t>& rows) const {
    Frame out;
    for (const FrameColumn& c : columns) {
      FrameColumn d{c.name, c.numeric, {}, {}};
      if (c.numeric) {
        d.num.reserve(rows.size());
        for (size_t r : rows) d.num.push_back(c.num[r]);
      } else {
        d.cat.reserve(rows.size());
        for (size_t r : rows) d.cat.push_back(c.cat[r]);
      }
      out.columns.push_back(std::move(d));
    }
    return out;
  }
  // All columns as a dense matrix (rows x cols). InvalidArgument naming the
  // column if one is categorical or holds a missing value (a pipeline needs
  // `onehot` and `impute` before its learner then).
  Result<Eigen::MatrixXd> ToMatrix() const {
    Eigen::MatrixXd m(static_cast<Eigen::Index>(rows()), static_cast<Eigen::Index>(cols()));
    for (size_t c = 0; c < columns.size(); ++c) {
      const FrameColumn& col = columns[c];
      if (!col.numeric) {
        return Status::InvalidArgument(
            "column '" + col.name +
            "' is categorical; expected an onehot transform before the learner");
      }
      for (size_t r = 0; r < col.num.size(); ++r) {
        if (std::isnan(col.num[r])) {
          return Status::InvalidArgument(
              "column '" + col.name +
              "' has missing values; expected an impute transform before the learner");
        }
        m(static_cast<Eigen::Index>(r), static_cast<Eigen::Index>(c)) = col.num[r];
      }
    }
    return m;
  }
  std::vector<std::string> Names() const {
    std::vector<std::string> n;
    for (const FrameColumn& c : columns) n.push_back(c.name);
    return n;
  }
};

}  // namespace unseen

#endif  // UNSEEN_HARNESS_PIPELINE_FRAME_H_
