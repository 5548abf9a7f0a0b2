// learners_bench: the C++ side of bench/learners.sh.
//
//   learners_bench generate DIR ROWS_LINEAR ROWS_LOGISTIC FEATURES
//     writes DIR/{linear,logistic}_{X,y}.f64: raw little-endian binary64,
//     X row-major (numpy's np.fromfile(...).reshape(rows, FEATURES)), drawn
//     from unseen::Random (seed 1 and 2).
//   learners_bench fit DIR linear|logistic REPEATS [L2 TOL]
//     fits our learner REPEATS times on that data and prints
//     "seconds=<best> rows=<n> features=<p>" and writes DIR/ours_KIND.json
//     (FittedParams of the last fit).
// Exit 0 on success, 2 on bad usage or unreadable files, 4 on a failed fit.
#include <Eigen/Dense>
#include <chrono>
#include <cmath>
#include <cstdio>
#include <cstdlib>
#include <fstream>
#include <nlohmann/json.hpp>
#include <string>
#include <vector>

#include "harness/pipeline/learner.h"
#include "harness/sampling/random.h"

namespace {

bool WriteRaw(const std::string& path, const double* data, size_t count) {
  std::ofstream f(path, std::ios::binary | std::ios::trunc);
  f.write(reinterpret_cast<const char*>(data), static_cast<std::streamsize>(count * 8));
  return static_cast<bool>(f);
}

bool ReadRaw(const std::string& path, double* data, size_t count) {
  std::ifstream f(path, std::ios::binary);
  f.read(reinterpret_cast<char*>(data), static_cast<std::streamsize>(count * 8));
  return static_cast<bool>(f) && f.gcount() == static_cast<std::streamsize>(count * 8);
}

// Xt is features x rows (so its storage is X row-major).
void Generate(unseen::Random* random, Eigen::Index n, Eigen::Index p, bool logistic,
              Eigen::MatrixXd* xt, Eigen::VectorXd* y) {
  xt->resize(p, n);
  y->resize(n);
  Eigen::VectorXd beta(p);
  for (Eigen::Index j = 0; j < p; ++j) beta[j] = (j % 2 ? -1.0 : 1.0) * (0.2 + 0.05 * (j % 7));
  for (Eigen::Index i = 0; i < n; ++i) {
    double s = logistic ? -0.5 : 3.0;
    for (Eigen::Index j = 0; j < p; ++j) {
      const double u = 2 * random->NextDouble() - 1;
      // Every fifth feature sits far from zero, so the intercept matters.
      (*xt)(j, i) = u + (j % 5 == 0 ? 10.0 : 0.0);
      s += beta[j] * u;
    }
    const double v = random->NextDouble();
    (*y)[i] = logistic ? (v < 1 / (1 + std::exp(-s)) ? 1 : 0) : s + (v - 0.5);
  }
}

int GenerateAll(const std::string& dir, Eigen::Index n_linear, Eigen::Index n_logistic,
                Eigen::Index p) {
  Eigen::MatrixXd xt;
  Eigen::VectorXd y;
  const struct {
    const char* name;
    Eigen::Index rows;
    uint64_t seed;
  } sets[] = {{"linear", n_linear, 1}, {"logistic", n_logistic, 2}};
  for (const auto& s : sets) {
    unseen::Random random(s.seed);
    Generate(&random, s.rows, p, std::string(s.name) == "logistic", &xt, &y);
    if (!WriteRaw(dir + "/" + s.name + "_X.f64", xt.data(), static_cast<size_t>(xt.size())) ||
        !WriteRaw(dir + "/" + s.name + "_y.f64", y.data(), static_cast<size_t>(y.size()))) {
      std::fprintf(stderr, "learners_bench: cannot write to %s\n", dir.c_str());
      return 2;
    }
    std::ofstream(dir + "/" + s.name + ".shape") << s.rows << " " << p << "\n";
  }
  return 0;
}

int Fit(const std::string& dir, const std::string& kind, int repeats,
        const nlohmann::json& params) {
  Eigen::Index n = 0, p = 0;
  std::ifstream(dir + "/" + kind + ".shape") >> n >> p;
  if (n <= 0 || p <= 0) {
    std::fprintf(stderr, "learners_bench: no %s data in %s (run generate)\n", kind.c_str(),
                 dir.c_str());
    return 2;
  }
  Eigen::MatrixXd xt(p, n);
  Eigen::VectorXd y(n);
  if (!ReadRaw(dir + "/" + kind + "_X.f64", xt.data(), static_cast<size_t>(xt.size())) ||
      !ReadRaw(dir + "/" + kind + "_y.f64", y.data(), static_cast<size_t>(y.size()))) {
    std::fprintf(stderr, "learners_bench: cannot read the %s data\n", kind.c_str());
    return 2;
  }
  const Eigen::MatrixXd X = xt.transpose();
  xt.resize(0, 0);
  std::vector<std::string> names;
  for (Eigen::Index j = 0; j < p; ++j) names.push_back("f" + std::to_string(j));
  const bool logistic = kind == "logistic";
  double best = 1e300;
  nlohmann::json fitted;
  for (int r = 0; r < repeats; ++r) {
    auto made = unseen::MakeLearner(kind, params);
    if (!made.ok()) {
      std::fprintf(stderr, "learners_bench: %s\n", made.status().ToString().c_str());
      return 2;
    }
    const auto start = std::chrono::steady_clock::now();
    unseen::Status s = (*made)->Fit(
        X, y, logistic ? unseen::LearnTask::kClassification : unseen::LearnTask::kRegression,
        logistic ? 2 : 0, names);
    const double seconds =
        std::chrono::duration<double>(std::chrono::steady_clock::now() - start).count();
    if (!s.ok()) {
      std::fprintf(stderr, "learners_bench: fit failed: %s\n", s.ToString().c_str());
      return 4;
    }
    best = std::min(best, seconds);
    fitted = (*made)->FittedParams();
  }
  std::ofstream(dir + "/ours_" + kind + ".json") << fitted.dump() << "\n";
  std::printf("seconds=%.4f rows=%ld features=%ld\n", best, static_cast<long>(n),
              static_cast<long>(p));
  return 0;
}

}  // namespace

int main(int argc, char** argv) {
  const std::vector<std::string> args(argv + 1, argv + argc);
  if (args.size() == 5 && args[0] == "generate") {
    return GenerateAll(args[1], std::atol(args[2].c_str()), std::atol(args[3].c_str()),
                       std::atol(args[4].c_str()));
  }
  if ((args.size() == 4 || args.size() == 6) && args[0] == "fit" &&
      (args[2] == "linear" || args[2] == "logistic")) {
    nlohmann::json params = nlohmann::json::object();
    if (args[2] == "logistic" && args.size() == 6) {
      params = {{"l2", std::atof(args[4].c_str())}, {"tol", std::atof(args[5].c_str())}};
    }
    return Fit(args[1], args[2], std::max(1, std::atoi(args[3].c_str())), params);
  }
  std::fprintf(stderr,
               "usage: learners_bench generate DIR ROWS_LINEAR ROWS_LOGISTIC FEATURES\n"
               "       learners_bench fit DIR linear|logistic REPEATS [L2 TOL]\n");
  return 2;
}
