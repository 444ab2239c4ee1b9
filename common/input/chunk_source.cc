#include "common/input/chunk_source.h"

#include <cstring>
#include <vector>

namespace fanfold {
namespace {

class ChunkSource final : public ByteSource {
 public:
  // `inner` starts at byte `start` of the file: offset - 1 when offset > 0
  // (to learn whether a line starts exactly at offset), else 0.
  ChunkSource(std::unique_ptr<ByteSource> inner, uint64_t start, uint64_t offset, uint64_t length)
      : inner_(std::move(inner)), pos_(start), end_(offset + length), skipping_(offset > 0), starts_file_(offset == 0) {}

  Result<size_t> Read(char* dst, size_t cap) override {
    if (cap == 0) return size_t{0};
    while (!done_) {
      if (head_ == buf_.size()) {
        buf_.resize(1 << 20);
        Result<size_t> n = inner_->Read(buf_.data(), buf_.size());
        if (!n.ok()) return n.status();
        buf_.resize(*n);
        head_ = 0;
        if (*n == 0) {
          done_ = true;  // end of file
          break;
        }
      }
      const char* p = buf_.data() + head_;
      size_t avail = buf_.size() - head_;
      if (skipping_) {
        // Drop the tail of the line that started before the chunk.
        const void* nl = std::memchr(p, '\n', avail);
        size_t drop = nl ? static_cast<const char*>(nl) - p + 1 : avail;
        head_ += drop;
        pos_ += drop;
        if (nl) skipping_ = false;
        // The first line starting at or after offset is ours iff it starts
        // before end_; a line still being skipped at end_ starts before us.
        if (pos_ >= end_) done_ = true;
        continue;
      }
      size_t n = avail < cap ? avail : cap;
      if (pos_ + n > end_) {
        // Past the chunk's end only to finish the line in progress.
        if (pos_ >= end_ && last_ == '\n') {
          done_ = true;
          break;
        }
        size_t from = pos_ >= end_ ? 0 : end_ - pos_;
        if (from > 0 && p[from - 1] == '\n') {
          n = from;
        } else {
          const void* nl = std::memchr(p + from, '\n', n - from);
          if (nl) n = static_cast<const char*>(nl) - p + 1;
        }
      }
      std::memcpy(dst, p, n);
      head_ += n;
      pos_ += n;
      last_ = p[n - 1];
      handed_out_ += n;
      if (pos_ >= end_ && last_ == '\n') done_ = true;
      return n;
    }
    return size_t{0};
  }

  // The chunk's own bytes, not the file bytes read to find its edges (the
  // tail of the line before it, the block read past its end): so a cut
  // file's chunks add up to its size, each line counted once.
  uint64_t compressed_bytes() const override { return handed_out_; }
  bool starts_file() const override { return starts_file_; }

 private:
  std::unique_ptr<ByteSource> inner_;
  std::vector<char> buf_;
  size_t head_ = 0;
  uint64_t pos_;        // file position of buf_[head_]
  uint64_t end_;        // first byte after the chunk
  bool skipping_;       // still dropping a line begun before the chunk
  bool starts_file_;    // offset == 0
  bool done_ = false;
  char last_ = '\n';    // last byte handed out
  uint64_t handed_out_ = 0;  // bytes returned by Read
};

}  // namespace

Result<std::unique_ptr<ByteSource>> OpenChunkSource(const std::string& path, uint64_t offset, uint64_t length) {
  uint64_t start = offset > 0 ? offset - 1 : 0;
  Result<std::unique_ptr<ByteSource>> inner = OpenShardSource(path, Compression::kNone, start, UINT64_MAX);
  if (!inner.ok()) return inner.status();
  std::unique_ptr<ByteSource> s = std::make_unique<ChunkSource>(std::move(inner.value()), start, offset, length);
  return s;
}

}  // namespace fanfold
