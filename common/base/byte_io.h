// ByteWriter / ByteReader: the primitive encoding every binary format in
// fanfold is built from (partial states, shared-memory messages). Fixed-width
// integers are little-endian; varints are LEB128 (unsigned); doubles are their
// IEEE 754 bit pattern as a little-endian u64; strings are varint length +
// bytes. ByteReader is bounds-checked: once a read runs past the end it fails
// and stays failed (ok() == false), so a corrupt or hostile input can give
// wrong-looking fields but never a read outside the buffer. Thread-compatible.
#pragma once

#include <bit>
#include <cstdint>
#include <cstring>
#include <string>
#include <string_view>

namespace fanfold {

static_assert(std::endian::native == std::endian::little, "fanfold assumes a little-endian host");

class ByteWriter {
 public:
  explicit ByteWriter(std::string* out) : out_(out) {}
  void U8(uint8_t v) { out_->push_back(static_cast<char>(v)); }
  void U16(uint16_t v) { Raw(&v, 2); }
  void U32(uint32_t v) { Raw(&v, 4); }
  void U64(uint64_t v) { Raw(&v, 8); }
  void I64(int64_t v) { Raw(&v, 8); }
  void F64(double v) { U64(std::bit_cast<uint64_t>(v)); }
  void Varint(uint64_t v) {
    while (v >= 0x80) {
      U8(static_cast<uint8_t>(v) | 0x80);
      v >>= 7;
    }
    U8(static_cast<uint8_t>(v));
  }
  void Str(std::string_view s) {
    Varint(s.size());
    out_->append(s.data(), s.size());
  }
  void Bytes(std::string_view s) { out_->append(s.data(), s.size()); }
  size_t size() const { return out_->size(); }
  std::string* buffer() { return out_; }

 private:
  void Raw(const void* p, size_t n) { out_->append(static_cast<const char*>(p), n); }
  std::string* out_;
};

// Raw writers for a caller that made room first (a hot encoder writing into
// a buffer it sized): the same bytes ByteWriter's Varint and U64 append.
// Each returns the end of what it wrote.
inline constexpr size_t kMaxVarintBytes = 10;  // a varint of a uint64_t
// The bytes PutVarint (and ByteWriter::Varint) write for v.
inline size_t VarintBytes(uint64_t v) {
  size_t n = 1;
  for (; v >= 0x80; v >>= 7) ++n;
  return n;
}
inline char* PutVarint(char* out, uint64_t v) {
  while (v >= 0x80) {
    *out++ = static_cast<char>(static_cast<uint8_t>(v) | 0x80);
    v >>= 7;
  }
  *out++ = static_cast<char>(v);
  return out;
}
inline char* PutU64(char* out, uint64_t v) {
  std::memcpy(out, &v, 8);
  return out + 8;
}

class ByteReader {
 public:
  explicit ByteReader(std::string_view in) : p_(in.data()), end_(in.data() + in.size()) {}

  bool ok() const { return ok_; }
  size_t remaining() const { return static_cast<size_t>(end_ - p_); }
  bool at_end() const { return p_ == end_; }

  uint8_t U8() {
    uint8_t v = 0;
    Raw(&v, 1);
    return v;
  }
  uint16_t U16() {
    uint16_t v = 0;
    Raw(&v, 2);
    return v;
  }
  uint32_t U32() {
    uint32_t v = 0;
    Raw(&v, 4);
    return v;
  }
  uint64_t U64() {
    uint64_t v = 0;
    Raw(&v, 8);
    return v;
  }
  int64_t I64() {
    int64_t v = 0;
    Raw(&v, 8);
    return v;
  }
  double F64() { return std::bit_cast<double>(U64()); }
  uint64_t Varint() {
    // Most varints are one byte (lengths, small counts, gaps): read inline.
    if (ok_ && p_ != end_ && static_cast<uint8_t>(*p_) < 0x80) return static_cast<uint8_t>(*p_++);
    return VarintLong();
  }
  // Varint's general case: any length, every byte checked.
  uint64_t VarintLong() {
    uint64_t v = 0;
    for (int shift = 0; shift < 64; shift += 7) {
      uint8_t b = U8();
      if (!ok_) return 0;
      v |= static_cast<uint64_t>(b & 0x7f) << shift;
      if ((b & 0x80) == 0) return v;
    }
    ok_ = false;  // more than 10 bytes: not a varint we wrote
    return 0;
  }
  // A count of items each at least min_item_bytes long: fails (returns 0)
  // when the count could not possibly fit in what is left, so a hostile
  // count cannot make the caller reserve gigabytes.
  uint64_t Count(size_t min_item_bytes = 1) {
    uint64_t n = Varint();
    if (min_item_bytes > 0 && n > remaining() / min_item_bytes) {
      ok_ = false;
      return 0;
    }
    return n;
  }
  std::string_view Str() {
    uint64_t n = Varint();
    return Take(n);
  }
  std::string_view Take(uint64_t n) {
    if (!ok_ || n > remaining()) {
      ok_ = false;
      return {};
    }
    std::string_view s(p_, n);
    p_ += n;
    return s;
  }
  void Fail() { ok_ = false; }

 private:
  void Raw(void* dst, size_t n) {
    if (!ok_ || n > remaining()) {
      ok_ = false;
      return;
    }
    std::memcpy(dst, p_, n);
    p_ += n;
  }
  const char* p_;
  const char* end_;
  bool ok_ = true;
};

}  // namespace fanfold
