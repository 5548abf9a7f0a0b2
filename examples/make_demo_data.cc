// Writes the invented demo dataset: quality inspection of pear crates at the
// (invented) Fernbrook growers' cooperative. Every name and number is made
// up. Deterministic: the same --rows and --seed give the same bytes on any
// machine (integer arithmetic and the project's own PRNG only; no libm).
//
//   make_demo_data --out crates.csv [--rows 2000] [--seed 7]
//   make_demo_data --numeric --out big.csv --rows 4000000   (benchmark data)
#include <fmt/core.h>

#include <cstdio>
#include <cstdlib>
#include <cstring>
#include <string>

#include "harness/sampling/random.h"

namespace {

const char* const kOrchards[] = {"Alder Hollow", "Birchmere", "Crowfoot Bend", "Dunmoor",
                                 "Elderwick", "Fallowmead", "Greyholt", "Hazelcombe",
                                 "Ivybridge Farm", "Juniper Rise", "Kestrel Vale", "Larkspur Hill"};
const char* const kVarieties[] = {"Amberline", "Bellrose", "Copperwind", "Dewfall"};

// Approximately standard normal: the Irwin-Hall sum of 12 uniforms minus 6.
double Normalish(unseen::Random& rng) {
  double s = 0;
  for (int i = 0; i < 12; ++i) s += rng.NextDouble();
  return s - 6.0;
}

void WriteCrates(FILE* out, uint64_t rows, uint64_t seed) {
  unseen::Random rng(seed);
  fmt::print(out, "crate_id,orchard,picked_on,variety,weight_kg,firmness_n,sugar_brix,"
                  "bruise_count,passed\n");
  for (uint64_t i = 0; i < rows; ++i) {
    int orchard = static_cast<int>(rng.Bounded(12));
    int variety = static_cast<int>(rng.Bounded(4));
    int day = static_cast<int>(rng.Bounded(61));  // 2026-08-01 .. 2026-09-30
    int month = day < 31 ? 8 : 9, dom = day < 31 ? day + 1 : day - 30;
    double weight = 18.0 + 1.5 * Normalish(rng);
    double firmness = 55.0 + 8.0 * Normalish(rng) - 0.3 * day;
    double sugar = 12.0 + 1.2 * Normalish(rng) + 0.5 * variety;
    int bruises = static_cast<int>(rng.Bounded(4) + (orchard % 3 == 0 ? rng.Bounded(4) : 0));
    // Inspection passes when the crate is firm and sweet enough with few bruises.
    double score = 0.08 * (firmness - 40) + 0.6 * (sugar - 11) - 0.7 * bruises + 0.8 * Normalish(rng);
    int passed = score > 0 ? 1 : 0;
    std::string firm = rng.Bounded(50) == 0 ? "NA" : fmt::format("{:.1f}", firmness);
    fmt::print(out, "FB-{:06d},{},2026-{:02d}-{:02d},{},{:.2f},{},{:.1f},{},{}\n", i + 1,
               kOrchards[orchard], month, dom, kVarieties[variety], weight, firm, sugar, bruises,
               passed);
  }
}

// Ten numeric features and a 0/1 label: the benchmark's input.
void WriteNumeric(FILE* out, uint64_t rows, uint64_t seed) {
  unseen::Random rng(seed);
  fmt::print(out, "x0,x1,x2,x3,x4,x5,x6,x7,x8,x9,y\n");
  std::string line;
  for (uint64_t i = 0; i < rows; ++i) {
    line.clear();
    double sum = 0;
    for (int c = 0; c < 10; ++c) {
      double v = static_cast<double>(rng.Bounded(2000000)) / 1000.0 - 1000.0;
      sum += v;
      line += fmt::format("{:.3f},", v);
    }
    line += sum > 0 ? "1\n" : "0\n";
    std::fwrite(line.data(), 1, line.size(), out);
  }
}

}  // namespace

int main(int argc, char** argv) {
  std::string out_path;
  uint64_t rows = 2000, seed = 7;
  bool numeric = false;
  for (int i = 1; i < argc; ++i) {
    std::string a = argv[i];
    if (a == "--out" && i + 1 < argc) out_path = argv[++i];
    else if (a == "--rows" && i + 1 < argc) rows = std::strtoull(argv[++i], nullptr, 10);
    else if (a == "--seed" && i + 1 < argc) seed = std::strtoull(argv[++i], nullptr, 10);
    else if (a == "--numeric") numeric = true;
    else {
      fmt::print(stderr, "usage: make_demo_data --out FILE [--rows N] [--seed S] [--numeric]\n");
      return 2;
    }
  }
  if (out_path.empty() || rows == 0) {
    fmt::print(stderr, "make_demo_data: --out FILE and --rows >= 1 are required\n");
    return 2;
  }
  FILE* out = std::fopen(out_path.c_str(), "wb");
  if (!out) {
    fmt::print(stderr, "make_demo_data: cannot write {}: {}\n", out_path, std::strerror(errno));
    return 2;
  }
  std::setvbuf(out, nullptr, _IOFBF, 1 << 20);
  if (numeric) WriteNumeric(out, rows, seed);
  else WriteCrates(out, rows, seed);
  return std::fclose(out) == 0 ? 0 : 4;
}
