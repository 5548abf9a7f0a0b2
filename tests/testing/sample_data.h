// Small generated CSV files for tests that need a whole source.
#ifndef UNSEEN_TESTS_TESTING_SAMPLE_DATA_H_
#define UNSEEN_TESTS_TESTING_SAMPLE_DATA_H_

#include <cstdint>
#include <string>

namespace unseen::testing {

// A CSV with columns id,site,day,a,b,label: `rows` rows, `groups` distinct
// sites, days 1..60, a two-class label. Deterministic in `seed`.
std::string SampleCsv(uint64_t rows, uint64_t groups = 10, uint64_t seed = 1);

}  // namespace unseen::testing

#endif  // UNSEEN_TESTS_TESTING_SAMPLE_DATA_H_
