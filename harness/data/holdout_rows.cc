#include "harness/data/holdout_rows.h"

#include <cstring>

namespace unseen {
namespace {

// docs/sealed-format.md, "The holdout's plaintext". Written to disk: do not change.
constexpr char kMagic[8] = {'U', 'N', 'S', 'E', 'E', 'N', 'H', 'C'};
constexpr uint8_t kKindNegative = 0x20;  // | fraction digits: a negative number
constexpr uint8_t kKindText = 0x40;
constexpr int kMaxDigits = 19;  // every 19-digit integer fits in 64 bits

void PutVarint(uint64_t v, std::string* out) {
  while (v >= 0x80) {
    out->push_back(static_cast<char>(v | 0x80));
    v >>= 7;
  }
  out->push_back(static_cast<char>(v));
}

inline bool IsDigit(char c) { return static_cast<unsigned char>(c - '0') < 10; }

// The kind byte of `cell`, with its digits in *mantissa for a number: a cell of the form
// -?(0|[1-9][0-9]*)(\.[0-9]+)? with at most 19 digits. Every such cell is rebuilt exactly from
// its sign, fraction digit count and digits (see DecodeNumber); anything else is text.
uint8_t Classify(std::string_view cell, uint64_t* mantissa) {
  const size_t n = cell.size();
  size_t i = 0;
  const bool negative = n > 0 && cell[0] == '-';
  i += negative;
  const size_t int_begin = i;
  while (i < n && IsDigit(cell[i])) ++i;
  const size_t int_digits = i - int_begin;
  if (int_digits == 0 || (int_digits > 1 && cell[int_begin] == '0')) return kKindText;
  size_t fraction = 0;
  if (i < n && cell[i] == '.') {
    const size_t frac_begin = ++i;
    while (i < n && IsDigit(cell[i])) ++i;
    fraction = i - frac_begin;
    if (fraction == 0) return kKindText;
  }
  if (i != n || int_digits + fraction > kMaxDigits) return kKindText;
  uint64_t m = 0;
  for (size_t k = int_begin; k < n; ++k) {
    if (cell[k] != '.') m = m * 10 + static_cast<uint64_t>(cell[k] - '0');
  }
  *mantissa = m;
  return static_cast<uint8_t>((negative ? kKindNegative : 0) | fraction);
}

// Appends the text of a number: the sign, then the digits of `m` padded with zeros to at least
// fraction + 1 of them, with a point before the last `fraction`. False if it would have more
// than 19 digits (no encoder writes that).
bool DecodeNumber(uint8_t kind, uint64_t m, std::string* out) {
  char digits[24];
  int n = 0;
  do {
    digits[n++] = static_cast<char>('0' + m % 10);
    m /= 10;
  } while (m > 0);
  const int fraction = kind & 0x1F;
  while (n < fraction + 1) digits[n++] = '0';
  if (n > kMaxDigits) return false;
  if (kind & kKindNegative) out->push_back('-');
  for (int k = n - 1; k >= 0; --k) {
    out->push_back(digits[k]);
    if (k == fraction && fraction > 0) out->push_back('.');
  }
  return true;
}

// Reads what the encoder wrote, refusing anything out of bounds.
class Reader {
 public:
  explicit Reader(std::string_view s) : p_(s.data()), end_(s.data() + s.size()) {}
  bool Varint(uint64_t* v) {
    uint64_t r = 0;
    for (int shift = 0; shift < 64; shift += 7) {
      if (p_ == end_) return false;
      const uint8_t b = static_cast<uint8_t>(*p_++);
      r |= uint64_t{b & 0x7Fu} << shift;
      if (b < 0x80) {
        *v = r;
        return true;
      }
    }
    return false;
  }
  bool Bytes(size_t n, const char** at) {
    if (static_cast<size_t>(end_ - p_) < n) return false;
    *at = p_;
    p_ += n;
    return true;
  }
  bool AtEnd() const { return p_ == end_; }

 private:
  const char* p_;
  const char* end_;
};

Status Malformed(const std::string& what) {
  return Status::Corruption("sealed holdout rows (columns-1): " + what);
}

}  // namespace

HoldoutRowsEncoder::HoldoutRowsEncoder(char delimiter, size_t columns)
    : delimiter_(delimiter), columns_(columns) {}

void HoldoutRowsEncoder::Begin(std::string_view header, std::string* out) const {
  out->append(kMagic, sizeof kMagic);
  PutVarint(header.size(), out);
  out->append(header.data(), header.size());
  PutVarint(columns_.size(), out);
  out->push_back(delimiter_);
}

void HoldoutRowsEncoder::AddBlock(std::string_view text, const std::vector<size_t>& starts,
                                  const std::vector<size_t>& ends, std::string* out) {
  const size_t ncol = columns_.size();
  for (Column& c : columns_) {
    c.kinds.clear();
    c.mantissas.clear();
    c.texts.clear();
  }
  std::string literals;
  uint64_t literal_count = 0;
  for (size_t r = 0; r < starts.size(); ++r) {
    const std::string_view raw = text.substr(starts[r], ends[r] - starts[r]);
    // Split on the delimiter; a quoted row (whose fields may hold delimiters) stays verbatim.
    cells_.clear();
    bool plain = std::memchr(raw.data(), '"', raw.size()) == nullptr;
    for (size_t from = 0; plain;) {
      const size_t at = raw.find(delimiter_, from);
      cells_.push_back(
          raw.substr(from, at == std::string_view::npos ? raw.size() - from : at - from));
      if (cells_.size() > ncol) plain = false;
      if (at == std::string_view::npos) break;
      from = at + 1;
    }
    if (!plain || cells_.size() != ncol) {
      PutVarint(r, &literals);
      PutVarint(raw.size(), &literals);
      literals.append(raw.data(), raw.size());
      ++literal_count;
      continue;
    }
    for (size_t c = 0; c < ncol; ++c) {
      Column& col = columns_[c];
      uint64_t m = 0;
      const uint8_t kind = Classify(cells_[c], &m);
      col.kinds.push_back(kind);
      if (kind == kKindText) {
        PutVarint(cells_[c].size(), &col.texts);
        col.texts.append(cells_[c].data(), cells_[c].size());
      } else {
        col.mantissas.push_back(m);
      }
    }
  }
  PutVarint(starts.size(), out);
  PutVarint(literal_count, out);
  out->append(literals);
  for (const Column& col : columns_) {
    out->append(reinterpret_cast<const char*>(col.kinds.data()), col.kinds.size());
    uint64_t max = 0;
    for (uint64_t m : col.mantissas) max |= m;
    uint8_t width = 0;
    while (width < 8 && (max >> (8 * width)) != 0) ++width;
    out->push_back(static_cast<char>(width));
    // Byte plane k holds byte k of every mantissa: the high planes of small numbers are nearly
    // constant, which zstd then stores in next to nothing.
    const size_t base = out->size();
    out->resize(base + width * col.mantissas.size());
    char* w = out->data() + base;
    for (uint8_t k = 0; k < width; ++k) {
      for (uint64_t m : col.mantissas) *w++ = static_cast<char>(m >> (8 * k));
    }
    out->append(col.texts);
  }
}

namespace {

// One column of a block, as laid out in the encoding.
struct ColumnView {
  const char* kinds;  // one kind byte per plain row
  uint8_t width;      // bytes per number
  const char* planes;  // byte plane k of number i at planes[k * numbers + i]
  size_t numbers;
  Reader texts{std::string_view()};  // the column's text cells, in row order
};

// A block's rows kept verbatim, by row index within the block (increasing).
using Literals = std::vector<std::pair<uint64_t, std::string_view>>;

Status ReadBlockHeader(Reader* in, uint64_t limit, uint64_t* rows, Literals* literals) {
  uint64_t literal_count = 0;
  if (!in->Varint(rows) || *rows == 0 || *rows > limit || !in->Varint(&literal_count) ||
      literal_count > *rows) {
    return Malformed("bad block header");
  }
  literals->assign(literal_count, {});
  for (size_t i = 0; i < literals->size(); ++i) {
    uint64_t index = 0, size = 0;
    const char* at;
    if (!in->Varint(&index) || index >= *rows || (i > 0 && index <= (*literals)[i - 1].first) ||
        !in->Varint(&size) || !in->Bytes(size, &at)) {
      return Malformed("bad verbatim row");
    }
    (*literals)[i] = {index, std::string_view(at, size)};
  }
  return Status::OK();
}

// Reads one column's kinds, numbers and texts, checking every kind byte and
// walking the text cells to find where the next column starts.
Status ReadColumn(Reader* in, size_t plain_rows, ColumnView* c) {
  const char* width;
  if (!in->Bytes(plain_rows, &c->kinds) || !in->Bytes(1, &width) || *width > 8) {
    return Malformed("bad column");
  }
  c->width = static_cast<uint8_t>(*width);
  c->numbers = 0;
  size_t text_cells = 0;
  for (size_t r = 0; r < plain_rows; ++r) {
    const uint8_t k = static_cast<uint8_t>(c->kinds[r]);
    if (k == kKindText) {
      ++text_cells;
    } else if ((k & ~(kKindNegative | 0x1F)) != 0 || (k & 0x1F) > kMaxDigits) {
      return Malformed("bad kind byte");
    } else {
      ++c->numbers;
    }
  }
  if (!in->Bytes(c->width * c->numbers, &c->planes)) return Malformed("truncated numbers");
  const char* texts_begin = nullptr;
  if (!in->Bytes(0, &texts_begin)) return Malformed("truncated texts");
  Reader walk = *in;
  for (size_t t = 0; t < text_cells; ++t) {
    uint64_t size = 0;
    const char* at;
    if (!walk.Varint(&size) || !walk.Bytes(size, &at)) return Malformed("truncated texts");
  }
  const char* texts_end;
  walk.Bytes(0, &texts_end);
  c->texts = Reader(std::string_view(texts_begin, static_cast<size_t>(texts_end - texts_begin)));
  *in = walk;
  return Status::OK();
}

// Appends plain row `plain` of the block: each column's cell, delimited.
Status WritePlainRow(std::vector<ColumnView>& cols, size_t plain, char delimiter,
                     std::vector<size_t>& number_at, std::string* out) {
  for (size_t c = 0; c < cols.size(); ++c) {
    ColumnView& col = cols[c];
    if (c > 0) out->push_back(delimiter);
    const uint8_t kind = static_cast<uint8_t>(col.kinds[plain]);
    if (kind == kKindText) {
      uint64_t size = 0;
      const char* at = nullptr;
      // Both succeed: the column's texts were walked by ReadColumn().
      if (!col.texts.Varint(&size) || !col.texts.Bytes(size, &at)) {
        return Malformed("truncated texts");
      }
      out->append(at, size);
    } else {
      uint64_t m = 0;
      const size_t i = number_at[c]++;
      for (uint8_t k = 0; k < col.width; ++k) {
        m |= uint64_t{static_cast<uint8_t>(col.planes[k * col.numbers + i])} << (8 * k);
      }
      if (!DecodeNumber(kind, m, out)) return Malformed("a number with more than 19 digits");
    }
  }
  out->push_back('\n');
  return Status::OK();
}

// Decodes one block, appending its rows (verbatim and plain, in row order) to *out.
Status DecodeBlock(Reader* in, uint64_t limit, size_t ncol, char delimiter, std::string* out) {
  uint64_t rows = 0;
  Literals literals;
  UNSEEN_RETURN_IF_ERROR(ReadBlockHeader(in, limit, &rows, &literals));
  const size_t plain_rows = rows - literals.size();
  std::vector<ColumnView> cols(ncol);
  for (ColumnView& c : cols) UNSEEN_RETURN_IF_ERROR(ReadColumn(in, plain_rows, &c));
  size_t next_literal = 0, plain = 0;
  std::vector<size_t> number_at(ncol, 0);
  for (uint64_t r = 0; r < rows; ++r) {
    if (next_literal < literals.size() && literals[next_literal].first == r) {
      out->append(literals[next_literal++].second);
      out->push_back('\n');
      continue;
    }
    if (plain == plain_rows) return Malformed("verbatim row indexes out of order");
    UNSEEN_RETURN_IF_ERROR(WritePlainRow(cols, plain, delimiter, number_at, out));
    ++plain;
  }
  if (next_literal != literals.size()) return Malformed("verbatim row indexes out of order");
  return Status::OK();
}

}  // namespace

Result<std::string> DecodeHoldoutRows(std::string_view encoded) {
  Reader in(encoded);
  const char* magic;
  if (!in.Bytes(sizeof kMagic, &magic) || std::memcmp(magic, kMagic, sizeof kMagic) != 0) {
    return Malformed("bad magic; expected \"UNSEENHC\"");
  }
  uint64_t header_size = 0, ncol = 0;
  const char* header;
  const char* delimiter;
  if (!in.Varint(&header_size) || !in.Bytes(header_size, &header) || !in.Varint(&ncol) ||
      ncol == 0 || ncol > encoded.size() || !in.Bytes(1, &delimiter)) {
    return Malformed("truncated or bad header");
  }
  std::string out(header, header_size);
  out.push_back('\n');
  while (!in.AtEnd()) {
    UNSEEN_RETURN_IF_ERROR(DecodeBlock(&in, encoded.size(), ncol, *delimiter, &out));
  }
  return out;
}

}  // namespace unseen
