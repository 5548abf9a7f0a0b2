// ledger_overhead_bench: the C++ side of bench/ledger_overhead.sh.
//
//   ledger_overhead_bench generate OUT ROWS FEATURES classification|regression
//     writes a numeric CSV to OUT: columns f0..f{FEATURES-1} and a target y, drawn from
//     unseen::Random (seed 7): a 0/1 label that follows a logistic model of the features, or a
//     linear function of them plus noise.
//   ledger_overhead_bench fit CSV SPEC classification|regression
//     what a fit costs without the ledger: reads CSV into a frame with the tool's own reader and
//     number parser, fits the spec's single candidate, and serialises the fitted pipeline.
//     Prints "seconds=<time> rows=<n>" (bench/ledger_overhead.sh times the whole process).
// Exit 0 on success, 2 on bad usage or input, 4 on a failed fit.
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <string>
#include <vector>

#include "harness/data/csv.h"
#include "harness/pipeline/pipeline.h"
#include "harness/pipeline/spec.h"
#include "harness/sampling/random.h"

namespace {

int Generate(const std::string& out, long rows, int features, bool classification) {
  std::FILE* f = std::fopen(out.c_str(), "w");
  if (!f) {
    std::fprintf(stderr, "ledger_overhead_bench: cannot write %s\n", out.c_str());
    return 2;
  }
  for (int j = 0; j < features; ++j) std::fprintf(f, "f%d,", j);
  std::fprintf(f, "y\n");
  unseen::Random random(7);
  for (long i = 0; i < rows; ++i) {
    double s = -0.3;
    for (int j = 0; j < features; ++j) {
      const double u = 2 * random.NextDouble() - 1;
      s += (j % 2 ? -0.4 : 0.4) * u;
      std::fprintf(f, "%.5f,", u + (j % 5 == 0 ? 10.0 : 0.0));
    }
    const double v = random.NextDouble();
    if (classification) {
      std::fprintf(f, "%d\n", v < 1 / (1 + std::exp(-s)) ? 1 : 0);
    } else {
      std::fprintf(f, "%.5f\n", 5 * s + v - 0.5);
    }
  }
  return std::fclose(f) == 0 ? 0 : 2;
}

// The CSV as a frame of its feature columns (every column but `y`) and the 0/1 target.
unseen::Status ReadFrame(const std::string& path, unseen::Frame* frame, Eigen::VectorXd* y) {
  UNSEEN_ASSIGN_OR_RETURN(auto csv, unseen::CsvFile::Open(path, unseen::CsvOptions{}));
  const std::vector<std::string>& header = csv->header();
  size_t target = header.size();
  for (size_t c = 0; c < header.size(); ++c) {
    if (header[c] == "y") {
      target = c;
    } else {
      frame->columns.push_back(unseen::FrameColumn{header[c], true, {}, {}});
    }
  }
  if (target == header.size()) return unseen::Status::InvalidArgument(path + ": no column y");
  std::vector<double> labels;
  // Room for the rows, as the tool's own loader (harness/ledger/admit.cc) makes it.
  const size_t expected_rows = csv->EstimateRecords();
  frame->Reserve(expected_rows);
  labels.reserve(expected_rows);
  UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const unseen::CsvRecord& r) -> unseen::Status {
    size_t k = 0;
    for (size_t c = 0; c < r.fields->size(); ++c) {
      double v = NAN;
      if (!unseen::ParseNumber((*r.fields)[c], &v)) {
        return unseen::Status::InvalidArgument(csv->Location(r.offset) + ": expected a number");
      }
      if (c == target) {
        labels.push_back(v);
      } else {
        frame->columns[k++].num.push_back(v);
      }
    }
    return unseen::Status::OK();
  }));
  *y = Eigen::Map<Eigen::VectorXd>(labels.data(), static_cast<Eigen::Index>(labels.size()));
  return unseen::Status::OK();
}

int Fit(const std::string& csv, const std::string& spec_path, bool classification) {
  auto spec = unseen::ParseSpecFile(spec_path);
  if (!spec.ok()) {
    std::fprintf(stderr, "ledger_overhead_bench: %s\n", spec.status().ToString().c_str());
    return 2;
  }
  const std::vector<unseen::Candidate> cands = unseen::ExpandGrid(*spec);
  if (cands.size() != 1) {
    std::fprintf(stderr, "ledger_overhead_bench: expected a spec with one candidate\n");
    return 2;
  }
  const auto start = std::chrono::steady_clock::now();
  unseen::Frame frame;
  Eigen::VectorXd y;
  unseen::Status read = ReadFrame(csv, &frame, &y);
  if (!read.ok()) {
    std::fprintf(stderr, "ledger_overhead_bench: %s\n", read.ToString().c_str());
    return 2;
  }
  auto fitted = unseen::FitPipeline(
      cands[0], frame, y,
      classification ? unseen::LearnTask::kClassification : unseen::LearnTask::kRegression,
      classification ? 2 : 0);
  if (!fitted.ok()) {
    std::fprintf(stderr, "ledger_overhead_bench: %s\n", fitted.status().ToString().c_str());
    return 4;
  }
  const std::string text = fitted->ToJson().dump();
  const double seconds =
      std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
  if (text.empty()) return 4;
  std::printf("seconds=%.4f rows=%zu\n", seconds, frame.rows());
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> a(argv + 1, argv + argc);
  const bool task_ok = a.size() == 5 && (a[4] == "classification" || a[4] == "regression");
  if (a.size() == 5 && a[0] == "generate" && task_ok) {
    return Generate(a[1], std::atol(a[2].c_str()), std::atoi(a[3].c_str()),
                    a[4] == "classification");
  }
  if (a.size() == 4 && a[0] == "fit" && (a[3] == "classification" || a[3] == "regression")) {
    return Fit(a[1], a[2], a[3] == "classification");
  }
  std::fprintf(stderr,
               "usage: ledger_overhead_bench generate OUT ROWS FEATURES classification|regression\n"
               "       ledger_overhead_bench fit CSV SPEC classification|regression\n");
  return 2;
}
