#include "tests/testing/sample_data.h"

#include <fmt/core.h>

#include "harness/sampling/random.h"

namespace unseen::testing {

std::string SampleCsv(uint64_t rows, uint64_t groups, uint64_t seed) {
  Random rng(seed);
  std::string out = "id,site,day,a,b,label\n";
  for (uint64_t i = 0; i < rows; ++i) {
    uint64_t site = rng.Bounded(groups);
    uint64_t day = 1 + rng.Bounded(60);
    double a = static_cast<double>(rng.Bounded(10000)) / 100.0;
    uint64_t b = rng.Bounded(7);
    const char* label = (a + 10.0 * static_cast<double>(b) > 80.0) ? "yes" : "no";
    out += fmt::format("r{},s{},{},{:.2f},{},{}\n", i, site, day, a, b, label);
  }
  return out;
}

}  // namespace unseen::testing
