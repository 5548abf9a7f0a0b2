#include "harness/data/csv.h"

#include <errno.h>
#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#if defined(__SSE2__) && !defined(UNSEEN_CSV_PORTABLE_SCAN)
#include <emmintrin.h>
#endif

#include <algorithm>
#include <cstdio>
#include <cstring>
#include <exception>
#include <limits>
#include <system_error>
#include <unordered_map>
#include <utility>

namespace unseen {
namespace {

// Consumed pages are handed back to the kernel each time this many bytes lie behind the cursor.
// A file-backed mapping counts toward resident memory as pages are touched, so without this a
// full pass would leave the whole file resident.
constexpr uint64_t kReleaseBytes = uint64_t{16} << 20;
// ForEachRecord() keeps this many bytes behind the cursor mapped, for callbacks that hand views
// of the records to another thread (which may lag by less than this). A page released while a
// consumer still needs it would be read in again and then stay mapped, behind the release point.
constexpr uint64_t kReleaseLag = uint64_t{16} << 20;
constexpr size_t kNoLimit = std::numeric_limits<size_t>::max();

// Length of the well-formed UTF-8 sequence at p, whose first byte is >= 0x80, or 0 when it is
// ill-formed: a stray continuation byte, an overlong form, a surrogate, a value above U+10FFFF,
// or a sequence cut short (RFC 3629 section 4).
size_t Utf8Length(const unsigned char* p, const unsigned char* end) {
  const unsigned c = p[0];
  const size_t avail = static_cast<size_t>(end - p);
  auto cont = [&](size_t i) { return i < avail && (p[i] & 0xC0) == 0x80; };
  if (c < 0xC2) return 0;  // continuation byte, or a 2-byte lead that can only be overlong
  if (c < 0xE0) return cont(1) ? 2 : 0;
  if (c < 0xF0) {
    if (avail < 3) return 0;
    if (c == 0xE0 && p[1] < 0xA0) return 0;  // overlong
    if (c == 0xED && p[1] > 0x9F) return 0;  // U+D800..U+DFFF
    return cont(1) && cont(2) ? 3 : 0;
  }
  if (c < 0xF5) {
    if (avail < 4) return 0;
    if (c == 0xF0 && p[1] < 0x90) return 0;  // overlong
    if (c == 0xF4 && p[1] > 0x8F) return 0;  // above U+10FFFF
    return cont(1) && cont(2) && cont(3) ? 4 : 0;
  }
  return 0;
}

// Number of UTF-8 characters that start in [p, end): bytes that are not continuation bytes.
uint64_t CountChars(const char* p, const char* end) {
  uint64_t n = 0;
  for (; p < end; ++p) n += (static_cast<unsigned char>(*p) & 0xC0) != 0x80;
  return n;
}

// A byte for a message: 'x' when printable, else tab, CR, LF or its hex value.
std::string DescribeByte(char c) {
  if (c == '\t') return "tab";
  if (c == '\r') return "CR";
  if (c == '\n') return "LF";
  if (c >= 0x20 && c < 0x7f) return std::string("'") + c + "'";
  char hex[16];
  std::snprintf(hex, sizeof hex, "byte 0x%02X", static_cast<unsigned char>(c));
  return hex;
}

std::string FormatLocation(const std::string& path, uint64_t line, uint64_t column) {
  return path + ":" + std::to_string(line) + ":" + std::to_string(column);
}

// Offset (relative to raw) of field `column` in an already validated record; raw.size() when the
// record has fewer fields.
size_t FieldOffsetIn(std::string_view raw, char delimiter, size_t column) {
  size_t i = 0;
  const size_t n = raw.size();
  for (size_t col = 0; col < column; ++col) {
    if (i < n && raw[i] == '"') {  // skip the quoted part, doubled quotes included
      for (++i; i < n; ++i) {
        if (raw[i] != '"') continue;
        if (i + 1 < n && raw[i + 1] == '"') {
          ++i;
        } else {
          ++i;
          break;
        }
      }
    }
    while (i < n && raw[i] != delimiter) ++i;
    if (i >= n) return n;
    ++i;
  }
  return i;
}

// Returns the whole pages of [*released, upto) of the mapping at `base` to the kernel and sets
// *released to the last page boundary at or below `upto`. The mapping stays valid: a later
// access reads the page in again, so a page shared with unread bytes may go too.
void ReleaseBehind(const char* base, uint64_t upto, uint64_t* released) {
  static const uint64_t page = static_cast<uint64_t>(sysconf(_SC_PAGESIZE));
  const uint64_t begin = *released / page * page;
  const uint64_t end = upto / page * page;
  if (end <= begin) return;
  madvise(const_cast<char*>(base) + begin, end - begin, MADV_DONTNEED);
  *released = end;
}

// Bit i of the result is set when block[i] is the delimiter, '"', CR, LF or a non-ASCII byte:
// the only bytes the parser has to look at. Everything else is plain field content.
// (UNSEEN_CSV_PORTABLE_SCAN forces the portable loop, to test it on x86.)
inline uint64_t SpecialMask64(const char* block, char delimiter) {
#if defined(__SSE2__) && !defined(UNSEEN_CSV_PORTABLE_SCAN)
  const __m128i d = _mm_set1_epi8(delimiter);
  const __m128i quote = _mm_set1_epi8('"');
  const __m128i lf = _mm_set1_epi8('\n');
  const __m128i cr = _mm_set1_epi8('\r');
  uint64_t mask = 0;
  for (int i = 0; i < 4; ++i) {
    const __m128i v = _mm_loadu_si128(reinterpret_cast<const __m128i*>(block + 16 * i));
    const __m128i hit =
        _mm_or_si128(_mm_or_si128(_mm_cmpeq_epi8(v, d), _mm_cmpeq_epi8(v, quote)),
                     _mm_or_si128(_mm_or_si128(_mm_cmpeq_epi8(v, lf), _mm_cmpeq_epi8(v, cr)), v));
    mask |= uint64_t{static_cast<uint32_t>(_mm_movemask_epi8(hit))} << (16 * i);
  }
  return mask;
#else
  uint64_t mask = 0;
  for (int i = 0; i < 64; ++i) {
    const char c = block[i];
    const bool hit = c == delimiter || c == '"' || c == '\n' || c == '\r' || (c & 0x80) != 0;
    mask |= uint64_t{hit} << i;
  }
  return mask;
#endif
}

// Parses one record at a time from a mapped buffer. Keeps the fields of the current record; the
// views point into the buffer, or into scratch_ for quoted fields with doubled quotes. The scan
// finds special bytes through a bit mask per 64-byte block, so plain content costs a few
// instructions per 16 bytes. The hot path builds no Status: slow paths record error_.
class RecordParser {
 public:
  // `max_fields` is the expected field count (fields past it are counted, not kept), or kNoLimit
  // to keep every field (for the header, parsed once).
  RecordParser(const std::string& path, const char* data, uint64_t size, char delimiter,
               size_t max_fields)
      : path_(path),
        data_(data),
        end_(data + size),
        delimiter_(delimiter),
        max_fields_(max_fields) {
    if (max_fields != kNoLimit) fields_.resize(max_fields);
  }

  // Moves to `pos`, which must be the start of a record on line `line` starting at `line_start`.
  void Seek(uint64_t pos, uint64_t line, uint64_t line_start) {
    pos_ = data_ + pos;
    line_ = line;
    line_start_ = data_ + line_start;
    scanner_.block = data_ + (pos & ~uint64_t{63});
    scanner_.mask = BlockMask(scanner_.block) & (~uint64_t{0} << (pos & 63));
  }
  bool AtEnd() const { return pos_ >= end_; }
  uint64_t pos() const { return static_cast<uint64_t>(pos_ - data_); }
  uint64_t line() const { return line_; }

  // Parses the record at pos() and moves past its line terminator. REQUIRES: !AtEnd(). After
  // an error the parser must be moved with Seek() before it is used again.
  Status Next() {
    if (NextRecord()) return Status::OK();
    return std::move(error_);
  }

  // The last record parsed by Next().
  uint64_t record_begin() const { return static_cast<uint64_t>(record_begin_ - data_); }
  uint64_t record_line() const { return record_line_; }
  std::string_view raw() const {
    return {record_begin_, static_cast<size_t>(content_end_ - record_begin_)};
  }
  size_t field_count() const { return field_count_; }
  // The fields; meaningful when field_count() == max_fields, or with kNoLimit.
  const std::vector<std::string_view>& fields() const { return fields_; }
  // Where field number max_fields + 1 starts; meaningful when field_count() > max_fields.
  uint64_t extra_field_offset() const { return static_cast<uint64_t>(extra_field_ - data_); }
  // Where the record's content ends: its line terminator, or the end of the file.
  uint64_t content_end() const { return static_cast<uint64_t>(content_end_ - data_); }

 private:
  // The special bytes of one 64-byte block that the parser has not yet consumed. Consuming is
  // clearing bits, so finding the next special byte is a count of trailing zeros and the
  // loop-carried work per field is one bit operation.
  struct Scanner {
    const char* block = nullptr;  // 64-byte aligned relative to data_
    uint64_t mask = 0;            // bit i: block[i] is special and not consumed; none past end_
  };

  uint64_t BlockMask(const char* block) const {
    if (end_ - block >= 64) return SpecialMask64(block, delimiter_);
    return TailMask(block);
  }
  [[gnu::noinline]] uint64_t TailMask(const char* block) const {
    char tail[64] = {};  // the last, partial block, padded
    const size_t n = static_cast<size_t>(end_ - block);
    std::memcpy(tail, block, n);
    return SpecialMask64(tail, delimiter_) & ((uint64_t{1} << n) - 1);
  }

  // The first special byte not yet consumed, or end_.
  const char* Peek(Scanner* s) const {
    while (s->mask == 0) {
      if (end_ - s->block <= 64) return end_;
      s->block += 64;
      s->mask = BlockMask(s->block);
    }
    return s->block + __builtin_ctzll(s->mask);
  }
  // Consumes the byte the last Peek() returned.
  static void Pop(Scanner* s) { s->mask &= s->mask - 1; }
  // Consumes every special byte before p. REQUIRES: s->block <= p <= end_.
  void SkipTo(Scanner* s, const char* p) const {
    uint64_t off = static_cast<uint64_t>(p - s->block);
    if (off >= 64) {
      s->block += off & ~uint64_t{63};
      s->mask = BlockMask(s->block);
      off &= 63;
    }
    s->mask &= ~uint64_t{0} << off;
  }

  // Stores field `index` of the current record; see fields().
  void AddFieldSlow(size_t index, const char* field_begin, const char* value, size_t length) {
    if (index < max_fields_) {
      fields_.emplace_back(value, length);
    } else if (index == max_fields_) {
      extra_field_ = field_begin;
    }
  }

  size_t Utf8At(const char* p) const {
    return Utf8Length(reinterpret_cast<const unsigned char*>(p),
                      reinterpret_cast<const unsigned char*>(end_));
  }

  bool NextRecord();
  bool QuotedField(Scanner* s, const char** p, bool* escaped);
  void Unescape();

  // Error paths: set error_ to "FILE:LINE:COL: message" and return false.
  [[gnu::cold]] bool FailAt(uint64_t line, const char* line_start, const char* at,
                            const std::string& message) {
    const uint64_t col = at > line_start ? CountChars(line_start, at) + 1 : 1;
    error_ = Status::InvalidArgument(FormatLocation(path_, line, col) + ": " + message);
    return false;
  }
  [[gnu::cold]] bool Fail(const char* at, const std::string& message) {
    return FailAt(line_, line_start_, at, message);
  }
  [[gnu::cold]] bool FailUtf8(const char* at) {
    char hex[8];
    std::snprintf(hex, sizeof hex, "0x%02X", static_cast<unsigned char>(*at));
    return Fail(at, std::string("invalid UTF-8 (byte ") + hex + "); expected UTF-8 text");
  }

  const std::string& path_;
  const char* const data_;
  const char* const end_;
  const char delimiter_;
  const size_t max_fields_;

  const char* pos_ = nullptr;
  uint64_t line_ = 1;
  const char* line_start_ = nullptr;
  Scanner scanner_;
  Status error_;

  const char* record_begin_ = nullptr;
  uint64_t record_line_ = 0;
  const char* content_end_ = nullptr;
  const char* extra_field_ = nullptr;
  size_t field_count_ = 0;
  std::vector<std::string_view> fields_;
  std::vector<size_t> escaped_;  // indices of fields_ that still hold doubled quotes
  std::string scratch_;          // unescaped values of those fields
};

bool RecordParser::NextRecord() {
  Scanner s = scanner_;
  const char* p = pos_;
  const char delimiter = delimiter_;
  if (max_fields_ == kNoLimit) fields_.clear();
  std::string_view* const kept = fields_.data();  // fast path: the pre-sized fields
  const size_t kept_count = max_fields_ == kNoLimit ? 0 : fields_.size();
  size_t count = 0;
  record_begin_ = p;
  record_line_ = line_;
  escaped_.clear();
  for (;;) {
    // One field. Afterwards q is at the byte that ends it (a delimiter, CR, LF, or end_), and
    // every special byte before q has been consumed.
    const char* const field_begin = p;
    const char* value = p;
    const char* q;
    if (p < end_ && *p == '"') {
      bool escaped = false;
      if (!QuotedField(&s, &p, &escaped)) return false;
      ++value;
      if (escaped && count < max_fields_) escaped_.push_back(count);
      // The byte after the closing quote must be special: a delimiter or a line end.
      q = Peek(&s);
      if (p + 1 < end_ && (q != p + 1 || (*q != delimiter && *q != '\n' && *q != '\r'))) {
        return Fail(p + 1, "unexpected " + DescribeByte(p[1]) +
                               " after the closing quote of a field; expected the delimiter " +
                               DescribeByte(delimiter) + " or a line end");
      }
    } else {
      for (;;) {
        q = Peek(&s);
        if (q == end_) break;
        const char c = *q;
        if (c == delimiter || c == '\n' || c == '\r') break;
        if (c == '"') {
          return Fail(q,
                      "quote inside an unquoted field; expected the whole field in quotes, "
                      "with inner quotes doubled");
        }
        const size_t n = Utf8At(q);
        if (n == 0) return FailUtf8(q);
        SkipTo(&s, q + n);
      }
      p = q;
    }
    const size_t length = static_cast<size_t>(p - value);
    if (count < kept_count) {
      kept[count] = std::string_view(value, length);
    } else {
      AddFieldSlow(count, field_begin, value, length);
    }
    ++count;
    if (q == end_) {
      content_end_ = pos_ = q;
      break;
    }
    if (*q == delimiter) {
      Pop(&s);
      p = q + 1;
      continue;
    }
    content_end_ = q;
    if (*q == '\r') {
      if (q + 1 == end_ || q[1] != '\n') {
        return Fail(q,
                    "carriage return without a line feed; expected CRLF or LF line ends "
                    "(a CR inside a field must be quoted)");
      }
      ++q;
      SkipTo(&s, q + 1);
    } else {
      Pop(&s);
    }
    pos_ = line_start_ = q + 1;
    ++line_;
    break;
  }
  field_count_ = count;
  scanner_ = s;
  if (!escaped_.empty()) Unescape();
  return true;
}

// On entry *p is at the opening quote, the first unconsumed special byte; on success it is at
// the closing quote, which is consumed, and *escaped tells whether the field holds a doubled
// quote. Counts the lines the field spans.
bool RecordParser::QuotedField(Scanner* s, const char** p, bool* escaped) {
  const char* const open = *p;
  const uint64_t open_line = line_;
  const char* const open_line_start = line_start_;
  Peek(s);  // moves to the block of the opening quote, which is the next special byte
  Pop(s);
  const char* q;
  for (;;) {
    q = Peek(s);
    if (q == end_) {
      return FailAt(open_line, open_line_start, open,
                    "unterminated quoted field (this quote is never closed); expected a "
                    "closing quote before the end of the file");
    }
    const char c = *q;
    if (c == '"') {
      if (q + 1 < end_ && q[1] == '"') {
        *escaped = true;
        SkipTo(s, q + 2);
        continue;
      }
      Pop(s);
      break;
    }
    if (c == '\n') {
      ++line_;
      line_start_ = q + 1;
      Pop(s);
    } else if (c & 0x80) {
      const size_t n = Utf8At(q);
      if (n == 0) return FailUtf8(q);
      SkipTo(s, q + n);
    } else {
      Pop(s);  // a delimiter or CR: plain content inside quotes
    }
  }
  *p = q;
  return true;
}

void RecordParser::Unescape() {
  size_t total = 0;
  for (size_t i : escaped_) total += fields_[i].size();
  scratch_.resize(total);
  char* w = scratch_.data();
  for (size_t i : escaped_) {
    const std::string_view v = fields_[i];
    char* const start = w;
    for (size_t k = 0; k < v.size(); ++k) {
      *w++ = v[k];
      if (v[k] == '"') ++k;  // a doubled quote: keep one
    }
    fields_[i] = std::string_view(start, static_cast<size_t>(w - start));
  }
}

// The end of the record that starts at p in a well-formed file: its first LF outside quotes, or
// `end`. Adds the LFs inside quotes to *inner_lines. *next_quote caches a search for '"' made at
// some earlier p: no quote lies in [that p, *next_quote), and *next_quote is a quote or the end
// of the window searched. Records without quotes cost one memchr; the window keeps the search
// from touching (and so mapping) pages far ahead of the cursor.
const char* RecordEnd(const char* p, const char* end, const char** next_quote,
                      uint64_t* inner_lines) {
  static constexpr size_t kQuoteWindow = size_t{1} << 20;
  auto find_quote = [end](const char* from) {
    const size_t n = std::min(static_cast<size_t>(end - from), kQuoteWindow);
    const void* at = std::memchr(from, '"', n);
    return at ? static_cast<const char*>(at) : from + n;
  };
  if (*next_quote < p) *next_quote = find_quote(p);
  const void* found = std::memchr(p, '\n', static_cast<size_t>(end - p));
  const char* lf = found ? static_cast<const char*>(found) : end;
  if (*next_quote > lf || (*next_quote == lf && lf == end)) return lf;
  // A quote (or the end of the window) before the line end: follow the quotes byte by byte.
  // No LF lies before *next_quote. Doubled quotes toggle twice, so toggling is enough.
  bool inside = false;
  const char* c = *next_quote;
  for (; c < end; ++c) {
    if (*c == '"') {
      inside = !inside;
    } else if (*c == '\n') {
      if (!inside) break;
      ++*inner_lines;
    }
  }
  *next_quote = c < end ? find_quote(c) : end;
  return c;
}

// The ragged-row error for the record `parser` has just read, or OK when it has `columns` fields.
Status CheckFieldCount(const CsvFile& file, const RecordParser& parser, size_t columns) {
  if (parser.field_count() == columns) return Status::OK();
  const uint64_t at =
      parser.field_count() > columns ? parser.extra_field_offset() : parser.content_end();
  return Status::InvalidArgument(file.Location(at) + ": ragged row: expected " +
                                 std::to_string(columns) + " fields, found " +
                                 std::to_string(parser.field_count()));
}

Status OpenError(const std::string& path, int err) {
  std::string msg = path + ": " + std::strerror(err);
  if (err == ENOENT) return Status::NotFound(msg + "; expected an existing CSV file");
  return Status::IOError(msg);
}

Status CheckDelimiter(char d) {
  if (d == '"' || d == '\r' || d == '\n' || (d & 0x80)) {
    return Status::InvalidArgument("CSV delimiter " + DescribeByte(d) +
                                   " is not allowed; expected an ASCII character other than "
                                   "'\"', CR and LF");
  }
  return Status::OK();
}

}  // namespace

Result<std::unique_ptr<CsvFile>> CsvFile::Open(const std::string& path, const CsvOptions& options) {
  try {
    UNSEEN_RETURN_IF_ERROR(CheckDelimiter(options.delimiter));
    std::unique_ptr<CsvFile> f(new CsvFile());
    f->path_ = path;
    f->options_ = options;

    const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) return OpenError(path, errno);
    struct stat st;
    if (fstat(fd, &st) != 0) {
      const int err = errno;
      ::close(fd);
      return OpenError(path, err);
    }
    if (!S_ISREG(st.st_mode)) {
      ::close(fd);
      return Status::IOError(path + ": not a regular file; expected a CSV file");
    }
    f->size_ = static_cast<uint64_t>(st.st_size);
    if (f->size_ > 0) {
      void* m = mmap(nullptr, f->size_, PROT_READ, MAP_PRIVATE, fd, 0);
      if (m == MAP_FAILED) {
        const int err = errno;
        ::close(fd);
        return OpenError(path, err);
      }
      f->data_ = static_cast<const char*>(m);
      f->mapped_ = true;
      madvise(m, f->size_, MADV_SEQUENTIAL);
    }
    ::close(fd);  // the mapping keeps the file
    UNSEEN_RETURN_IF_ERROR(f->ReadHeader());
    return f;
  } catch (const std::exception& e) {
    return Status::Internal(path + ": " + e.what());
  }
}

Result<std::unique_ptr<CsvFile>> CsvFile::FromBytes(const std::string& name, std::string bytes,
                                                    const CsvOptions& options) {
  try {
    UNSEEN_RETURN_IF_ERROR(CheckDelimiter(options.delimiter));
    std::unique_ptr<CsvFile> f(new CsvFile());
    f->path_ = name;
    f->options_ = options;
    f->owned_ = std::move(bytes);
    f->data_ = f->owned_.data();
    f->size_ = f->owned_.size();
    UNSEEN_RETURN_IF_ERROR(f->ReadHeader());
    return f;
  } catch (const std::exception& e) {
    return Status::Internal(name + ": " + e.what());
  }
}

Status CsvFile::ReadHeader() {
  const char d = options_.delimiter;
  if (size_ >= 3 && std::memcmp(data_, "\xEF\xBB\xBF", 3) == 0) bom_ = 3;
  cached_line_start_ = bom_;
  if (size_ == bom_) {
    return Status::InvalidArgument(FormatLocation(path_, 1, 1) +
                                   ": file is empty; expected a header row");
  }
  RecordParser parser(path_, data_, size_, d, kNoLimit);
  parser.Seek(bom_, 1, bom_);
  UNSEEN_RETURN_IF_ERROR(parser.Next());
  header_end_ = parser.content_end();
  body_begin_ = parser.pos();
  body_line_ = parser.line();

  std::unordered_map<std::string_view, size_t> seen;
  const std::vector<std::string_view>& names = parser.fields();
  for (size_t i = 0; i < names.size(); ++i) {
    const uint64_t at = bom_ + FieldOffsetIn(parser.raw(), d, i);
    if (names[i].empty()) {
      return Status::InvalidArgument(Location(at) + ": empty header name in column " +
                                     std::to_string(i + 1) + "; expected a non-empty name");
    }
    auto [it, inserted] = seen.emplace(names[i], i);
    if (!inserted) {
      const uint64_t first = bom_ + FieldOffsetIn(parser.raw(), d, it->second);
      return Status::InvalidArgument(
          Location(at) + ": duplicate header name \"" + std::string(names[i]) + "\" in column " +
          std::to_string(i + 1) + "; the first is column " + std::to_string(it->second + 1) +
          " at " + Location(first) + "; expected unique names");
    }
  }
  header_.assign(names.begin(), names.end());
  return Status::OK();
}

void CsvFile::Release(uint64_t upto, uint64_t* released) const {
  if (mapped_) ReleaseBehind(data_, upto, released);
}

CsvFile::~CsvFile() {
  if (mapped_) munmap(const_cast<char*>(data_), size_);
}

uint64_t CsvFile::EstimateRecords() const {
  constexpr uint64_t kSample = uint64_t{1} << 20;
  if (body_begin_ >= size_) return 0;
  const uint64_t body = size_ - body_begin_;
  const uint64_t sampled = std::min(body, kSample);
  const char* const begin = data_ + body_begin_;
  const char* const end = begin + sampled;
  uint64_t lines = 0;
  for (const char* p = begin;
       (p = static_cast<const char*>(std::memchr(p, '\n', static_cast<size_t>(end - p))));) {
    ++lines;
    ++p;
  }
  if (sampled == body) return lines + (begin[sampled - 1] != '\n' ? 1 : 0);
  if (lines == 0) return 1;
  return lines * body / sampled + 1;
}

std::string_view CsvFile::header_raw() const {
  return {data_ + bom_, static_cast<size_t>(header_end_ - bom_)};
}

Status CsvFile::GuardedPass(const char* what,
                            const std::function<Status(uint64_t* released)>& body) const {
  uint64_t released = 0;
  Status status;
  try {
    status = body(&released);
  } catch (const std::exception& e) {
    status = Status::Internal(path_ + ": while reading " + what + ": " + e.what());
  } catch (...) {
    status = Status::Internal(path_ + ": while reading " + what + ": an unknown exception");
  }
  Release(size_, &released);
  return status;
}

Status CsvFile::ForEachRecord(const std::function<Status(const CsvRecord&)>& fn) const {
  return GuardedPass("records", [&](uint64_t* released_at) -> Status {
    uint64_t& released = *released_at;
    const size_t columns = header_.size();
    RecordParser parser(path_, data_, size_, options_.delimiter, columns);
    parser.Seek(body_begin_, body_line_, body_line_ == 1 ? bom_ : body_begin_);
    CsvRecord record{};
    uint64_t index = 0;
    Status status;
    while (!parser.AtEnd()) {
      status = parser.Next();
      if (!status.ok()) break;
      status = CheckFieldCount(*this, parser, columns);
      if (!status.ok()) break;
      record.index = index++;
      record.line = parser.record_line();
      record.offset = parser.record_begin();
      record.raw = parser.raw();
      record.raw_line = std::string_view(record.raw.data(), parser.pos() - record.offset);
      record.fields = &parser.fields();
      status = fn(record);
      if (!status.ok()) break;
      if (parser.pos() - released >= kReleaseBytes + kReleaseLag) {
        Release(parser.pos() - kReleaseLag, &released);
      }
    }
    return status;
  });
}

Status CsvFile::ForEachRecordParsing(const std::vector<uint32_t>& parse,
                                     const std::function<Status(const CsvRecord&)>& fn) const {
  return GuardedPass("records", [&](uint64_t* released_at) -> Status {
    uint64_t& released = *released_at;
    const size_t columns = header_.size();
    RecordParser parser(path_, data_, size_, options_.delimiter, columns);
    const char* const end = data_ + size_;
    const char* p = data_ + body_begin_;
    const char* next_quote = p;
    uint64_t line = body_line_;
    uint64_t line_start = body_line_ == 1 ? bom_ : body_begin_;
    size_t next_parse = 0;
    CsvRecord record{};
    Status status;
    uint64_t index = 0;
    for (; p < end; ++index) {
      record.index = index;
      record.line = line;
      record.offset = static_cast<uint64_t>(p - data_);
      if (next_parse < parse.size() && parse[next_parse] == index) {
        ++next_parse;
        parser.Seek(record.offset, line, line_start);
        status = parser.Next();
        if (!status.ok()) break;
        status = CheckFieldCount(*this, parser, columns);
        if (!status.ok()) break;
        record.raw = parser.raw();
        record.raw_line = std::string_view(p, parser.pos() - record.offset);
        record.fields = &parser.fields();
        line = parser.line();
        p = data_ + parser.pos();
        if (p[-1] == '\n') line_start = parser.pos();
      } else {
        uint64_t inner = 0;
        const char* lf = RecordEnd(p, end, &next_quote, &inner);
        const char* content_end = lf < end && lf > p && lf[-1] == '\r' ? lf - 1 : lf;
        const char* next = lf < end ? lf + 1 : end;
        record.raw = std::string_view(p, static_cast<size_t>(content_end - p));
        record.raw_line = std::string_view(p, static_cast<size_t>(next - p));
        record.fields = nullptr;
        line += inner + (lf < end);
        if (lf < end) line_start = static_cast<uint64_t>(next - data_);
        p = next;
      }
      status = fn(record);
      if (!status.ok()) break;
      const uint64_t pos = static_cast<uint64_t>(p - data_);
      if (pos - released >= kReleaseBytes + kReleaseLag) Release(pos - kReleaseLag, &released);
    }
    if (status.ok() && next_parse < parse.size()) {
      status = Status::InvalidArgument(path_ + ": has " + std::to_string(index) +
                                       " records; expected a record with index " +
                                       std::to_string(parse[next_parse]));
    }
    return status;
  });
}

Status CsvFile::ForEachChunk(size_t chunk_bytes,
                             const std::function<Status(std::string_view)>& fn) const {
  if (chunk_bytes == 0) chunk_bytes = size_t{1} << 20;
  return GuardedPass("chunks", [&](uint64_t* released) -> Status {
    Status status;
    for (uint64_t pos = 0; pos < size_ && status.ok();) {
      const uint64_t n = std::min<uint64_t>(chunk_bytes, size_ - pos);
      status = fn(std::string_view(data_ + pos, static_cast<size_t>(n)));
      pos += n;
      if (pos - *released >= kReleaseBytes) Release(pos, released);
    }
    return status;
  });
}

Result<FileDigest> CsvFile::Sha256() const {
  unseen::Sha256 hasher;
  FileDigest out;
  UNSEEN_RETURN_IF_ERROR(ForEachChunk(0, [&](std::string_view chunk) {
    hasher.Update(chunk);
    out.size += chunk.size();
    return Status::OK();
  }));
  out.sha256 = hasher.Finish();
  return out;
}

void CsvFile::LineOf(uint64_t offset, uint64_t* line, uint64_t* line_start) const {
  std::lock_guard<std::mutex> lock(location_mu_);
  uint64_t from = 0;
  uint64_t n = 1;
  uint64_t start = bom_;
  if (offset >= cached_offset_) {
    from = cached_offset_;
    n = cached_line_;
    start = cached_line_start_;
  }
  uint64_t released = from;
  for (const char* p = data_ + from; p < data_ + offset;) {
    const void* q = std::memchr(p, '\n', static_cast<size_t>(data_ + offset - p));
    if (q == nullptr) break;
    ++n;
    p = static_cast<const char*>(q) + 1;
    start = static_cast<uint64_t>(p - data_);
    if (start - released >= kReleaseBytes) Release(start, &released);
  }
  cached_offset_ = offset;
  cached_line_ = n;
  cached_line_start_ = start;
  *line = n;
  *line_start = start;
}

std::string CsvFile::Location(uint64_t offset) const {
  if (offset > size_) offset = size_;
  uint64_t line = 1;
  uint64_t start = 0;
  LineOf(offset, &line, &start);
  const uint64_t col = offset > start ? CountChars(data_ + start, data_ + offset) + 1 : 1;
  return FormatLocation(path_, line, col);
}

uint64_t CsvFile::FieldOffset(const CsvRecord& record, size_t column) const {
  return record.offset + FieldOffsetIn(record.raw, options_.delimiter, column);
}

void SplitWellFormedRecord(std::string_view raw, char delimiter,
                           std::vector<std::string_view>* fields, std::string* scratch) {
  fields->clear();
  scratch->clear();
  scratch->reserve(raw.size());  // unescaped values are shorter: no reallocation below
  const char* p = raw.data();
  const char* const end = p + raw.size();
  for (;;) {
    if (p < end && *p == '"') {
      const char* const value = ++p;
      bool doubled = false;
      for (; p < end; ++p) {
        if (*p != '"') continue;
        if (p + 1 < end && p[1] == '"') {
          doubled = true;
          ++p;
          continue;
        }
        break;
      }
      std::string_view v(value, static_cast<size_t>(p - value));
      if (doubled) {
        const size_t at = scratch->size();
        for (size_t k = 0; k < v.size(); ++k) {
          scratch->push_back(v[k]);
          if (v[k] == '"') ++k;
        }
        v = std::string_view(scratch->data() + at, scratch->size() - at);
      }
      fields->push_back(v);
      if (p < end) ++p;  // the closing quote
    } else {
      const void* at = std::memchr(p, delimiter, static_cast<size_t>(end - p));
      const char* q = at ? static_cast<const char*>(at) : end;
      fields->emplace_back(p, static_cast<size_t>(q - p));
      p = q;
    }
    if (p >= end || *p != delimiter) return;
    ++p;  // the delimiter: another field follows, maybe empty
  }
}

}  // namespace unseen
