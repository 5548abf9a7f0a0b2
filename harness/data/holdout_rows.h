// The holdout's plaintext: how `seal` lays out the holdout rows before the sealed blob
// compresses and encrypts them (docs/sealed-format.md, "The holdout's plaintext").
//
// Encoding "csv" is the CSV text itself: the header row, then each row, each followed by LF.
// Encoding "columns-1" holds the same text rearranged block by block and column by column, with
// each plain decimal cell as its digits in a binary integer (byte planes) and its sign and
// number of fraction digits in a kind byte. Numbers written as text are mostly digits that zstd
// cannot predict; as integers they take about a quarter less room after compression, and there
// are fewer bytes to compress. The encoding is lossless: decoding gives the CSV text back byte
// for byte. Both names are written to the ledger (the seal entry's holdout.encoding) and never
// change meaning. Thread-compatible.
#ifndef UNSEEN_HARNESS_DATA_HOLDOUT_ROWS_H_
#define UNSEEN_HARNESS_DATA_HOLDOUT_ROWS_H_

#include <cstddef>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "storage/status.h"

namespace unseen {

inline constexpr char kHoldoutEncodingCsv[] = "csv";
inline constexpr char kHoldoutEncodingColumns[] = "columns-1";

// Writes the columns-1 encoding one block of rows at a time.
class HoldoutRowsEncoder {
 public:
  // Rows of `columns` fields separated by `delimiter`.
  HoldoutRowsEncoder(char delimiter, size_t columns);

  // Appends the start of the encoding to *out: magic, the header row's bytes (without its line
  // end), the column count and the delimiter.
  void Begin(std::string_view header, std::string* out) const;

  // Appends one block to *out: the rows of `text`, where row i is text[starts[i], ends[i]) (its
  // bytes as in the file, without line end). A row whose fields cannot be split by the
  // delimiter alone (it has quotes, or a field count other than `columns`) is kept verbatim.
  // REQUIRES: 1 <= starts.size() == ends.size().
  void AddBlock(std::string_view text, const std::vector<size_t>& starts,
                const std::vector<size_t>& ends, std::string* out);

 private:
  struct Column {
    std::vector<uint8_t> kinds;
    std::vector<uint64_t> mantissas;
    std::string texts;  // varint length and bytes of each text cell
  };
  char delimiter_;
  std::vector<Column> columns_;
  std::vector<std::string_view> cells_;
};

// The CSV text of an encoded holdout: the header row, then every row, each followed by LF.
// Corruption naming what is wrong when `encoded` is not a well-formed columns-1 encoding.
Result<std::string> DecodeHoldoutRows(std::string_view encoded);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_HOLDOUT_ROWS_H_
