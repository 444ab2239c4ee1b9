#include "common/chunk_buffer.h"

#include <cstring>

namespace fanfold {

ChunkBuffer::ChunkBuffer(size_t chunk_bytes, size_t padding)
    : buf_(new char[chunk_bytes + padding]), cap_(chunk_bytes), padding_(padding) {
  Pad();
}

void ChunkBuffer::Reset() {
  begin_ = end_ = 0;
  eof_ = false;
  total_read_ = 0;
  Pad();
}

void ChunkBuffer::Pad() { std::memset(buf_.get() + end_, ' ', padding_); }

Result<size_t> ChunkBuffer::Fill(ByteSource& src) {
  if (begin_ > 0) {
    std::memmove(buf_.get(), buf_.get() + begin_, end_ - begin_);
    end_ -= begin_;
    begin_ = 0;
  }
  if (end_ == cap_) {
    // One record is longer than the whole buffer: grow it.
    size_t new_cap = cap_ * 2;
    std::unique_ptr<char[]> bigger(new char[new_cap + padding_]);
    std::memcpy(bigger.get(), buf_.get(), end_);
    buf_ = std::move(bigger);
    cap_ = new_cap;
  }
  size_t added = 0;
  while (!eof_ && end_ < cap_) {
    Result<size_t> n = src.Read(buf_.get() + end_, cap_ - end_);
    if (!n.ok()) {
      Pad();
      return n.status();
    }
    if (*n == 0) eof_ = true;
    end_ += *n;
    added += *n;
    total_read_ += *n;
  }
  Pad();
  return added;
}

}  // namespace fanfold
