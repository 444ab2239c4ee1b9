#include "common/input/whole_gzip.h"

#include <libdeflate.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <cstring>

#include "common/port/os_error.h"

namespace fanfold {
namespace {

// A buffer kept by the thread between shards (a worker reads thousands).
struct Spare {
  std::unique_ptr<char[]> bytes;
  size_t cap = 0;

  // A buffer of at least n bytes, taken from the spare when it is large enough.
  std::unique_ptr<char[]> Take(size_t n, size_t* cap_out) {
    if (bytes == nullptr || cap < n) {
      bytes.reset(new char[std::max<size_t>(n, 1)]);
      cap = std::max<size_t>(n, 1);
    }
    *cap_out = cap;
    return std::move(bytes);
  }
  void Give(std::unique_ptr<char[]> b, size_t n) {
    if (n > kWholeGzipKeptBytes) return;  // freed here: a big file does not pin its memory
    if (bytes == nullptr || n >= cap) {
      bytes = std::move(b);
      cap = n;
    }
  }
};

struct ThreadState {
  Spare in;
  Spare out;
  libdeflate_decompressor* inflater = nullptr;
  ~ThreadState() { libdeflate_free_decompressor(inflater); }
};

ThreadState& State() {
  thread_local ThreadState state;
  return state;
}

// The decompressed bytes of a whole gzip file, handed out in pieces.
class InflatedSource final : public ByteSource {
 public:
  InflatedSource(std::unique_ptr<char[]> bytes, size_t cap, size_t size, uint64_t file_bytes)
      : bytes_(std::move(bytes)), cap_(cap), size_(size), file_bytes_(file_bytes) {}
  ~InflatedSource() override { State().out.Give(std::move(bytes_), cap_); }

  Result<size_t> Read(char* dst, size_t cap) override {
    const size_t n = std::min(cap, size_ - pos_);
    std::memcpy(dst, bytes_.get() + pos_, n);
    pos_ += n;
    return n;
  }
  uint64_t compressed_bytes() const override { return file_bytes_; }

 private:
  std::unique_ptr<char[]> bytes_;
  size_t cap_;
  size_t size_;
  size_t pos_ = 0;
  uint64_t file_bytes_;
};

// Reads all n bytes at offset 0 of fd into dst; returns errno or 0, and
// *got the bytes read (fewer iff the file shrank).
int ReadAll(int fd, char* dst, size_t n, size_t* got) {
  size_t have = 0;
  while (have < n) {
    ssize_t r = ::pread(fd, dst + have, n - have, static_cast<off_t>(have));
    if (r < 0 && errno == EINTR) continue;
    if (r < 0) return errno;
    if (r == 0) break;
    have += static_cast<size_t>(r);
  }
  *got = have;
  return 0;
}

}  // namespace

Result<std::unique_ptr<ByteSource>> OpenWholeGzip(const std::string& path, int fd, uint64_t file_size) {
  // The smallest gzip member is 18 bytes (RFC 1952: a 10-byte header, an
  // empty deflate block, an 8-byte trailer).
  if (file_size < 18 || file_size > kWholeGzipMaxFileBytes) return std::unique_ptr<ByteSource>();
  ThreadState& state = State();
  size_t in_cap = 0;
  std::unique_ptr<char[]> in = state.in.Take(file_size, &in_cap);
  size_t got = 0;
  const int err = ReadAll(fd, in.get(), file_size, &got);
  auto decline = [&]() { state.in.Give(std::move(in), in_cap); };
  if (err != 0) {
    decline();
    return Status::IoError("cannot read '" + path + "': " + ErrnoText(err));
  }
  const auto* b = reinterpret_cast<const unsigned char*>(in.get());
  // ISIZE: the last member's size modulo 2^32, little-endian (RFC 1952 2.3.1).
  const uint64_t isize =
      got >= 18
          ? (uint64_t{b[got - 4]} | uint64_t{b[got - 3]} << 8 | uint64_t{b[got - 2]} << 16 | uint64_t{b[got - 1]} << 24)
          : 0;
  if (got != file_size || b[0] != 0x1F || b[1] != 0x8B || isize > kWholeGzipMaxOutputBytes) {
    decline();
    return std::unique_ptr<ByteSource>();
  }
  if (state.inflater == nullptr) state.inflater = libdeflate_alloc_decompressor();
  if (state.inflater == nullptr) {
    decline();
    return std::unique_ptr<ByteSource>();
  }
  // Member after member (RFC 1952 section 2.2), into one buffer that
  // starts at the last member's ISIZE (exact for a one-member file) and
  // doubles, up to kWholeGzipMaxOutputBytes, whenever a member does not fit
  // (that member is then inflated again).
  size_t out_cap = 0;
  std::unique_ptr<char[]> out = state.out.Take(isize, &out_cap);
  size_t in_pos = 0;
  size_t out_pos = 0;
  bool ok = true;
  while (ok && in_pos < got) {
    size_t in_used = 0;
    size_t out_used = 0;
    const libdeflate_result r = libdeflate_gzip_decompress_ex(state.inflater, in.get() + in_pos, got - in_pos,
                                                              out.get() + out_pos, out_cap - out_pos, &in_used,
                                                              &out_used);
    if (r == LIBDEFLATE_SUCCESS) {
      in_pos += in_used;
      out_pos += out_used;
    } else if (r == LIBDEFLATE_INSUFFICIENT_SPACE && out_cap < kWholeGzipMaxOutputBytes) {
      const size_t bigger = static_cast<size_t>(std::min<uint64_t>(
          std::max<uint64_t>(uint64_t{2} * out_cap, uint64_t{1} << 16), kWholeGzipMaxOutputBytes));
      std::unique_ptr<char[]> grown(new char[bigger]);
      std::memcpy(grown.get(), out.get(), out_pos);
      out = std::move(grown);
      out_cap = bigger;
    } else {
      ok = false;  // damaged, truncated, not gzip after a member, or too large: stream instead
    }
  }
  decline();
  if (!ok) {
    state.out.Give(std::move(out), out_cap);
    return std::unique_ptr<ByteSource>();
  }
  const size_t out_size = out_pos;
  return std::unique_ptr<ByteSource>(new InflatedSource(std::move(out), out_cap, out_size, got));
}

}  // namespace fanfold
