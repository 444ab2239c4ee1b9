#include "common/input/chunk_buffer.h"

#include <algorithm>
#include <cstring>
#include <new>
#include <string>

namespace fanfold {

// Reads a lender's blocks by copying, for the copying way: a tail too long
// for the room before a block, or limits that a whole block would break.
class ChunkBuffer::LentStream final : public ByteSource {
 public:
  explicit LentStream(BlockLender* lender) : lender_(lender) {}
  ~LentStream() override { ReturnBlock(&held_); }

  BlockLender* lender() const { return lender_; }
  bool drained() const { return pos_ == held_.size; }
  // Starts with a block already lent.
  void Hold(LentBlock block) {
    ReturnBlock(&held_);
    held_ = std::move(block);
    pos_ = 0;
  }

  Result<size_t> Read(char* dst, size_t cap) override {
    if (pos_ == held_.size) {
      ReturnBlock(&held_);
      pos_ = 0;
      Result<size_t> n = lender_->Lend(&held_);
      if (!n.ok() || *n == 0) return n;
    }
    const size_t n = std::min(cap, held_.size - pos_);
    std::memcpy(dst, held_.data() + pos_, n);
    pos_ += n;
    return n;
  }
  uint64_t compressed_bytes() const override { return 0; }

 private:
  BlockLender* lender_;
  LentBlock held_;
  size_t pos_ = 0;
};

ChunkBuffer::ChunkBuffer(const ChunkOptions& options, size_t padding)
    : buf_(new char[options.chunk_bytes + padding]),
      cap_(options.chunk_bytes),
      padding_(padding),
      max_bytes_(std::max(options.max_record_bytes, options.chunk_bytes)) {
  mem_ = buf_.get();
  limit_ = cap_;
  Pad();
}

ChunkBuffer::~ChunkBuffer() { ReturnBlock(&lent_); }

void ChunkBuffer::Reset() {
  stream_.reset();
  ReturnBlock(&lent_);
  mem_ = buf_.get();
  limit_ = cap_;
  begin_ = end_ = 0;
  eof_ = false;
  over_limit_ = false;
  pending_ = Status::Ok();
  total_read_ = 0;
  Pad();
}

void ChunkBuffer::Pad() { std::memset(mem_ + end_, ' ', padding_); }

void ChunkBuffer::UseOwn() {
  if (mem_ == buf_.get()) return;
  const size_t tail = size();
  if (tail > cap_) {
    // The tail of a lent block is at most its room plus its data, which the
    // block way keeps within max_bytes_.
    size_t new_cap = cap_;
    while (new_cap < tail) new_cap *= 2;
    new_cap = std::min(new_cap, std::max(max_bytes_, tail));
    buf_.reset(new char[new_cap + padding_]);
    cap_ = new_cap;
  }
  std::memcpy(buf_.get(), mem_ + begin_, tail);
  ReturnBlock(&lent_);
  mem_ = buf_.get();
  limit_ = cap_;
  begin_ = 0;
  end_ = tail;
}

Result<size_t> ChunkBuffer::Fill(ByteSource& src) {
  if (!pending_.ok()) return pending_;
  BlockLender* lender = src.lender();
  if (lender == nullptr) return CopyFill(src);
  if (stream_ == nullptr || stream_->lender() != lender) stream_ = std::make_unique<LentStream>(lender);
  return TakeBlock(*lender);
}

Result<size_t> ChunkBuffer::TakeBlock(BlockLender& lender) {
  if (eof_) return size_t{0};
  if (!stream_->drained()) {
    UseOwn();
    return CopyFill(*stream_);
  }
  LentBlock block;
  Result<size_t> n = lender.Lend(&block);
  if (!n.ok()) {
    Pad();
    return n.status();
  }
  if (*n == 0) {
    eof_ = true;
    Pad();
    return size_t{0};
  }
  const size_t tail = size();
  if (tail > block.front || block.front + block.cap > max_bytes_ || block.tail < padding_) {
    stream_->Hold(std::move(block));
    UseOwn();
    return CopyFill(*stream_);
  }
  std::memcpy(block.data() - tail, mem_ + begin_, tail);
  ReturnBlock(&lent_);
  lent_ = std::move(block);
  mem_ = lent_.bytes.get();
  limit_ = lent_.front + lent_.cap;
  begin_ = lent_.front - tail;
  end_ = lent_.front + *n;
  total_read_ += *n;
  Pad();
  return *n;
}

Result<size_t> ChunkBuffer::CopyFill(ByteSource& src) {
  UseOwn();
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
    mem_ = buf_.get();
    limit_ = cap_;
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
