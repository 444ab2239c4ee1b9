#include "coordinator/merge/encoded_group_cursor.h"

#include <string>

namespace fanfold {

EncodedGroupCursor::EncodedGroupCursor(std::string_view encoded, size_t measure_count)
    : r_(encoded), size_(encoded.size()), m_(measure_count), states_(measure_count) {
  // Each group needs at least a key length byte and m state length bytes.
  count_ = r_.Count(1 + m_);
  if (!r_.ok()) (void)Fail("group count larger than the encoding");
}

EncodedGroupCursor::EncodedGroupCursor(std::string_view body, size_t measure_count, uint64_t count)
    : r_(body), size_(body.size()), m_(measure_count), count_(count), states_(measure_count) {
  if (m_ + 1 > 0 && count_ > body.size() / (1 + m_)) (void)Fail("group count larger than the encoding");
}

bool EncodedGroupCursor::Fail(const std::string& what) {
  status_ = Status::Corrupt(what);
  done_ = true;
  positioned_ = false;
  return false;
}

bool EncodedGroupCursor::Next() {
  if (done_) return false;
  if (read_ == count_) {
    done_ = true;
    positioned_ = false;
    if (!r_.at_end()) return Fail("trailing bytes after the last group");
    return false;
  }
  const std::string_view key = r_.Str();
  if (!r_.ok()) return Fail("group " + std::to_string(read_) + ": truncated key");
  if (read_ > 0 && !(key_ < key))
    return Fail("group " + std::to_string(read_) + ": keys not in strictly ascending order");
  for (size_t j = 0; j < m_; ++j) {
    states_[j] = r_.Str();
    if (!r_.ok()) return Fail("group " + std::to_string(read_) + ": truncated measure state");
  }
  key_ = key;
  ++read_;
  positioned_ = true;
  return true;
}

bool EncodedGroupCursor::SeekAtLeast(std::string_view key) {
  if (positioned_ && key_ >= key) return true;
  while (Next())
    if (key_ >= key) return true;
  return false;
}

}  // namespace fanfold
