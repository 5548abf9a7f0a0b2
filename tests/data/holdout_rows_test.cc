// The columns-1 holdout encoding is lossless: every row decodes to its exact bytes.
#include "harness/data/holdout_rows.h"

#include <gtest/gtest.h>

#include <random>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

// Encodes `rows` in blocks of `block` rows and returns the encoding.
std::string Encode(const std::string& header, const std::vector<std::string>& rows, char delimiter,
                   size_t columns, size_t block) {
  HoldoutRowsEncoder encoder(delimiter, columns);
  std::string out;
  encoder.Begin(header, &out);
  for (size_t b = 0; b < rows.size(); b += block) {
    std::string text;
    std::vector<size_t> starts, ends;
    for (size_t r = b; r < rows.size() && r < b + block; ++r) {
      starts.push_back(text.size());
      text += rows[r];
      ends.push_back(text.size());
      text += '\n';
    }
    encoder.AddBlock(text, starts, ends, &out);
  }
  return out;
}

std::string Csv(const std::string& header, const std::vector<std::string>& rows) {
  std::string csv = header + "\n";
  for (const std::string& r : rows) csv += r + "\n";
  return csv;
}

void ExpectRoundTrip(const std::string& header, const std::vector<std::string>& rows,
                     char delimiter, size_t columns, size_t block) {
  auto decoded = DecodeHoldoutRows(Encode(header, rows, delimiter, columns, block));
  ASSERT_OK(decoded);
  ASSERT_EQ(*decoded, Csv(header, rows));
}

TEST(HoldoutRowsTest, NumbersTextAndOddRowsRoundTrip) {
  const std::vector<std::string> rows = {
      "1,2.5,-3.25,x",
      "0,0.0,-0,-0.000",
      "007,1.50,.5,5.",
      "1e5,-1E-5,+3,--1",
      "NA,,NaN,",
      "9999999999999999999,10000000000000000000,0.0000000000000000001,1",
      "-9999999999.999999999,00,0.10,-0.05",
      "\"a,b\",\"say \"\"hi\"\"\",3,4",  // quoted: kept verbatim
      "1,2,3",                           // too few fields: verbatim
      "1,2,3,4,5",                       // too many
      "pear,Birchmere,é,日本",
      "-,.,-.,0.",
  };
  ExpectRoundTrip("a,b,c,d", rows, ',', 4, 1000);
  ExpectRoundTrip("a,b,c,d", rows, ',', 4, 1);
  ExpectRoundTrip("a,b,c,d", rows, ',', 4, 5);
}

TEST(HoldoutRowsTest, LayoutMatchesTheDocumentedExample) {
  // docs/sealed-format.md, "columns-1": the rows `1.5,a` and `-20,"q"` as one block.
  HoldoutRowsEncoder encoder(',', 2);
  std::string out;
  encoder.Begin("x,y", &out);
  const std::string text = "1.5,a\n-20,\"q\"\n";
  encoder.AddBlock(text, {0, 6}, {5, 13}, &out);
  const std::string want = std::string("UNSEENHC") + "\x03x,y\x02," +  // header, 2 columns, ','
                           "\x02" + "\x01" + "\x01\x07-20,\"q\"" +     // 2 rows, 1 verbatim: row 1
                           std::string("\x01\x01\x0f", 3) +            // column 0: 1.5
                           std::string(
                               "\x40\x00\x01"
                               "a",
                               4);  // column 1: a
  EXPECT_EQ(out, want);
  auto back = DecodeHoldoutRows(out);
  ASSERT_OK(back);
  EXPECT_EQ(*back, "x,y\n" + text);
}

TEST(HoldoutRowsTest, OtherDelimitersAndOneColumn) {
  ExpectRoundTrip("a;b", {"1,5;2", "3;-4.0", "x;"}, ';', 2, 2);
  ExpectRoundTrip("a\tb", {"1\t2", "\t", "-1.5\ttext"}, '\t', 2, 10);
  ExpectRoundTrip("only", {"1", "", "x", "-0.25"}, ',', 1, 3);
}

TEST(HoldoutRowsTest, RandomRowsRoundTrip) {
  std::mt19937_64 rng(42);
  const std::vector<std::string> pieces = {"0", "1", "9", ".", "-", "e", "a", "\"", "é", ","};
  for (int trial = 0; trial < 200; ++trial) {
    const size_t columns = 1 + rng() % 6;
    std::vector<std::string> rows;
    for (int r = 0; r < 50; ++r) {
      std::string row;
      const size_t cells = columns + (rng() % 10 == 0 ? 1 : 0);
      for (size_t c = 0; c < cells; ++c) {
        if (c > 0) row += ',';
        const size_t length = rng() % 12;
        for (size_t k = 0; k < length; ++k) {
          // Mostly digits, so that many cells are numbers.
          row += rng() % 3 ? std::string(1, static_cast<char>('0' + rng() % 10))
                           : pieces[rng() % (pieces.size() - 1)];
        }
      }
      rows.push_back(row);
    }
    ASSERT_NO_FATAL_FAILURE(ExpectRoundTrip("h", rows, ',', columns, 1 + rng() % 20));
  }
}

TEST(HoldoutRowsTest, NumbersTakeLessRoomThanText) {
  std::vector<std::string> rows;
  std::mt19937_64 rng(1);
  for (int r = 0; r < 1000; ++r) {
    rows.push_back(std::to_string(static_cast<int>(rng() % 2000000) - 1000000) + ".125,1");
  }
  const std::string encoded = Encode("x,y", rows, ',', 2, 1000);
  // 13 text bytes a row against 1 + 4 bytes (kind, digits as an integer) + 1 + 1 for the label.
  EXPECT_LT(encoded.size(), Csv("x,y", rows).size() * 6 / 10);
}

TEST(HoldoutRowsTest, MalformedEncodingsAreCorruptionNeverACrash) {
  const std::string good = Encode("a,b", {"1,2", "x,-3.5", "\"q\",4", "0.001,y", "5,6"}, ',', 2, 2);
  ASSERT_OK(DecodeHoldoutRows(good));
  EXPECT_TRUE(DecodeHoldoutRows("").status().IsCorruption());
  EXPECT_TRUE(DecodeHoldoutRows("a,b\n1,2\n").status().IsCorruption());  // CSV text, no magic
  for (size_t n = 0; n < good.size(); ++n) {
    auto r = DecodeHoldoutRows(good.substr(0, n));
    // A prefix ending exactly at a block boundary is a valid shorter encoding.
    if (r.ok()) {
      EXPECT_EQ(r->find("\n"), std::string("a,b").size()) << n;
    }
  }
  std::mt19937_64 rng(7);
  for (int i = 0; i < 5000; ++i) {
    std::string bad = good;
    bad[8 + rng() % (bad.size() - 8)] ^= static_cast<char>(1 + rng() % 255);
    (void)DecodeHoldoutRows(bad);  // any outcome but a crash
  }
}

}  // namespace
}  // namespace unseen
