// CsvFile: a strict, streaming RFC 4180 reader over a memory-mapped file.
//
// Open() maps the file and reads the header row; ForEachRecord() then hands every data record to
// a callback, validating quoting, field counts and UTF-8 as it goes. Resident memory stays bounded
// however large the file is: pages already read are returned to the kernel behind the cursor.
// Thread-safety: a CsvFile is immutable after Open(); its const methods may be called from
// several threads at once.
//
// Example:
//   UNSEEN_ASSIGN_OR_RETURN(std::unique_ptr<CsvFile> csv, CsvFile::Open(path, CsvOptions{}));
//   UNSEEN_RETURN_IF_ERROR(csv->ForEachRecord([&](const CsvRecord& r) -> Status {
//     double x;
//     if (!ParseNumber((*r.fields)[2], &x)) {
//       return Status::InvalidArgument(csv->Location(csv->FieldOffset(r, 2)) +
//                                      ": expected a number");
//     }
//     return Status::OK();
//   }));
#ifndef UNSEEN_HARNESS_DATA_CSV_H_
#define UNSEEN_HARNESS_DATA_CSV_H_

#include <cstddef>
#include <cstdint>
#include <functional>
#include <memory>
#include <mutex>
#include <string>
#include <string_view>
#include <vector>

#include "storage/digest.h"
#include "storage/status.h"

namespace unseen {

struct CsvOptions {
  // The field separator. Default: ','. REQUIRES: an ASCII character other than '"', '\r' and
  // '\n'; Open() returns InvalidArgument otherwise.
  char delimiter = ',';
};

// One data record, as handed to the ForEachRecord() callback. The views (raw and the fields) are
// valid only during the callback; copy what must outlive it.
struct CsvRecord {
  uint64_t index;        // 0-based data row number (the header is not a data row)
  uint64_t line;         // 1-based physical line on which the record starts
  uint64_t offset;       // byte offset of the record's first byte in the file
  std::string_view raw;  // the record's bytes exactly as in the file, without its line terminator
  std::string_view raw_line;  // raw and its line terminator as in the file: LF, CRLF, or none
                              // (the last record of a file without a final line end)
  const std::vector<std::string_view>* fields;  // unescaped field values, one per header column
};

// A CSV file with a header row. Grammar: RFC 4180, with LF or CRLF line ends (mixed is fine),
// any ASCII delimiter, an optional UTF-8 byte order mark, and UTF-8 text throughout. A quoted
// field may hold delimiters, doubled quotes and line ends (CR and LF inside quotes are kept).
// Outside quotes a CR must be followed by LF. The zero-length text after a final line end is not
// a record; any other empty line is a record with one empty field (so it is ragged unless the
// file has exactly one column).
//
// The file must not be truncated or rewritten while a CsvFile maps it.
class CsvFile {
 public:
  // Maps `path` and parses its header row. On success returns the open file. Errors:
  //   NotFound: the file does not exist; IOError: it is not a regular file or cannot be opened,
  //   stat'ed or mapped (the message names the path); InvalidArgument: a bad delimiter, or a bad
  //   header, with a message starting "FILE:LINE:COL: " — an empty file (or one holding only a
  //   byte order mark), an empty or duplicate header name, invalid UTF-8 or bad quoting in the
  //   header row. A UTF-8 byte order mark at the start is skipped and is not part of any name.
  static Result<std::unique_ptr<CsvFile>> Open(const std::string& path, const CsvOptions& options);

  // Like Open(), but reads `bytes` held in memory (for data that must never touch the disk);
  // `name` stands for the path in messages and in path(). Errors as for Open(), minus the file
  // system ones.
  static Result<std::unique_ptr<CsvFile>> FromBytes(const std::string& name, std::string bytes,
                                                    const CsvOptions& options);

  ~CsvFile();
  // Non-copyable and non-movable: a CsvFile owns its mapping, and record views point into it.
  CsvFile(const CsvFile&) = delete;
  CsvFile& operator=(const CsvFile&) = delete;

  const std::string& path() const { return path_; }
  // The unescaped header names, in column order; never empty.
  const std::vector<std::string>& header() const { return header_; }
  // The header record's bytes as in the file (after any byte order mark), without terminator.
  std::string_view header_raw() const;
  // The file size in bytes.
  uint64_t size() const { return size_; }
  // About how many data records the file holds, from the line ends in its first MiB after
  // the header (exact for a smaller body without quoted line ends): for reserving room before
  // a pass, never for a count. Does not read past that MiB.
  uint64_t EstimateRecords() const;

  // Calls `fn` for every data record in file order. Returns OK when every record was read and
  // every call returned OK; stops at the first non-OK Status from `fn` and returns it; returns
  // InvalidArgument "FILE:LINE:COL: ..." at the first malformed record: an unterminated quoted
  // field (pointing at its opening quote), a quote inside an unquoted field, a character other
  // than the delimiter or a line end after a closing quote, a CR without LF outside quotes, a
  // ragged row ("expected N fields, found M"), or invalid UTF-8 (pointing at the first byte of
  // the ill-formed sequence). Records before the error have been passed to `fn`. Exceptions
  // thrown by `fn` are caught and returned as Internal. May be called any number of times.
  // record.raw and record.raw_line view the file's mapping (or FromBytes data) and stay
  // readable while the CsvFile lives, so `fn` may hand them to another thread. Pages more than
  // 16 MiB behind the cursor are returned to the kernel (and read in again if touched): a
  // thread that stays less than 16 MiB behind keeps resident memory bounded.
  Status ForEachRecord(const std::function<Status(const CsvRecord&)>& fn) const;

  // Like ForEachRecord(), for a file already known to be well formed: one that ForEachRecord()
  // has read whole before and whose bytes have been checked since (by SHA-256, say). Only the
  // records whose indices are in `parse` (strictly ascending) are parsed and checked as
  // ForEachRecord() checks them, and come with their fields; every other record is found by its
  // line end alone, following quotes and nothing else, and comes with fields == nullptr (index,
  // line, offset, raw and raw_line are set as ForEachRecord() sets them). Several times faster
  // than ForEachRecord() when few records are parsed. In a file that is not well formed, the
  // records not parsed may be cut in the wrong places; the caller must check the bytes.
  Status ForEachRecordParsing(const std::vector<uint32_t>& parse,
                              const std::function<Status(const CsvRecord&)>& fn) const;

  // Calls `fn` with the whole file (byte order mark included) as consecutive chunks of at most
  // `chunk_bytes` bytes (0 means 1 MiB), in order, with bounded resident memory; for hashing
  // or copying a file of any size. The view is valid only during the call. Returns OK, or the
  // first non-OK Status from `fn`.
  Status ForEachChunk(size_t chunk_bytes, const std::function<Status(std::string_view)>& fn) const;

  // The SHA-256 and size of the whole file (byte order mark included), hashed from the mapping
  // with bounded resident memory: the same bytes the records are read from, with no copy.
  // Internal on an exception (none is expected).
  Result<FileDigest> Sha256() const;

  // "FILE:LINE:COL" for a byte offset (an offset past the end means the end of the file). LINE
  // is 1-based and counts LF (CRLF is one line end; LFs inside quoted fields count too); COL is
  // 1-based and counts UTF-8 characters from the line start (on line 1, from after the byte
  // order mark). Takes time linear in the distance from the previous call's offset (or from the
  // start): meant for error messages, not for every field.
  std::string Location(uint64_t offset) const;

  // The byte offset of the first byte of field `column` of `record` (its opening quote if it is
  // quoted), found by re-scanning record.raw; for error paths only. A `column` at or past the
  // record's field count yields the offset just past the record (its line terminator).
  uint64_t FieldOffset(const CsvRecord& record, size_t column) const;

 private:
  CsvFile() = default;
  // Parses the header of data_; sets bom_, header_, header_end_, body_begin_, body_line_.
  Status ReadHeader();
  // Runs one pass over the mapping: returns body's status, or Internal "PATH: while reading
  // WHAT: ..." for an exception it throws; afterwards returns every page to the kernel. `body`
  // tracks *released as Release() does.
  Status GuardedPass(const char* what, const std::function<Status(uint64_t* released)>& body) const;
  // Returns the pages of the mapping below `upto` to the kernel (no-op for FromBytes data).
  void Release(uint64_t upto, uint64_t* released) const;
  // Line number and line-start offset for `offset`, counting from a cached earlier position.
  void LineOf(uint64_t offset, uint64_t* line, uint64_t* line_start) const;

  std::string path_;
  CsvOptions options_;
  const char* data_ = nullptr;  // size_ bytes: the mapping or owned_; nullptr when empty
  uint64_t size_ = 0;
  bool mapped_ = false;      // data_ is a mapping of the file (else owned_ or nothing)
  std::string owned_;        // the bytes given to FromBytes()
  uint64_t bom_ = 0;         // 3 when the file starts with a UTF-8 byte order mark, else 0
  uint64_t header_end_ = 0;  // offset just past the header's content (before its terminator)
  uint64_t body_begin_ = 0;  // offset of the first data record
  uint64_t body_line_ = 1;   // line on which the first data record starts
  std::vector<std::string> header_;

  // Location() cache: the line number and line start of a known offset.
  mutable std::mutex location_mu_;
  mutable uint64_t cached_offset_ = 0;
  mutable uint64_t cached_line_ = 1;
  mutable uint64_t cached_line_start_ = 0;
};

// Splits `raw`, the bytes of one record of a well-formed file (as CsvRecord::raw gives them,
// from a pass that found no error in it), into its unescaped fields, which replace *fields. A
// field with doubled quotes is unescaped into *scratch, which the views then point into: keep
// it unchanged while they are used. Nothing is checked: on bytes that are not such a record the
// fields are meaningless (but every view stays within raw or *scratch).
void SplitWellFormedRecord(std::string_view raw, char delimiter,
                           std::vector<std::string_view>* fields, std::string* scratch);

// True for the missing-value spellings "", "NA" and "NaN" (exactly these, case-sensitive).
inline bool IsMissing(std::string_view cell) {
  return cell.empty() || cell == "NA" || cell == "NaN";
}

// Parses `cell` as a decimal number and stores it in *out. Returns true only when the whole cell
// is one number in std::from_chars general format (digits, optional '.', optional exponent),
// with an optional leading '+' or '-', no surrounding spaces, and a finite value (a value too
// small to represent becomes a signed zero). "inf", "nan" and hex are not numbers. On false,
// *out is unchanged.
bool ParseNumber(std::string_view cell, double* out);

}  // namespace unseen

#endif  // UNSEEN_HARNESS_DATA_CSV_H_
