// EncodedGroupCursor: walks one GroupTable encoding (layout in
// common/partial/group_table.h: varint group count, then per group in
// strictly ascending key-byte order the key and one length-prefixed state
// per measure) group by group, without building a GroupTable or decoding
// any state. Each step yields the key and a view of every measure's state
// bytes. The framing is checked as the cursor goes (the count fits the
// bytes, every length fits, keys strictly ascend, nothing trails the last
// group); the states' own bytes are checked by whoever decodes them.
// Views point into the encoding, which must outlive the cursor and them.
// Not thread-safe; a copy resumes independently from the same group.
#pragma once

#include <bit>
#include <cstdint>
#include <cstring>
#include <string_view>
#include <vector>

#include "common/base/byte_io.h"
#include "common/base/status.h"

namespace fanfold {

class EncodedGroupCursor {
 public:
  // measure_count: states per group (the reduction's measure count).
  EncodedGroupCursor(std::string_view encoded, size_t measure_count);
  // A body without its leading count (a piece of a run,
  // coordinator/merge/run_cursor.h): `count` groups, framed as above.
  EncodedGroupCursor(std::string_view body, size_t measure_count, uint64_t count);

  // Moves to the next group. Returns true iff there is one; false at the
  // end of a well-formed encoding (status() ok) or at the first framing
  // error (status() Corrupt, naming the group), after which it stays false.
  bool Next();
  // Moves to the first group whose key is >= `key` (it may be the current
  // one): Next() until then, reading framing only. Returns true iff there
  // is such a group.
  bool SeekAtLeast(std::string_view key);

  // REQUIRES: the last Next() or SeekAtLeast() returned true.
  std::string_view key() const { return key_; }
  std::string_view state(size_t j) const { return states_[j]; }
  // The key of the last group read, also once Next() returned false at
  // the end. REQUIRES: groups_read() > 0.
  std::string_view last_key() const { return key_; }

  const Status& status() const { return status_; }
  uint64_t group_count() const { return count_; }  // as encoded
  uint64_t groups_read() const { return read_; }   // Next() calls that returned true
  bool positioned() const { return positioned_; }  // a group is current
  // Bytes of the encoding read so far (the current group's included).
  uint64_t consumed() const { return static_cast<uint64_t>(p_ - begin_); }
  // The current group's whole framing (key and states with their
  // lengths), as it lies in the encoding. REQUIRES: positioned().
  std::string_view group_bytes() const { return std::string_view(group_, static_cast<size_t>(p_ - group_)); }

  // a < b in key-byte order (unsigned bytes, a prefix first), as
  // std::string_view's operator< but inline, 8 bytes at a time.
  static bool KeyLess(std::string_view a, std::string_view b);

 private:
  bool Fail(const std::string& what);
  // The next length (a varint) at p_, which must leave it within the
  // encoding: false (p_ unchanged) when it does not fit.
  bool Length(uint64_t* n) {
    // One byte is the common case (keys and small states under 128 bytes).
    if (p_ < end_ && static_cast<unsigned char>(*p_) < 0x80) [[likely]] {
      *n = static_cast<unsigned char>(*p_);
      if (*n > static_cast<uint64_t>(end_ - p_ - 1)) return false;
      ++p_;
      return true;
    }
    return LongLength(n);
  }
  bool LongLength(uint64_t* n);

  const char* begin_;
  const char* p_;
  const char* end_;
  const char* group_ = nullptr;  // the current group's first byte
  size_t m_;
  uint64_t count_ = 0;
  uint64_t read_ = 0;
  bool positioned_ = false;
  bool done_ = false;
  std::string_view key_;
  std::vector<std::string_view> states_;
  Status status_;
};

// SeekAtLeast for any cursor with positioned(), key() and Next() (this
// one, RunCursor, PartialGroupStream): Next() until the key is >= `key`
// (the current group counts). True iff there is such a group.
template <class Cursor>
bool SeekCursorAtLeast(Cursor& c, std::string_view key) {
  if (c.positioned() && !EncodedGroupCursor::KeyLess(c.key(), key)) return true;
  while (c.Next())
    if (!EncodedGroupCursor::KeyLess(c.key(), key)) return true;
  return false;
}

inline bool EncodedGroupCursor::KeyLess(std::string_view a, std::string_view b) {
  const size_t n = a.size() < b.size() ? a.size() : b.size();
  size_t i = 0;
  for (; i + 8 <= n; i += 8) {
    uint64_t x, y;
    std::memcpy(&x, a.data() + i, 8);
    std::memcpy(&y, b.data() + i, 8);
    if (x != y) {
      if constexpr (std::endian::native == std::endian::little) return __builtin_bswap64(x) < __builtin_bswap64(y);
      return x < y;
    }
  }
  if (i < n) {  // the last 1-7 common bytes as one word: the 8 ending there, or zero-padded
    uint64_t x = 0, y = 0;
    if (n >= 8) {  // overlaps bytes already found equal, which leaves the order to the rest
      std::memcpy(&x, a.data() + n - 8, 8);
      std::memcpy(&y, b.data() + n - 8, 8);
    } else {
      std::memcpy(&x, a.data(), n);
      std::memcpy(&y, b.data(), n);
    }
    if (x != y) {
      if constexpr (std::endian::native == std::endian::little) return __builtin_bswap64(x) < __builtin_bswap64(y);
      return x < y;
    }
  }
  return a.size() < b.size();
}

}  // namespace fanfold
