#include "harness/data/csv.h"

#include <gtest/gtest.h>

#include <cmath>
#include <cstdio>
#include <fstream>
#include <random>
#include <string>
#include <vector>

#include "tests/testing/testing.h"

namespace unseen {
namespace {

using testing::TempDir;
using testing::WriteFile;
using Rows = std::vector<std::vector<std::string>>;

// What a whole pass over a file produced.
struct Parsed {
  Status status;
  std::vector<std::string> header;
  Rows rows;
  std::vector<CsvRecord> records;  // raw views cleared; index, line and offset kept
  std::vector<std::string> raws;
};

class CsvTest : public ::testing::Test {
 protected:
  // Writes `content` to a fresh file and returns its path.
  std::string Write(const std::string& content) {
    std::string path = dir_.File("f" + std::to_string(++files_) + ".csv");
    WriteFile(path, content);
    return path;
  }

  Result<std::unique_ptr<CsvFile>> Open(const std::string& content, char delimiter = ',') {
    CsvOptions options;
    options.delimiter = delimiter;
    last_path_ = Write(content);
    return CsvFile::Open(last_path_, options);
  }

  // Opens and reads every record; Open errors land in status.
  Parsed Parse(const std::string& content, char delimiter = ',') {
    Parsed out;
    auto csv = Open(content, delimiter);
    if (!csv.ok()) {
      out.status = csv.status();
      return out;
    }
    out.header = (*csv)->header();
    out.status = (*csv)->ForEachRecord([&](const CsvRecord& r) {
      out.rows.emplace_back(r.fields->begin(), r.fields->end());
      out.raws.emplace_back(r.raw);
      CsvRecord kept = r;
      kept.raw = {};
      kept.fields = nullptr;
      out.records.push_back(kept);
      return Status::OK();
    });
    return out;
  }

  // The expected message prefix "PATH:LINE:COL: " for the last file written.
  std::string At(int line, int col) const {
    return last_path_ + ":" + std::to_string(line) + ":" + std::to_string(col) + ": ";
  }

  static bool StartsWith(const std::string& s, const std::string& prefix) {
    return s.compare(0, prefix.size(), prefix) == 0;
  }

  TempDir dir_;
  int files_ = 0;
  std::string last_path_;
};

#define EXPECT_ERROR_AT(parsed_status, line, col, needle)                      \
  do {                                                                         \
    const Status st_ = (parsed_status);                                        \
    EXPECT_TRUE(st_.IsInvalidArgument()) << st_.ToString();                    \
    EXPECT_TRUE(StartsWith(st_.message(), At(line, col)))                      \
        << st_.message() << " vs " << At(line, col);                           \
    EXPECT_NE(st_.message().find(needle), std::string::npos) << st_.message(); \
  } while (0)

// ---------------------------------------------------------------------------------------------
// RFC 4180 section 2, rules 1-7, with the RFC's own examples. The reader always treats the first
// record as the header, so in each example the first line is the header.

TEST_F(CsvTest, Rfc4180Rule1RecordsEndWithCrlf) {
  // RFC 4180 section 2 rule 1: "aaa,bbb,ccc CRLF zzz,yyy,xxx CRLF".
  Parsed p = Parse("aaa,bbb,ccc\r\nzzz,yyy,xxx\r\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"aaa", "bbb", "ccc"}));
  EXPECT_EQ(p.rows, (Rows{{"zzz", "yyy", "xxx"}}));
}

TEST_F(CsvTest, Rfc4180Rule2FinalLineBreakIsOptional) {
  // RFC 4180 section 2 rule 2: "aaa,bbb,ccc CRLF zzz,yyy,xxx" (no final CRLF).
  Parsed p = Parse("aaa,bbb,ccc\r\nzzz,yyy,xxx");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.rows, (Rows{{"zzz", "yyy", "xxx"}}));
  EXPECT_EQ(p.raws, (std::vector<std::string>{"zzz,yyy,xxx"}));
}

TEST_F(CsvTest, Rfc4180Rule3HeaderLine) {
  // RFC 4180 section 2 rule 3: "field_name,field_name,field_name CRLF aaa,bbb,ccc CRLF
  // zzz,yyy,xxx CRLF". The RFC repeats one name; ours must be unique, so they are numbered.
  Parsed p = Parse("field_name1,field_name2,field_name3\r\naaa,bbb,ccc\r\nzzz,yyy,xxx\r\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"field_name1", "field_name2", "field_name3"}));
  EXPECT_EQ(p.rows, (Rows{{"aaa", "bbb", "ccc"}, {"zzz", "yyy", "xxx"}}));
}

TEST_F(CsvTest, Rfc4180Rule4SpacesArePartOfAField) {
  // RFC 4180 section 2 rule 4: "aaa,bbb,ccc"; "Spaces are considered part of a field and should
  // not be ignored." The spaced record is our own example of that sentence.
  Parsed p = Parse("aaa,bbb,ccc\n x , y y ,z \n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"aaa", "bbb", "ccc"}));
  EXPECT_EQ(p.rows, (Rows{{" x ", " y y ", "z "}}));
}

TEST_F(CsvTest, Rfc4180Rule5FieldsMayBeQuoted) {
  // RFC 4180 section 2 rule 5: "\"aaa\",\"bbb\",\"ccc\" CRLF zzz,yyy,xxx".
  Parsed p = Parse("\"aaa\",\"bbb\",\"ccc\"\r\nzzz,yyy,xxx");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"aaa", "bbb", "ccc"}));
  EXPECT_EQ(p.rows, (Rows{{"zzz", "yyy", "xxx"}}));
}

TEST_F(CsvTest, Rfc4180Rule6QuotedFieldsHoldLineBreaksAndCommas) {
  // RFC 4180 section 2 rule 6: "\"aaa\",\"b CRLF bb\",\"ccc\" CRLF zzz,yyy,xxx"; the comma case
  // is our own record.
  Parsed p = Parse("\"aaa\",\"b\r\nbb\",\"ccc\"\r\nzzz,yyy,xxx\r\n\"1,2\",\"\",\"x\ny\"\r\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"aaa", "b\r\nbb", "ccc"}));
  EXPECT_EQ(p.rows, (Rows{{"zzz", "yyy", "xxx"}, {"1,2", "", "x\ny"}}));
}

TEST_F(CsvTest, Rfc4180Rule7DoubledQuotes) {
  // RFC 4180 section 2 rule 7: "\"aaa\",\"b\"\"bb\",\"ccc\"".
  Parsed p = Parse("x,y,z\n\"aaa\",\"b\"\"bb\",\"ccc\"\n\"\"\"\",\"a\"\"\"\"b\",\"\"\"q\"\"\"\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.rows, (Rows{{"aaa", "b\"bb", "ccc"}, {"\"", "a\"\"b", "\"q\""}}));
}

// ---------------------------------------------------------------------------------------------
// Line ends, byte order mark, delimiters.

TEST_F(CsvTest, LfCrlfAndMixedLineEndsGiveTheSameRecords) {
  const Rows want = {{"1", "2"}, {"3", "4"}, {"5", "6"}};
  for (const char* text : {"a,b\n1,2\n3,4\n5,6\n", "a,b\r\n1,2\r\n3,4\r\n5,6\r\n",
                           "a,b\r\n1,2\n3,4\r\n5,6", "a,b\n1,2\r\n3,4\n5,6\r\n"}) {
    Parsed p = Parse(text);
    ASSERT_OK(p.status);
    EXPECT_EQ(p.header, (std::vector<std::string>{"a", "b"})) << text;
    EXPECT_EQ(p.rows, want) << text;
  }
}

TEST_F(CsvTest, ByteOrderMarkIsSkipped) {
  auto csv = Open("\xEF\xBB\xBFname,value\n\xC3\xA9t\xC3\xA9,1\n");
  ASSERT_OK(csv);
  EXPECT_EQ((*csv)->header(), (std::vector<std::string>{"name", "value"}));
  EXPECT_EQ((*csv)->header_raw(), "name,value");
  EXPECT_EQ((*csv)->size(), 3u + 11u + 8u);
  EXPECT_EQ((*csv)->Location(3), last_path_ + ":1:1");  // the first name, after the BOM
  EXPECT_EQ((*csv)->Location(7), last_path_ + ":1:5");  // the delimiter
  // "été,1": 'é' is two bytes, so the delimiter at byte offset 14 + 5 is character 4.
  EXPECT_EQ((*csv)->Location(14 + 5), last_path_ + ":2:4");
}

TEST_F(CsvTest, SemicolonAndTabDelimiters) {
  Parsed semi = Parse("a;b\n1,5;\"x;y\"\n", ';');
  ASSERT_OK(semi.status);
  EXPECT_EQ(semi.header, (std::vector<std::string>{"a", "b"}));
  EXPECT_EQ(semi.rows, (Rows{{"1,5", "x;y"}}));

  Parsed tab = Parse("a\tb\tc\n1\t\t3\n\"\t\"\t,\tz\n", '\t');
  ASSERT_OK(tab.status);
  EXPECT_EQ(tab.rows, (Rows{{"1", "", "3"}, {"\t", ",", "z"}}));
}

TEST_F(CsvTest, BadDelimiterIsRejected) {
  for (char d : {'"', '\r', '\n', static_cast<char>(0xC3)}) {
    auto csv = Open("a\n1\n", d);
    EXPECT_TRUE(csv.status().IsInvalidArgument()) << static_cast<int>(d);
  }
}

TEST_F(CsvTest, OneColumnFileKeepsEmptyLinesAsEmptyFields) {
  Parsed p = Parse("x\n1\n\n2\r\n\r\n\n3\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.rows, (Rows{{"1"}, {""}, {"2"}, {""}, {""}, {"3"}}));
  // The zero-length text after the final line end is not a record; one more LF is.
  EXPECT_EQ(Parse("x\n1\n").rows.size(), 1u);
  EXPECT_EQ(Parse("x\n1\n\n").rows, (Rows{{"1"}, {""}}));
}

TEST_F(CsvTest, HeaderOnlyFileHasNoRecords) {
  Parsed p = Parse("a,b");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.header, (std::vector<std::string>{"a", "b"}));
  EXPECT_TRUE(p.rows.empty());
  EXPECT_TRUE(Parse("a,b\r\n").rows.empty());
}

TEST_F(CsvTest, EstimateRecordsCountsTheLinesOfASmallFile) {
  const auto estimate = [this](const std::string& content) {
    auto csv = Open(content);
    EXPECT_OK(csv.status());
    return csv.ok() ? (*csv)->EstimateRecords() : 0;
  };
  EXPECT_EQ(estimate("a,b"), 0u);
  EXPECT_EQ(estimate("a,b\n"), 0u);
  EXPECT_EQ(estimate("a,b\n1,2\n3,4\n"), 2u);
  EXPECT_EQ(estimate("a,b\r\n1,2\r\n3,4"), 2u);  // no final line end
  EXPECT_EQ(estimate("\xEF\xBB\xBF"
                     "a,b\n1,2\n"),
            1u);
}

TEST_F(CsvTest, EstimateRecordsScalesItsSampleToALargeFile) {
  // 300,000 records of 10 to 19 bytes: about 4 MiB, of which the estimate reads one.
  std::string content = "id,value\n";
  for (int i = 0; i < 300000; ++i) {
    content +=
        std::to_string(i % 1000) + "," + std::string(static_cast<size_t>(i % 10), 'x') + "123456\n";
  }
  auto csv = Open(content);
  ASSERT_OK(csv.status());
  const double estimate = static_cast<double>((*csv)->EstimateRecords());
  EXPECT_GT(estimate, 0.97 * 300000);
  EXPECT_LT(estimate, 1.03 * 300000);
}

TEST_F(CsvTest, ValidUtf8EdgesAreAccepted) {
  // U+0080, U+07FF, U+0800, U+FFFF, U+10000, U+10FFFF: the smallest and largest of each length
  // (RFC 3629 section 4 grammar).
  const std::string cell =
      "\xC2\x80\xDF\xBF\xE0\xA0\x80\xEF\xBF\xBF\xF0\x90\x80\x80\xF4\x8F\xBF\xBF";
  Parsed p = Parse("t\n" + cell + "\n\"" + cell + "\"\n");
  ASSERT_OK(p.status);
  EXPECT_EQ(p.rows, (Rows{{cell}, {cell}}));
}

// ---------------------------------------------------------------------------------------------
// Records: index, line, offset, raw, FieldOffset.

TEST_F(CsvTest, RecordPositionsAndRawBytes) {
  // Offsets by hand: "a,b\r\n" is 5 bytes; the first record `1,"x\r\ny"` is 8 bytes plus CRLF
  // and spans lines 2-3; the second starts at 15 on line 4.
  auto csv = Open("a,b\r\n1,\"x\r\ny\"\r\n2,3");
  ASSERT_OK(csv);
  const CsvFile& f = **csv;
  std::vector<std::string> locations;
  int n = 0;
  ASSERT_OK(f.ForEachRecord([&](const CsvRecord& r) {
    if (n == 0) {
      EXPECT_EQ(r.index, 0u);
      EXPECT_EQ(r.line, 2u);
      EXPECT_EQ(r.offset, 5u);
      EXPECT_EQ(r.raw, "1,\"x\r\ny\"");
      EXPECT_EQ(r.raw_line, "1,\"x\r\ny\"\r\n");
      EXPECT_EQ(*r.fields, (std::vector<std::string_view>{"1", "x\r\ny"}));
      EXPECT_EQ(f.FieldOffset(r, 0), 5u);
      EXPECT_EQ(f.FieldOffset(r, 1), 7u);   // the opening quote
      EXPECT_EQ(f.FieldOffset(r, 2), 13u);  // past the record
    } else {
      EXPECT_EQ(r.index, 1u);
      EXPECT_EQ(r.line, 4u);
      EXPECT_EQ(r.offset, 15u);
      EXPECT_EQ(r.raw, "2,3");
      EXPECT_EQ(r.raw_line, "2,3");  // the last line has no line end
      EXPECT_EQ(f.FieldOffset(r, 1), 17u);
    }
    locations.push_back(f.Location(f.FieldOffset(r, 1)));
    ++n;
    return Status::OK();
  }));
  EXPECT_EQ(n, 2);
  EXPECT_EQ(locations, (std::vector<std::string>{last_path_ + ":2:3", last_path_ + ":4:3"}));
  EXPECT_EQ(f.header_raw(), "a,b");
  // Location also works backwards and past the end.
  EXPECT_EQ(f.Location(0), last_path_ + ":1:1");
  EXPECT_EQ(f.Location(11), last_path_ + ":3:1");  // the 'y' after the quoted CRLF
  EXPECT_EQ(f.Location(1000), last_path_ + ":4:4");
}

TEST_F(CsvTest, RawLineKeepsAnLfLineEnd) {
  auto csv = Open("a\n1\n\n");
  ASSERT_OK(csv);
  std::vector<std::string> lines;
  ASSERT_OK((*csv)->ForEachRecord([&](const CsvRecord& r) {
    EXPECT_EQ(r.raw_line.data(), r.raw.data());
    lines.emplace_back(r.raw_line);
    return Status::OK();
  }));
  EXPECT_EQ(lines, (std::vector<std::string>{"1\n", "\n"}));
}

TEST_F(CsvTest, Sha256IsTheDigestOfTheWholeFile) {
  const std::string content = "\xEF\xBB\xBFk,v\n" + std::string(3000, 'x') + ",1\n";
  auto csv = Open(content);
  ASSERT_OK(csv);
  auto d = (*csv)->Sha256();
  ASSERT_OK(d);
  EXPECT_EQ(d->sha256, Sha256Of(content));
  EXPECT_EQ(d->size, content.size());
}

TEST_F(CsvTest, FieldOffsetSkipsQuotedDelimiters) {
  auto csv = Open("a,b,c\n\"x,\"\"y\",,z\n");
  ASSERT_OK(csv);
  std::vector<uint64_t> offsets;
  ASSERT_OK((*csv)->ForEachRecord([&](const CsvRecord& r) {
    for (size_t i = 0; i < 3; ++i) offsets.push_back((*csv)->FieldOffset(r, i));
    return Status::OK();
  }));
  EXPECT_EQ(offsets, (std::vector<uint64_t>{6, 14, 15}));
}

TEST_F(CsvTest, CallbackErrorStopsTheScan) {
  auto csv = Open("a\n1\n2\n3\n");
  ASSERT_OK(csv);
  int calls = 0;
  Status s = (*csv)->ForEachRecord([&](const CsvRecord& r) {
    ++calls;
    return r.index == 1 ? Status::Refused("stop") : Status::OK();
  });
  EXPECT_TRUE(s.IsRefused());
  EXPECT_EQ(s.message(), "stop");
  EXPECT_EQ(calls, 2);
}

TEST_F(CsvTest, ForEachChunkCoversTheWholeFile) {
  const std::string content = "\xEF\xBB\xBFk,v\n" + std::string(1000, 'x') + ",1\n";
  auto csv = Open(content);
  ASSERT_OK(csv);
  std::string joined;
  size_t largest = 0;
  ASSERT_OK((*csv)->ForEachChunk(64, [&](std::string_view chunk) {
    joined.append(chunk);
    largest = std::max(largest, chunk.size());
    return Status::OK();
  }));
  EXPECT_EQ(joined, content);
  EXPECT_EQ(largest, 64u);
}

TEST_F(CsvTest, FromBytesReadsMemoryUnderItsName) {
  auto csv = CsvFile::FromBytes("<held>", "a,b\n1,\"x\"\"y\"\n2,z\"\n", CsvOptions{});
  ASSERT_OK(csv);
  EXPECT_EQ((*csv)->path(), "<held>");
  Rows rows;
  Status s = (*csv)->ForEachRecord([&](const CsvRecord& r) {
    rows.emplace_back(r.fields->begin(), r.fields->end());
    return Status::OK();
  });
  EXPECT_EQ(rows, (Rows{{"1", "x\"y"}}));
  EXPECT_TRUE(s.IsInvalidArgument());
  EXPECT_TRUE(StartsWith(s.message(), "<held>:3:4: quote inside an unquoted field")) << s.message();
  EXPECT_EQ(CsvFile::FromBytes("<held>", "", CsvOptions{}).status().message(),
            "<held>:1:1: file is empty; expected a header row");
}

TEST_F(CsvTest, FromBytesKeepsItsDataPastTheReleaseInterval) {
  // More than the release interval and lag (32 MiB in all): pages of a mapping are released,
  // memory is not.
  std::string text = "k,v\n";
  const std::string row = "key,0123456789abcdef0123456789abcdef0123456789abcdef0123456789a\n";
  const uint64_t rows = (uint64_t{34} << 20) / row.size();
  text.reserve(text.size() + rows * row.size());
  for (uint64_t i = 0; i < rows; ++i) text += row;
  auto csv = CsvFile::FromBytes("<big>", std::move(text), CsvOptions{});
  ASSERT_OK(csv);
  uint64_t n = 0;
  for (int pass = 0; pass < 2; ++pass) {
    ASSERT_OK((*csv)->ForEachRecord([&](const CsvRecord& r) {
      if (r.raw.size() + 1 != row.size() || (*r.fields)[0] != "key") {
        return Status::Internal("record " + std::to_string(r.index) + " changed");
      }
      ++n;
      return Status::OK();
    }));
  }
  EXPECT_EQ(n, 2 * rows);
}

// ---------------------------------------------------------------------------------------------
// Errors: kind and exact FILE:LINE:COL (computed by hand).

TEST_F(CsvTest, UnterminatedQuotePointsAtTheOpeningQuote) {
  Parsed p = Parse("a,b\n1,\"xyz\n2,3\n");
  EXPECT_ERROR_AT(p.status, 2, 3, "unterminated quoted field");
}

TEST_F(CsvTest, QuoteInsideUnquotedField) {
  Parsed p = Parse("a,b\n1,x\"y\n");
  EXPECT_ERROR_AT(p.status, 2, 4, "quote inside an unquoted field");
}

TEST_F(CsvTest, CharacterAfterClosingQuote) {
  Parsed p = Parse("a,b\n1,\"x\"y\n");
  EXPECT_ERROR_AT(p.status, 2, 6, "after the closing quote");
  // A space is not allowed either (spaces are part of fields, RFC 4180 rule 4).
  EXPECT_ERROR_AT(Parse("a,b\n\"1\" ,2\n").status, 2, 4, "expected the delimiter ','");
}

TEST_F(CsvTest, RaggedRows) {
  // Too many: points at the first extra field ("1,2,3": the '3' is column 5).
  Parsed many = Parse("a,b\n1,2,3\n");
  EXPECT_ERROR_AT(many.status, 2, 5, "expected 2 fields, found 3");
  // Too few: points at the end of the record.
  Parsed few = Parse("a,b\n1,2\n1\n");
  EXPECT_ERROR_AT(few.status, 3, 2, "expected 2 fields, found 1");
  EXPECT_EQ(few.rows, (Rows{{"1", "2"}}));  // records before the error were delivered
  // An empty line in the middle of a two-column file, and an extra LF at the end.
  EXPECT_ERROR_AT(Parse("a,b\n1,2\n\n3,4\n").status, 3, 1, "expected 2 fields, found 1");
  EXPECT_ERROR_AT(Parse("a,b\n1,2\n\n").status, 3, 1, "expected 2 fields, found 1");
}

TEST_F(CsvTest, BareCarriageReturnIsRejected) {
  EXPECT_ERROR_AT(Parse("a,b\n1\r2,3\n").status, 2, 2, "carriage return");
  EXPECT_ERROR_AT(Parse("a,b\n1,\"2\"\r").status, 2, 6, "carriage return");
}

TEST_F(CsvTest, ColumnsCountCharactersNotBytes) {
  // "дом" is 3 characters in 6 bytes; then ',' is column 4, 'x' 5 and the quote 6.
  EXPECT_ERROR_AT(Parse("a,b\n\xD0\xB4\xD0\xBE\xD0\xBC,x\"y\n").status, 2, 6,
                  "quote inside an unquoted field");
  // "€€" is 2 characters in 6 bytes, inside quotes; the stray byte after them is column 5.
  EXPECT_ERROR_AT(Parse("a\n\"\xE2\x82\xAC\xE2\x82\xAC\"\xFF\n").status, 2, 5,
                  "after the closing quote");
}

TEST_F(CsvTest, ErrorsAfterQuotedFieldsSpanningLinesCountPhysicalLines) {
  // Record 1 spans lines 2-3; the ragged record starts on line 4 ("2,3,4": '4' is column 5).
  EXPECT_ERROR_AT(Parse("a,b\n\"x\ny\",1\n2,3,4\n").status, 4, 5, "expected 2 fields, found 3");
  // Within the same record: line 3 is `y"z,1`, the 'z' is column 3.
  EXPECT_ERROR_AT(Parse("a,b\n\"x\r\ny\"z,1\n").status, 3, 3, "after the closing quote");
  // An unterminated quote after a multi-line field points at its own line.
  EXPECT_ERROR_AT(Parse("a,b\n\"x\n\ny\",1\n2,\"open\n").status, 5, 3, "unterminated");
}

TEST_F(CsvTest, InvalidUtf8PointsAtTheFirstBadByte) {
  struct Case {
    const char* name;
    std::string bytes;
  };
  // Ill-formed sequences per RFC 3629 section 4 (and Unicode 15 table 3-7).
  const std::vector<Case> cases = {
      {"stray continuation", "\x80"},      {"overlong 2-byte", "\xC0\xAF"},
      {"overlong 3-byte", "\xE0\x80\xAF"}, {"overlong 4-byte", "\xF0\x80\x80\xAF"},
      {"surrogate", "\xED\xA0\x80"},       {"above U+10FFFF", "\xF4\x90\x80\x80"},
      {"lead F5", "\xF5\x80\x80\x80"},     {"byte FF", "\xFF"},
      {"truncated", "\xE2\x82"},           {"missing continuation", "\xC3("},
  };
  for (const Case& c : cases) {
    SCOPED_TRACE(c.name);
    // 'é' (2 bytes) then ',' then 'x' then the bad sequence: column 4 on line 2.
    EXPECT_ERROR_AT(Parse("a,b\n\xC3\xA9,x" + c.bytes + "\n").status, 2, 4, "invalid UTF-8");
    // Inside quotes, on the third line of the field: `q` is column 1, the bad byte column 2.
    EXPECT_ERROR_AT(Parse("a,b\n1,\"p\n\nq" + c.bytes + "\"\n").status, 4, 2, "invalid UTF-8");
  }
  // A sequence cut short by the end of the file.
  EXPECT_ERROR_AT(Parse("a,b\n1,x\xE2\x82").status, 2, 4, "invalid UTF-8");
}

TEST_F(CsvTest, HeaderErrors) {
  auto empty = Open("");
  EXPECT_TRUE(empty.status().IsInvalidArgument());
  EXPECT_EQ(empty.status().message(), At(1, 1) + "file is empty; expected a header row");
  EXPECT_ERROR_AT(Open("\xEF\xBB\xBF").status(), 1, 1, "file is empty");

  EXPECT_ERROR_AT(Open("a,,c\n1,2,3\n").status(), 1, 3, "empty header name in column 2");
  EXPECT_ERROR_AT(Open("\xEF\xBB\xBF,b\n").status(), 1, 1, "empty header name in column 1");
  EXPECT_ERROR_AT(Open("a,b,\"\"\n").status(), 1, 5, "empty header name in column 3");
  EXPECT_ERROR_AT(Open("\n1\n").status(), 1, 1, "empty header name");

  auto dup = Open("id,\xC3\xA9,x,\xC3\xA9\n");
  EXPECT_ERROR_AT(dup.status(), 1, 8, "duplicate header name \"\xC3\xA9\" in column 4");
  EXPECT_NE(dup.status().message().find("the first is column 2 at " + last_path_ + ":1:4"),
            std::string::npos)
      << dup.status().message();

  EXPECT_ERROR_AT(Open("a,b\xC3(\n").status(), 1, 4, "invalid UTF-8");
  EXPECT_ERROR_AT(Open("a,\"b\n").status(), 1, 3, "unterminated quoted field");
}

TEST_F(CsvTest, MissingAndUnreadableFiles) {
  const std::string missing = dir_.File("nope.csv");
  auto r = CsvFile::Open(missing, CsvOptions{});
  EXPECT_TRUE(r.status().IsNotFound()) << r.status().ToString();
  EXPECT_NE(r.status().message().find(missing), std::string::npos);

  auto d = CsvFile::Open(dir_.path(), CsvOptions{});
  EXPECT_TRUE(d.status().IsIOError()) << d.status().ToString();
  EXPECT_NE(d.status().message().find(dir_.path()), std::string::npos);
}

// ---------------------------------------------------------------------------------------------
// Cells.

TEST(CsvCellTest, ParseNumberAcceptsDecimalNumbersOnly) {
  struct Case {
    const char* cell;
    bool ok;
    double value;
  };
  const std::vector<Case> cases = {
      {"1", true, 1.0},      {"1.0", true, 1.0},       {"1e0", true, 1.0},
      {"-0.5", true, -0.5},  {"+3", true, 3.0},        {".5", true, 0.5},
      {"5.", true, 5.0},     {"2.5E-3", true, 0.0025}, {"-12e+2", true, -1200.0},
      {"1e-400", true, 0.0}, {" 1", false, 0},         {"1 ", false, 0},
      {"0x10", false, 0},    {"inf", false, 0},        {"-inf", false, 0},
      {"+inf", false, 0},    {"Infinity", false, 0},   {"nan", false, 0},
      {"NaN", false, 0},     {"1,5", false, 0},        {"", false, 0},
      {"+", false, 0},       {"-", false, 0},          {"+-1", false, 0},
      {"++1", false, 0},     {"1e", false, 0},         {"1e999", false, 0},
      {"-1e999", false, 0},  {"1.2.3", false, 0},      {"e5", false, 0},
      {".", false, 0},       {"1_000", false, 0},
  };
  for (const Case& c : cases) {
    double v = 42.0;
    EXPECT_EQ(ParseNumber(c.cell, &v), c.ok) << '"' << c.cell << '"';
    if (c.ok) {
      EXPECT_EQ(v, c.value) << c.cell;
    } else {
      EXPECT_EQ(v, 42.0) << c.cell;  // unchanged on failure
    }
  }
  double v = 1.0;
  ASSERT_TRUE(ParseNumber("-1e-400", &v));  // underflow keeps its sign
  EXPECT_TRUE(std::signbit(v));
  EXPECT_EQ(v, 0.0);
  // 0.1 and 1e-1 denote the same binary64 value (IEEE 754 round to nearest).
  double a = 0, b = 0;
  ASSERT_TRUE(ParseNumber("0.1", &a));
  ASSERT_TRUE(ParseNumber("1e-1", &b));
  EXPECT_EQ(a, b);
}

TEST(CsvCellTest, IsMissingKnowsExactlyThreeSpellings) {
  EXPECT_TRUE(IsMissing(""));
  EXPECT_TRUE(IsMissing("NA"));
  EXPECT_TRUE(IsMissing("NaN"));
  for (const char* cell : {"na", "nan", "NAN", "N/A", " ", "NA ", "null", "0", "-"}) {
    EXPECT_FALSE(IsMissing(cell)) << cell;
  }
}

// ---------------------------------------------------------------------------------------------
// Differential and volume tests.

// A plain byte-by-byte reading of the same grammar, for valid input only.
Rows ReferenceParse(const std::string& text, char delimiter) {
  Rows rows(1);
  std::string field;
  size_t i = 0;
  while (i < text.size()) {
    if (text[i] == '"') {
      for (++i;; ++i) {
        if (text[i] == '"' && i + 1 < text.size() && text[i + 1] == '"') {
          field += '"';
          ++i;
        } else if (text[i] == '"') {
          ++i;
          break;
        } else {
          field += text[i];
        }
      }
    }
    while (i < text.size() && text[i] != delimiter && text[i] != '\n' && text[i] != '\r') {
      field += text[i++];
    }
    rows.back().push_back(field);
    field.clear();
    if (i == text.size()) break;
    if (text[i] == delimiter) {
      ++i;
      if (i == text.size()) rows.back().push_back("");
      continue;
    }
    i += text[i] == '\r' ? 2 : 1;
    if (i < text.size()) rows.emplace_back();
  }
  return rows;
}

TEST_F(CsvTest, AgreesWithAPlainReaderAcrossBlockBoundaries) {
  // Fields of every length from 0 to 150 bytes, quoted or not, with doubled quotes, delimiters,
  // CR, LF and multi-byte characters inside quotes, so that every kind of special byte lands on
  // every position of the parser's 64-byte blocks.
  std::mt19937 rng(12345);
  const char* pieces[] = {"a", "bc", "\xC3\xA9", "\xE2\x82\xAC", "\xF0\x9F\x99\x82", " ", "9"};
  const char* quoted_pieces[] = {"\"\"", ",", "\r\n", "\n", "\r", "x", "\xC3\xA9", "yz"};
  for (int round = 0; round < 20; ++round) {
    const size_t columns = 1 + rng() % 5;
    std::string text;
    for (size_t r = 0; r < 200; ++r) {
      for (size_t c = 0; c < columns; ++c) {
        if (c > 0) text += ',';
        const size_t length = rng() % 150;
        std::string cell;
        const bool quoted = rng() % 3 == 0;
        while (cell.size() < length) {
          cell += quoted ? quoted_pieces[rng() % 8] : pieces[rng() % 7];
        }
        if (r == 0 && cell.empty()) cell = "h";
        if (r == 0) cell += std::to_string(c);  // unique header names
        text += quoted ? "\"" + cell + "\"" : cell;
      }
      text += rng() % 2 ? "\n" : "\r\n";
    }
    Rows want = ReferenceParse(text, ',');
    Parsed got = Parse(text);
    ASSERT_OK(got.status);
    ASSERT_EQ(got.rows.size() + 1, want.size()) << "round " << round;
    EXPECT_EQ(std::vector<std::string>(got.header), want[0]);
    for (size_t r = 0; r < got.rows.size(); ++r) {
      ASSERT_EQ(got.rows[r], want[r + 1]) << "round " << round << " record " << r;
    }
  }
}

// Peak file-backed resident memory of this process, in bytes (Linux /proc/self/status RssFile).
uint64_t RssFileBytes() {
  std::ifstream f("/proc/self/status");
  std::string line;
  while (std::getline(f, line)) {
    if (line.rfind("RssFile:", 0) == 0) return std::stoull(line.substr(8)) * 1024;
  }
  return 0;
}

TEST_F(CsvTest, FiftyMegabyteFileStreamsWithBoundedMemory) {
  // One block of 10000 varied rows (about 440 KB), written until the file passes 50 MB.
  std::string block;
  uint64_t block_ones = 0;
  char line[160];
  for (unsigned i = 0; i < 10000; ++i) {
    const int n = std::snprintf(line, sizeof line, "%u,g%u,%.4f,%u,\"n, %u \"\"q\"\"\"\r\n", i,
                                i % 97, i * 0.37, i % 3 == 0 ? 1u : 0u, i * 7919);
    block.append(line, static_cast<size_t>(n));
    block_ones += i % 3 == 0;
  }
  const std::string path = dir_.File("big.csv");
  uint64_t want_records = 0;
  uint64_t want_ones = 0;
  {
    std::ofstream out(path, std::ios::binary);
    out << "id,group,value,label,note\n";
    for (uint64_t written = 0; written < 50 * 1000 * 1000; written += block.size()) {
      out.write(block.data(), static_cast<std::streamsize>(block.size()));
      want_records += 10000;
      want_ones += block_ones;
    }
    ASSERT_TRUE(out.good());
  }
  auto csv = CsvFile::Open(path, CsvOptions{});
  ASSERT_OK(csv);
  ASSERT_GE((*csv)->size(), 50u * 1000 * 1000);
  const uint64_t rss_before = RssFileBytes();
  uint64_t rss_peak = rss_before;
  uint64_t records = 0;
  uint64_t value_sum = 0;
  ASSERT_OK((*csv)->ForEachRecord([&](const CsvRecord& r) {
    if (r.index != records) return Status::Internal("index out of order");
    ++records;
    value_sum += (*r.fields)[3] == "1";
    if (r.index == 10003 && (*r.fields)[4] != "n, 23757 \"q\"") {  // row 3 of block 2
      return Status::Internal("wrong note: " + std::string((*r.fields)[4]));
    }
    if (r.index % 65536 == 0) rss_peak = std::max(rss_peak, RssFileBytes());
    return Status::OK();
  }));
  EXPECT_EQ(records, want_records);
  EXPECT_EQ(value_sum, want_ones);
  // The reader releases consumed pages every 32 MiB, so the mapping never holds much more.
  EXPECT_LT(rss_peak - rss_before, uint64_t{40} << 20);
  EXPECT_LT(RssFileBytes(), rss_before + (uint64_t{8} << 20));  // all released at the end
}

// ForEachRecordParsing() must cut a well-formed file exactly where ForEachRecord() does, and give
// the parsed records the same fields, whichever records are parsed.
TEST_F(CsvTest, ParsingSomeRecordsCutsTheFileAsReadingAllDoes) {
  const std::vector<std::string> files = {
      "a,b\n1,2\n3,4\n5,6\n",
      "a,b\r\n1,2\r\n3,4\r\n5,6",  // CRLF, no final line end
      "\xEF\xBB\xBF"
      "a,b\n\"x\ny\",2\n\"q\"\"\"\"\",4\n\"\",\"\r\n\"\r\n",  // BOM, LF in quotes
      "a\n\n1\n\n",                                           // empty records
      "a,b\n\"1\n\n2\",\"3\"\"\n\"\n4,5\r\n6,\"7\"\n",        // several LFs in one field
  };
  for (const std::string& content : files) {
    SCOPED_TRACE(content);
    Parsed all = Parse(content);
    ASSERT_OK(all.status);
    auto csv = CsvFile::Open(last_path_, CsvOptions{});
    ASSERT_OK(csv);
    const size_t n = all.records.size();
    ASSERT_LE(n, 8u);
    for (uint32_t mask = 0; mask < (1u << n); ++mask) {
      std::vector<uint32_t> parse;
      for (uint32_t i = 0; i < n; ++i) {
        if (mask & (1u << i)) parse.push_back(i);
      }
      size_t seen = 0;
      ASSERT_OK((*csv)->ForEachRecordParsing(parse, [&](const CsvRecord& r) {
        const CsvRecord& want = all.records.at(seen);
        EXPECT_EQ(r.index, want.index);
        EXPECT_EQ(r.line, want.line);
        EXPECT_EQ(r.offset, want.offset);
        EXPECT_EQ(std::string(r.raw), all.raws.at(seen));
        EXPECT_EQ(r.raw_line.data(), r.raw.data());
        EXPECT_EQ(r.raw_line.size(), want.raw_line.size()) << "record " << seen;
        const bool parsed = (mask >> seen) & 1;
        EXPECT_EQ(r.fields != nullptr, parsed);
        if (parsed) {
          EXPECT_EQ(std::vector<std::string>(r.fields->begin(), r.fields->end()),
                    all.rows.at(seen));
        }
        // The plain splitter gives the same fields for a record the reader has checked.
        std::vector<std::string_view> split;
        std::string scratch;
        SplitWellFormedRecord(r.raw, ',', &split, &scratch);
        EXPECT_EQ(std::vector<std::string>(split.begin(), split.end()), all.rows.at(seen));
        ++seen;
        return Status::OK();
      }));
      EXPECT_EQ(seen, n) << "mask " << mask;
    }
  }
}

// The search for quotes looks a window ahead at a time: quoted fields far apart, past several
// windows of plain records, must still be followed.
TEST_F(CsvTest, ParsingSomeRecordsFollowsQuotesFarApart) {
  std::string content = "id,note\n";
  for (int block = 0; block < 4; ++block) {
    for (int i = 0; i < 40000; ++i) content += std::to_string(i) + ",plain text of a row\n";
    content += "q" + std::to_string(block) + ",\"two\nlines, \"\"quoted\"\"\"\r\n";
  }
  Parsed all = Parse(content);
  ASSERT_OK(all.status);
  ASSERT_GT(content.size(), size_t{3} << 20);
  auto csv = CsvFile::Open(last_path_, CsvOptions{});
  ASSERT_OK(csv);
  for (uint32_t step : {1u, 7u, 40001u, 1000000u}) {
    std::vector<uint32_t> parse;
    for (uint32_t i = 3; i < all.records.size(); i += step) parse.push_back(i);
    size_t seen = 0, next = 0, mismatches = 0;
    ASSERT_OK((*csv)->ForEachRecordParsing(parse, [&](const CsvRecord& r) {
      const CsvRecord& want = all.records.at(seen);
      mismatches += r.index != want.index || r.line != want.line || r.offset != want.offset ||
                    r.raw != all.raws.at(seen) || r.raw_line.size() != want.raw_line.size();
      const bool parsed = next < parse.size() && parse[next] == seen;
      next += parsed;
      mismatches += (r.fields != nullptr) != parsed;
      if (parsed) {
        mismatches +=
            std::vector<std::string>(r.fields->begin(), r.fields->end()) != all.rows.at(seen);
      }
      ++seen;
      return Status::OK();
    }));
    EXPECT_EQ(seen, all.records.size()) << "step " << step;
    EXPECT_EQ(mismatches, 0u) << "step " << step;
  }
}

TEST_F(CsvTest, ParsingSomeRecordsChecksThoseItParses) {
  auto csv = Open("a,b\n1,2\n3\n4,5\n");
  ASSERT_OK(csv);
  // The ragged record is not looked at unless it is parsed.
  ASSERT_OK((*csv)->ForEachRecordParsing({0, 2}, [](const CsvRecord&) { return Status::OK(); }));
  EXPECT_ERROR_AT((*csv)->ForEachRecordParsing({1}, [](const CsvRecord&) { return Status::OK(); }),
                  3, 2, "ragged row: expected 2 fields, found 1");
  const Status past =
      (*csv)->ForEachRecordParsing({2, 7}, [](const CsvRecord&) { return Status::OK(); });
  EXPECT_TRUE(past.IsInvalidArgument()) << past.ToString();
  EXPECT_NE(past.message().find("has 3 records; expected a record with index 7"), std::string::npos)
      << past.message();
}

}  // namespace
}  // namespace unseen
