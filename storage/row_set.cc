#include "storage/row_set.h"

#include <roaring/roaring.h>

#include <cstdlib>
#include <cstring>

namespace unseen {
namespace {

// Portable Roaring format constants (RoaringFormatSpec).
constexpr uint32_t kCookieNoRun = 12346;
constexpr uint32_t kCookieRun = 12347;      // low 16 bits; high 16 bits = containers - 1
constexpr uint32_t kNoOffsetThreshold = 4;  // with runs, offsets only from 4 containers
constexpr uint32_t kMaxArrayCard = 4096;
constexpr size_t kBitsetBytes = 8192;
constexpr uint32_t kMaxContainers = 1 << 16;
constexpr uint32_t kIterBatch = 4096;

roaring_bitmap_t* CheckAlloc(roaring_bitmap_t* b) {
  if (b == nullptr) std::abort();  // CRoaring returns null only when out of memory
  return b;
}

// Calls fn(row) for each row of `b` in ascending order, in batches.
template <typename Fn>
void ForEachRow(const roaring_bitmap_t* b, Fn&& fn) {
  roaring_uint32_iterator_t it;
  roaring_init_iterator(b, &it);
  uint32_t buf[kIterBatch];
  for (uint32_t n; (n = roaring_read_uint32_iterator(&it, buf, kIterBatch)) > 0;) {
    for (uint32_t i = 0; i < n; ++i) fn(buf[i]);
  }
}

void PutU16(std::string* out, uint32_t v) {
  out->push_back(static_cast<char>(v & 0xff));
  out->push_back(static_cast<char>((v >> 8) & 0xff));
}
void PutU32(std::string* out, uint32_t v) {
  PutU16(out, v & 0xffff);
  PutU16(out, v >> 16);
}

// One container of the canonical encoding.
struct EncodedContainer {
  uint16_t key = 0;
  uint32_t card = 0;
  bool is_run = false;
  std::string body;
};

// Encodes the low 16 bits of one chunk's rows (ascending) in the canonical
// container kind: run when no larger than the array (up to 4096 rows) or
// smaller than the bitset, else array or bitset. This is the choice CRoaring's
// run optimisation makes for array and bitset containers; it is written out
// here so the bytes never depend on how a set was built (CRoaring keeps an
// existing run container even when an array would be smaller).
EncodedContainer EncodeChunk(uint16_t key, const std::vector<uint16_t>& lows) {
  EncodedContainer c;
  c.key = key;
  c.card = static_cast<uint32_t>(lows.size());
  uint32_t n_runs = 0;
  for (size_t i = 0; i < lows.size(); ++i) {
    if (i == 0 || lows[i] != lows[i - 1] + 1) ++n_runs;
  }
  const size_t run_size = 2 + 4 * size_t{n_runs};
  const size_t plain_size = c.card <= kMaxArrayCard ? 2 * size_t{c.card} : kBitsetBytes;
  // A bitset (8192 bytes) can never tie with a run (2 + 4k bytes).
  if (run_size <= plain_size) {
    c.is_run = true;
    PutU16(&c.body, n_runs);
    for (size_t i = 0; i < lows.size();) {
      size_t j = i;
      while (j + 1 < lows.size() && lows[j + 1] == lows[j] + 1) ++j;
      PutU16(&c.body, lows[i]);
      PutU16(&c.body, static_cast<uint32_t>(j - i));  // length - 1
      i = j + 1;
    }
  } else if (c.card <= kMaxArrayCard) {
    for (uint16_t v : lows) PutU16(&c.body, v);
  } else {
    c.body.assign(kBitsetBytes, '\0');
    for (uint16_t v : lows) c.body[v >> 3] = static_cast<char>(c.body[v >> 3] | (1 << (v & 7)));
  }
  return c;
}

std::string AssemblePortable(const std::vector<EncodedContainer>& cs) {
  const uint32_t size = static_cast<uint32_t>(cs.size());
  bool has_run = false;
  for (const auto& c : cs) has_run = has_run || c.is_run;
  std::string out;
  if (has_run) {
    PutU32(&out, kCookieRun | ((size - 1) << 16));
    std::string run_bits((size + 7) / 8, '\0');
    for (uint32_t k = 0; k < size; ++k) {
      if (cs[k].is_run) run_bits[k / 8] = static_cast<char>(run_bits[k / 8] | (1 << (k % 8)));
    }
    out += run_bits;
  } else {
    PutU32(&out, kCookieNoRun);
    PutU32(&out, size);
  }
  for (const auto& c : cs) {
    PutU16(&out, c.key);
    PutU16(&out, c.card - 1);
  }
  if (!has_run || size >= kNoOffsetThreshold) {
    size_t offset = out.size() + 4 * size_t{size};
    for (const auto& c : cs) {
      PutU32(&out, static_cast<uint32_t>(offset));
      offset += c.body.size();
    }
  }
  for (const auto& c : cs) out += c.body;
  return out;
}

// A bounds-checked little-endian reader over the bytes being validated.
class Reader {
 public:
  explicit Reader(std::string_view b) : b_(b) {}
  size_t pos() const { return pos_; }
  size_t left() const { return b_.size() - pos_; }
  bool Has(size_t n) const { return left() >= n; }
  uint32_t U16() {
    uint32_t v = uint32_t{Byte(pos_)} | (uint32_t{Byte(pos_ + 1)} << 8);
    pos_ += 2;
    return v;
  }
  uint32_t U32() {
    uint32_t lo = U16();
    return lo | (U16() << 16);
  }
  std::string_view Take(size_t n) {
    std::string_view v = b_.substr(pos_, n);
    pos_ += n;
    return v;
  }

 private:
  uint8_t Byte(size_t i) const { return static_cast<uint8_t>(b_[i]); }
  std::string_view b_;
  size_t pos_ = 0;
};

Status Bad(const std::string& what) { return Status::Corruption("row set: " + what); }

Status CheckRunContainer(Reader* r, uint32_t card, const std::string& where) {
  if (!r->Has(2)) return Bad(where + ": truncated");
  uint32_t n_runs = r->U16();
  if (!r->Has(4 * size_t{n_runs})) return Bad(where + ": truncated runs");
  uint64_t total = 0;
  int64_t prev_end = -1;
  for (uint32_t i = 0; i < n_runs; ++i) {
    uint32_t start = r->U16();
    uint32_t end = start + r->U16();
    if (end > 0xffff) return Bad(where + ": a run passes the end of its chunk");
    if (static_cast<int64_t>(start) <= prev_end)
      return Bad(where + ": runs overlap or are out of order");
    prev_end = end;
    total += end - start + 1;
  }
  if (total != card)
    return Bad(where + ": runs hold " + std::to_string(total) + " rows, header says " +
               std::to_string(card));
  return Status::OK();
}

Status CheckArrayContainer(Reader* r, uint32_t card, const std::string& where) {
  if (!r->Has(2 * size_t{card})) return Bad(where + ": truncated array");
  int64_t prev = -1;
  for (uint32_t i = 0; i < card; ++i) {
    uint32_t v = r->U16();
    if (static_cast<int64_t>(v) <= prev) return Bad(where + ": array values are not ascending");
    prev = v;
  }
  return Status::OK();
}

Status CheckBitsetContainer(Reader* r, uint32_t card, const std::string& where) {
  if (!r->Has(kBitsetBytes)) return Bad(where + ": truncated bitset");
  std::string_view bits = r->Take(kBitsetBytes);
  uint64_t count = 0;
  for (char c : bits) count += static_cast<uint64_t>(__builtin_popcount(static_cast<uint8_t>(c)));
  if (count != card)
    return Bad(where + ": bitset holds " + std::to_string(count) + " rows, header says " +
               std::to_string(card));
  return Status::OK();
}

// Checks that `b` is exactly one well-formed portable Roaring bitmap. CRoaring's
// own "safe" reader checks only lengths (and prints to stderr on a bad
// cookie), so everything it trusts is checked here first.
Status ValidatePortable(std::string_view b) {
  Reader r(b);
  if (!r.Has(4)) return Bad("truncated: " + std::to_string(b.size()) + " bytes");
  uint32_t cookie = r.U32();
  bool has_run = (cookie & 0xffff) == kCookieRun;
  uint32_t size = 0;
  std::string_view run_bits;
  if (has_run) {
    size = (cookie >> 16) + 1;
    if (!r.Has((size + 7) / 8)) return Bad("truncated run flags");
    run_bits = r.Take((size + 7) / 8);
  } else if (cookie == kCookieNoRun) {
    if (!r.Has(4)) return Bad("truncated container count");
    size = r.U32();
    if (size > kMaxContainers) return Bad(std::to_string(size) + " containers; at most 65536");
  } else {
    return Bad("not a portable Roaring bitmap (bad cookie)");
  }
  if (!r.Has(4 * size_t{size})) return Bad("truncated container headers");
  std::vector<uint32_t> keys(size), cards(size), offsets;
  for (uint32_t k = 0; k < size; ++k) {
    keys[k] = r.U16();
    cards[k] = r.U16() + 1;
    if (k > 0 && keys[k] <= keys[k - 1]) return Bad("container keys are not ascending");
  }
  if (!has_run || size >= kNoOffsetThreshold) {
    if (!r.Has(4 * size_t{size})) return Bad("truncated offsets");
    offsets.resize(size);
    for (uint32_t k = 0; k < size; ++k) offsets[k] = r.U32();
  }
  for (uint32_t k = 0; k < size; ++k) {
    std::string where = "container " + std::to_string(k);
    if (!offsets.empty() && offsets[k] != r.pos()) return Bad(where + ": offset does not match");
    bool is_run = has_run && (static_cast<uint8_t>(run_bits[k / 8]) >> (k % 8)) & 1;
    Status s = is_run                      ? CheckRunContainer(&r, cards[k], where)
               : cards[k] <= kMaxArrayCard ? CheckArrayContainer(&r, cards[k], where)
                                           : CheckBitsetContainer(&r, cards[k], where);
    UNSEEN_RETURN_IF_ERROR(s);
  }
  if (r.left() != 0) return Bad(std::to_string(r.left()) + " trailing bytes");
  return Status::OK();
}

}  // namespace

struct RowSet::Impl {
  explicit Impl(roaring_bitmap_t* b) : bm(CheckAlloc(b)) {}
  ~Impl() { roaring_bitmap_free(bm); }
  Impl(const Impl&) = delete;
  Impl& operator=(const Impl&) = delete;
  roaring_bitmap_t* bm;
};

const RowSet::Impl& RowSet::rep() const {
  static const Impl* const kEmpty = new Impl(roaring_bitmap_create());  // never freed
  return impl_ ? *impl_ : *kEmpty;
}

RowSet::RowSet() : impl_(std::make_unique<Impl>(roaring_bitmap_create())) {}
RowSet::RowSet(std::unique_ptr<Impl> impl) : impl_(std::move(impl)) {}
RowSet::~RowSet() = default;
RowSet::RowSet(const RowSet& other)
    : impl_(std::make_unique<Impl>(roaring_bitmap_copy(other.rep().bm))) {}
RowSet& RowSet::operator=(const RowSet& other) {
  if (this != &other) impl_ = std::make_unique<Impl>(roaring_bitmap_copy(other.rep().bm));
  return *this;
}
RowSet::RowSet(RowSet&& other) noexcept = default;
RowSet& RowSet::operator=(RowSet&& other) noexcept = default;

RowSet RowSet::FromSorted(const std::vector<uint32_t>& rows) {
  auto impl = std::make_unique<Impl>(roaring_bitmap_create());
  roaring_bitmap_add_many(impl->bm, rows.size(), rows.data());
  return RowSet(std::move(impl));
}

RowSet RowSet::Range(uint32_t lo, uint32_t hi) {
  if (lo >= hi) return RowSet();
  return RowSet(std::make_unique<Impl>(roaring_bitmap_from_range(lo, hi, 1)));
}

void RowSet::Add(uint32_t row) {
  if (!impl_) impl_ = std::make_unique<Impl>(roaring_bitmap_create());
  roaring_bitmap_add(impl_->bm, row);
}

bool RowSet::Contains(uint32_t row) const { return roaring_bitmap_contains(rep().bm, row); }
uint64_t RowSet::Cardinality() const { return roaring_bitmap_get_cardinality(rep().bm); }
bool RowSet::Empty() const { return roaring_bitmap_is_empty(rep().bm); }

std::vector<uint32_t> RowSet::ToVector() const {
  std::vector<uint32_t> out(Cardinality());
  roaring_bitmap_to_uint32_array(rep().bm, out.data());
  return out;
}

void RowSet::ForEach(const std::function<void(uint32_t)>& fn) const {
  // A batch iterator rather than roaring_iterate's C callback, so nothing
  // `fn` does has to cross a C frame.
  ForEachRow(rep().bm, fn);
}

RowSet RowSet::And(const RowSet& other) const {
  return RowSet(std::make_unique<Impl>(roaring_bitmap_and(rep().bm, other.rep().bm)));
}
RowSet RowSet::Or(const RowSet& other) const {
  return RowSet(std::make_unique<Impl>(roaring_bitmap_or(rep().bm, other.rep().bm)));
}
RowSet RowSet::AndNot(const RowSet& other) const {
  return RowSet(std::make_unique<Impl>(roaring_bitmap_andnot(rep().bm, other.rep().bm)));
}
bool RowSet::Intersects(const RowSet& other) const {
  return roaring_bitmap_intersect(rep().bm, other.rep().bm);
}
bool RowSet::operator==(const RowSet& other) const {
  return roaring_bitmap_equals(rep().bm, other.rep().bm);
}

std::string RowSet::Serialize() const {
  // Walks the rows in order, one 16-bit chunk at a time, and encodes each
  // chunk itself; see EncodeChunk for why CRoaring's serializer is not used.
  std::vector<EncodedContainer> containers;
  std::vector<uint16_t> lows;
  uint32_t key = 0;
  ForEachRow(rep().bm, [&](uint32_t row) {
    uint32_t k = row >> 16;
    if (!lows.empty() && k != key) {
      containers.push_back(EncodeChunk(static_cast<uint16_t>(key), lows));
      lows.clear();
    }
    key = k;
    lows.push_back(static_cast<uint16_t>(row & 0xffff));
  });
  if (!lows.empty()) containers.push_back(EncodeChunk(static_cast<uint16_t>(key), lows));
  return AssemblePortable(containers);
}

Result<RowSet> RowSet::Deserialize(std::string_view bytes) {
  UNSEEN_RETURN_IF_ERROR(ValidatePortable(bytes));
  static_assert(__BYTE_ORDER__ == __ORDER_LITTLE_ENDIAN__,
                "CRoaring's portable reader assumes a little-endian host");
  roaring_bitmap_t* b = roaring_bitmap_portable_deserialize_safe(bytes.data(), bytes.size());
  if (b == nullptr) return Bad("CRoaring rejected bytes that passed validation");
  return RowSet(std::make_unique<Impl>(b));
}

Digest256 RowSet::ContentDigest() const { return Sha256Of(Serialize()); }

}  // namespace unseen
