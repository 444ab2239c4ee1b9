// ChunkBuffer: the reused block of decompressed bytes that the record readers
// cut records from. It keeps the unconsumed tail (an incomplete record) when
// refilled, grows only when one record outgrows it, and keeps `padding` spare
// bytes (set to spaces) after the data so parsers may read past a record's
// end. From a source that lends whole blocks (ByteSource::lender(),
// decode_ahead.h) it takes each block as its storage instead of copying,
// moving only the unconsumed tail into the room before the block's data; a
// tail too long for that room goes the copying way, so the limits below
// hold exactly as with any other source. Owns its memory (lent blocks go
// back to their home); one per reader; not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>

#include "common/input/byte_source.h"
#include "common/base/status.h"

namespace fanfold {

// Default chunk size of the readers: large enough that per-chunk costs
// (a read call, moving the tail) vanish next to parsing.
inline constexpr size_t kDefaultChunkBytes = 4 << 20;

// How the readers buffer their input (tests shrink both to hit edge cases).
struct ChunkOptions {
  // Implicit from a chunk size, so callers may pass just that.
  ChunkOptions(size_t chunk = kDefaultChunkBytes, size_t max_record = size_t{256} << 20)  // NOLINT
      : chunk_bytes(chunk), max_record_bytes(max_record) {}

  // Size of the reused read buffer. REQUIRES: > 0.
  size_t chunk_bytes;
  // Longest record the buffer grows to hold; a longer one (a file without
  // line breaks, an unclosed CSV quote) is an error, not unbounded memory.
  size_t max_record_bytes;
};

class ChunkBuffer {
 public:
  ChunkBuffer(const ChunkOptions& options, size_t padding);
  ~ChunkBuffer();
  ChunkBuffer(const ChunkBuffer&) = delete;
  ChunkBuffer& operator=(const ChunkBuffer&) = delete;

  // Forgets all data and the end-of-source flag (the allocation is kept).
  void Reset();

  // The unconsumed bytes. data()[size()] .. data()[size() + padding - 1]
  // are readable spaces.
  const char* data() const { return mem_ + begin_; }
  size_t size() const { return end_ - begin_; }
  // Bytes of the allocation from p (inside the data) to its end.
  size_t room_after(const char* p) const { return static_cast<size_t>(mem_ + limit_ + padding_ - p); }

  // Marks the first n unconsumed bytes as used. REQUIRES: n <= size().
  void Consume(size_t n) { begin_ += n; }

  // Moves the unconsumed bytes to the front (doubling the buffer if they
  // fill it), then reads from src until the buffer is full or src ends.
  // Returns the bytes added, or the source's error (when bytes arrived
  // before it, they are returned first and the error by the next Fill), or
  // Corrupt iff the unconsumed bytes already fill max_record_bytes.
  // From a lending source: adds one block (or, for a long tail, copies as
  // above).
  Result<size_t> Fill(ByteSource& src);

  // True iff the last Fill refused to grow past max_record_bytes.
  bool over_limit() const { return over_limit_; }
  // True iff src has reported its end: data() then holds all that is left.
  bool eof() const { return eof_; }
  // The note that `maker` left on the lent block now holding the data
  // (block_study.h), or null (no such note, or the data were copied into
  // the buffer's own memory). The block's bytes start at note_base(): the
  // unconsumed tail of the block before lies just before them.
  BlockNote* note(const BlockStudy* maker) const {
    if (maker == nullptr || lent_.bytes == nullptr || mem_ != lent_.bytes.get() || lent_.note == nullptr || lent_.note->maker != maker)
      return nullptr;
    return lent_.note.get();
  }
  const char* note_base() const { return lent_.data(); }

  // Decompressed bytes read from the source since Reset().
  uint64_t total_read() const { return total_read_; }

 private:
  void Pad();
  Result<size_t> CopyFill(ByteSource& src);  // reads into buf_ (moved there first)
  Result<size_t> TakeBlock(BlockLender& lender);
  void UseOwn();  // moves the unconsumed bytes into buf_, gives the lent block back

  // The storage in use: buf_ (own) or lent_'s allocation. Offsets count
  // from mem_; the data may fill [?, limit_), padding_ readable bytes follow.
  char* mem_;
  size_t limit_;
  LentBlock lent_;  // holds an allocation iff mem_ points into it
  // Copies out of a lender's blocks for the copying way (a long tail).
  class LentStream;
  std::unique_ptr<LentStream> stream_;

  std::unique_ptr<char[]> buf_;
  size_t cap_;      // data capacity, not counting padding_
  size_t padding_;
  size_t max_bytes_;
  size_t begin_ = 0;
  size_t end_ = 0;
  bool eof_ = false;
  bool over_limit_ = false;
  Status pending_;  // a source error held back until the next Fill
  uint64_t total_read_ = 0;
};

}  // namespace fanfold
