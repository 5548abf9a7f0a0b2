#include "harness/evaluate/guard_messages.h"

#include <string>
#include <string_view>

namespace unseen {

namespace {

// The kinds of problem, by a phrase of the pipeline's message (transforms,
// learners, frames, metrics); the first that matches wins.
struct Kind {
  std::string_view phrase;
  std::string_view says;
};
constexpr Kind kKinds[] = {
    {"not seen in the training rows", "holds a category not seen when the model was fitted"},
    {"has no column", "is missing"},
    {"missing or infinite", "holds a missing or non-finite value"},
    {"missing values", "holds a missing value"},
    {"is categorical", "is categorical where the learner needs numbers"},
    {"needs class probabilities", "gives no class probabilities, which the metric needs"},
    {"needs both classes", "cannot be scored by auc: the holdout rows do not hold both classes"},
};

// The column the message names first ("column 'NAME'" or "feature 'NAME'"),
// if it is one of the source's: else empty (a derived column is not named).
std::string ColumnOf(const std::string& message, const SourceInfo& source) {
  size_t at = std::string::npos;
  size_t skip = 0;
  for (std::string_view lead : {"column '", "feature '"}) {
    size_t p = message.find(lead);
    if (p < at) {
      at = p;
      skip = lead.size();
    }
  }
  if (at == std::string::npos) return std::string();
  for (const auto& c : source.columns) {
    if (message.compare(at + skip, c.name.size() + 1, c.name + "'") == 0) return c.name;
  }
  return std::string();
}

}  // namespace

Status ValueFreeError(const Status& error, const SourceInfo& source) {
  const std::string& m = error.message();
  std::string says = "could not be applied to the holdout rows";
  bool column_problem = false;
  for (const Kind& k : kKinds) {
    if (m.find(k.phrase) != std::string::npos) {
      says = std::string(k.says);
      column_problem = k.phrase != "needs class probabilities" && k.phrase != "needs both classes";
      break;
    }
  }
  std::string text;
  if (column_problem) {
    std::string column = ColumnOf(m, source);
    text = "cannot be applied to the holdout: " +
           (column.empty() ? std::string("a column derived by its transforms")
                           : "column '" + column + "'") +
           " " + says;
  } else {
    text = "cannot be applied to the holdout: it " + says;
  }
  text += " (no holdout value or position is shown)";
  if (error.code() == StatusCode::kInternal) return Status::Internal(text);
  return Status::InvalidArgument(text);
}

}  // namespace unseen
