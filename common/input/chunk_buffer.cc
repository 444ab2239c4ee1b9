#include "common/input/chunk_buffer.h"

#include <algorithm>
#include <cstring>
#include <new>
#include <string>

namespace fanfold {

ChunkBuffer::ChunkBuffer(const ChunkOptions& options, size_t padding)
    : buf_(new char[options.chunk_bytes + padding]),
      cap_(options.chunk_bytes),
      padding_(padding),
      max_bytes_(std::max(options.max_record_bytes, options.chunk_bytes)) {
  Pad();
}

void ChunkBuffer::Reset() {
  begin_ = end_ = 0;
  eof_ = false;
  over_limit_ = false;
  pending_ = Status::Ok();
  total_read_ = 0;
  Pad();
}

void ChunkBuffer::Pad() { std::memset(buf_.get() + end_, ' ', padding_); }

Result<size_t> ChunkBuffer::Fill(ByteSource& src) {
  if (!pending_.ok()) return pending_;
  if (begin_ > 0) {
    std::memmove(buf_.get(), buf_.get() + begin_, end_ - begin_);
    end_ -= begin_;
    begin_ = 0;
  }
  if (end_ == cap_) {
    // One record is longer than the whole buffer: grow it, up to the limit.
    if (cap_ >= max_bytes_) {
      over_limit_ = true;
      return Status::Corrupt("a record is longer than the limit of " + std::to_string(max_bytes_) + " bytes");
    }
    size_t new_cap = std::min(cap_ * 2, max_bytes_);
    std::unique_ptr<char[]> bigger(new (std::nothrow) char[new_cap + padding_]);
    if (bigger == nullptr) {
      return Status::Internal("out of memory for a record of " + std::to_string(new_cap) + " bytes");
    }
    std::memcpy(bigger.get(), buf_.get(), end_);
    buf_ = std::move(bigger);
    cap_ = new_cap;
  }
  size_t added = 0;
  while (!eof_ && end_ < cap_) {
    Result<size_t> n = src.Read(buf_.get() + end_, cap_ - end_);
    if (!n.ok()) {
      Pad();
      if (added == 0) return n.status();
      // Hand out what arrived first, so the records before the error are
      // read; the error comes with the next Fill.
      pending_ = n.status();
      break;
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
