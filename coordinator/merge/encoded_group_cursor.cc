#include "coordinator/merge/encoded_group_cursor.h"

#include <string>

namespace fanfold {

EncodedGroupCursor::EncodedGroupCursor(std::string_view encoded, size_t measure_count)
    : begin_(encoded.data()), p_(encoded.data()), end_(encoded.data() + encoded.size()), m_(measure_count),
      states_(measure_count) {
  // Each group needs at least a key length byte and m state length bytes.
  ByteReader r(encoded);
  count_ = r.Count(1 + m_);
  p_ = end_ - r.remaining();
  if (!r.ok()) (void)Fail("group count larger than the encoding");
}

EncodedGroupCursor::EncodedGroupCursor(std::string_view body, size_t measure_count, uint64_t count)
    : begin_(body.data()), p_(body.data()), end_(body.data() + body.size()), m_(measure_count), count_(count),
      states_(measure_count) {
  if (m_ + 1 > 0 && count_ > body.size() / (1 + m_)) (void)Fail("group count larger than the encoding");
}

bool EncodedGroupCursor::Fail(const std::string& what) {
  status_ = Status::Corrupt(what);
  done_ = true;
  positioned_ = false;
  return false;
}

bool EncodedGroupCursor::LongLength(uint64_t* n) {
  ByteReader r(std::string_view(p_, static_cast<size_t>(end_ - p_)));
  const uint64_t v = r.Varint();
  if (!r.ok() || v > r.remaining()) return false;
  *n = v;
  p_ = end_ - r.remaining();
  return true;
}

bool EncodedGroupCursor::Next() {
  if (done_) return false;
  if (read_ == count_) {
    done_ = true;
    positioned_ = false;
    if (p_ != end_) return Fail("trailing bytes after the last group");
    return false;
  }
  const char* const group = p_;
  uint64_t n = 0;
  if (!Length(&n)) return Fail("group " + std::to_string(read_) + ": truncated key");
  const std::string_view key(p_, static_cast<size_t>(n));
  p_ += n;
  if (read_ > 0 && !KeyLess(key_, key))
    return Fail("group " + std::to_string(read_) + ": keys not in strictly ascending order");
  for (size_t j = 0; j < m_; ++j) {
    if (!Length(&n)) return Fail("group " + std::to_string(read_) + ": truncated measure state");
    states_[j] = std::string_view(p_, static_cast<size_t>(n));
    p_ += n;
  }
  key_ = key;
  group_ = group;
  ++read_;
  positioned_ = true;
  return true;
}

bool EncodedGroupCursor::SeekAtLeast(std::string_view key) { return SeekCursorAtLeast(*this, key); }

}  // namespace fanfold
