#include "common/input/byte_source.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>
#include <zlib.h>
#include <zstd.h>
#include <zstd_errors.h>

#include <algorithm>
#include <cerrno>
#include <climits>
#include <cstring>
#include <vector>

#include "common/input/whole_gzip.h"
#include "common/port/os_error.h"

namespace fanfold {
namespace {

// Compressed input is read in blocks of this size into one reused buffer.
constexpr size_t kInputBlock = 1 << 20;
// Plain reads are capped so one read(2) never exceeds what Linux allows.
constexpr size_t kMaxPlainRead = 1 << 30;

std::string Quoted(const std::string& path) { return "'" + path + "'"; }

// What a zstd error code means for a user, in our words (the library's
// names for them are its own).
const char* ZstdProblem(size_t ret) {
  switch (ZSTD_getErrorCode(ret)) {
    case ZSTD_error_prefix_unknown: return "no zstd frame starts here (not zstd data?)";
    case ZSTD_error_checksum_wrong: return "the frame's checksum does not match its contents";
    case ZSTD_error_frameParameter_windowTooLarge: return "the frame needs a larger window than the reader allows";
    case ZSTD_error_memory_allocation: return "out of memory";
    default: return "the compressed data is damaged";
  }
}

// The same for zlib: a bad header means the file is not gzip at all.
const char* GzipProblem(int ret, const char* msg) {
  if (ret == Z_MEM_ERROR) return "out of memory";
  if (msg != nullptr && std::strcmp(msg, "incorrect header check") == 0) return "no gzip header here (not gzip data?)";
  return "the compressed data is damaged";
}

bool EndsWith(const std::string& s, const char* suffix) {
  size_t n = std::strlen(suffix);
  return s.size() >= n && s.compare(s.size() - n, n, suffix) == 0;
}

// An open file descriptor, closed on destruction.
class Fd {
 public:
  explicit Fd(int fd) : fd_(fd) {}
  ~Fd() {
    if (fd_ >= 0) ::close(fd_);
  }
  Fd(Fd&& other) noexcept : fd_(other.fd_) { other.fd_ = -1; }
  Fd(const Fd&) = delete;
  Fd& operator=(const Fd&) = delete;
  Fd& operator=(Fd&&) = delete;
  int get() const { return fd_; }

 private:
  int fd_;
};

// read(2) retried on EINTR; returns the count or -1 with errno set.
ssize_t ReadSome(int fd, char* dst, size_t cap) {
  for (;;) {
    ssize_t n = ::read(fd, dst, std::min(cap, kMaxPlainRead));
    if (n >= 0 || errno != EINTR) return n;
  }
}

Status ReadError(const std::string& path, int err) {
  return Status::IoError("cannot read " + Quoted(path) + ": " + ErrnoText(err));
}

// Describes the first bytes of a file whose magic did not match, so the
// message says what the file looks like instead.
std::string DescribeStart(const unsigned char* b, size_t n) {
  if (n == 0) return "the file is empty";
  static const char kHex[] = "0123456789ABCDEF";
  std::string hex;
  for (size_t i = 0; i < n && i < 4; ++i) {
    if (i) hex += ' ';
    hex += kHex[b[i] >> 4];
    hex += kHex[b[i] & 15];
  }
  std::string what;
  if (n >= 2 && b[0] == 0x1F && b[1] == 0x8B) {
    what = "gzip data";
  } else if (n >= 4 && b[0] == 0x28 && b[1] == 0xB5 && b[2] == 0x2F && b[3] == 0xFD) {
    what = "zstd data";
  } else {
    bool text = true;
    for (size_t i = 0; i < n && i < 4; ++i) text &= (b[i] >= 0x20 && b[i] < 0x7F) || b[i] == '\t' || b[i] == '\n' || b[i] == '\r';
    if (text) {
      what = "text \"";
      for (size_t i = 0; i < n && i < 4; ++i) what += b[i] < 0x20 ? ' ' : static_cast<char>(b[i]);
      what += "\"";
    } else {
      what = "unknown binary data";
    }
  }
  return "found " + hex + " (" + what + ")";
}

// Per-thread free lists, so that a worker streaming thousands of tiny
// shards reuses its input blocks and zstd decoders instead of allocating
// (and zero-filling) them per shard.
std::vector<std::vector<char>>& BlockPool() {
  thread_local std::vector<std::vector<char>> pool;
  return pool;
}
std::vector<char> TakeBlock() {
  auto& pool = BlockPool();
  if (pool.empty()) return std::vector<char>(kInputBlock);
  std::vector<char> b = std::move(pool.back());
  pool.pop_back();
  return b;
}
void GiveBlock(std::vector<char> b) {
  if (b.size() == kInputBlock && BlockPool().size() < 4) BlockPool().push_back(std::move(b));
}
struct DctxPool {
  std::vector<ZSTD_DCtx*> free;
  ~DctxPool() {
    for (ZSTD_DCtx* d : free) ZSTD_freeDCtx(d);
  }
};
DctxPool& Dctxs() {
  thread_local DctxPool pool;
  return pool;
}
ZSTD_DCtx* TakeDctx() {
  auto& pool = Dctxs().free;
  if (pool.empty()) return ZSTD_createDCtx();
  ZSTD_DCtx* d = pool.back();
  pool.pop_back();
  ZSTD_DCtx_reset(d, ZSTD_reset_session_only);
  return d;
}
void GiveDctx(ZSTD_DCtx* d) {
  if (d == nullptr) return;
  if (Dctxs().free.size() < 4) Dctxs().free.push_back(d);
  else ZSTD_freeDCtx(d);
}

// The compressed file being read: a descriptor and one reused input block.
class CompressedInput {
 public:
  CompressedInput(std::string path, Fd fd) : path_(std::move(path)), fd_(std::move(fd)), buf_(TakeBlock()) {}
  ~CompressedInput() { GiveBlock(std::move(buf_)); }
  CompressedInput(CompressedInput&&) = default;

  // Reads the next block. Returns its size, 0 at end of file.
  Result<size_t> Refill() {
    ssize_t n = ReadSome(fd_.get(), buf_.data(), buf_.size());
    if (n < 0) return ReadError(path_, errno);
    file_bytes_ += static_cast<uint64_t>(n);
    return static_cast<size_t>(n);
  }

  // Reads until at least `want` bytes are buffered or the file ends.
  Result<size_t> RefillAtLeast(size_t want) {
    size_t have = 0;
    while (have < want) {
      ssize_t n = ReadSome(fd_.get(), buf_.data() + have, buf_.size() - have);
      if (n < 0) return ReadError(path_, errno);
      if (n == 0) break;
      have += static_cast<size_t>(n);
    }
    file_bytes_ += have;
    return have;
  }

  char* data() { return buf_.data(); }
  const std::string& path() const { return path_; }
  uint64_t file_bytes() const { return file_bytes_; }

 private:
  std::string path_;
  Fd fd_;
  std::vector<char> buf_;
  uint64_t file_bytes_ = 0;
};

class PlainFileSource final : public ByteSource {
 public:
  PlainFileSource(std::string path, Fd fd, uint64_t length)
      : path_(std::move(path)), fd_(std::move(fd)), remaining_(length) {}

  Result<size_t> Read(char* dst, size_t cap) override {
    if (remaining_ == 0 || cap == 0) return size_t{0};
    size_t want = static_cast<size_t>(std::min<uint64_t>(cap, remaining_));
    ssize_t n = ReadSome(fd_.get(), dst, want);
    if (n < 0) return ReadError(path_, errno);
    if (n == 0) {
      if (remaining_ != UINT64_MAX) {
        return Status::IoError(Quoted(path_) + ": file ended after " + std::to_string(bytes_) +
                               " bytes of its byte range, " + std::to_string(remaining_) +
                               " bytes short");
      }
      remaining_ = 0;
      return size_t{0};
    }
    bytes_ += static_cast<uint64_t>(n);
    if (remaining_ != UINT64_MAX) remaining_ -= static_cast<uint64_t>(n);
    return static_cast<size_t>(n);
  }
  uint64_t compressed_bytes() const override { return bytes_; }

 private:
  std::string path_;
  Fd fd_;
  uint64_t remaining_;  // UINT64_MAX: read to the end of the file
  uint64_t bytes_ = 0;
};

class ZstdSource final : public ByteSource {
 public:
  ZstdSource(CompressedInput in, size_t first_block)
      : in_(std::move(in)), dctx_(TakeDctx()), buf_{in_.data(), first_block, 0} {}
  ~ZstdSource() override { GiveDctx(dctx_); }

  Result<size_t> Read(char* dst, size_t cap) override {
    if (done_ || cap == 0) return size_t{0};
    if (dctx_ == nullptr) return Status::Internal("cannot allocate a zstd decoder");
    ZSTD_outBuffer out{dst, cap, 0};
    for (;;) {
      if (buf_.pos == buf_.size && !eof_) {
        Result<size_t> n = in_.Refill();
        if (!n.ok()) return n.status();
        if (*n == 0) eof_ = true;
        buf_ = ZSTD_inBuffer{in_.data(), *n, 0};
      }
      size_t in_before = buf_.pos;
      size_t out_before = out.pos;
      size_t ret = ZSTD_decompressStream(dctx_, &out, &buf_);
      if (ZSTD_isError(ret)) {
        return Status::Corrupt(Quoted(in_.path()) + ": corrupt zstd data at compressed byte " +
                               std::to_string(Offset()) + ": " + ZstdProblem(ret));
      }
      // ret == 0 exactly when a frame has been decoded and flushed; a call
      // that moved nothing says nothing about the frame state.
      if (ret == 0) {
        frame_open_ = false;
      } else if (buf_.pos != in_before || out.pos != out_before) {
        frame_open_ = true;
      }
      if (out.pos == cap) return out.pos;
      if (buf_.pos == buf_.size && eof_) {
        if (out.pos > 0) return out.pos;
        if (frame_open_) {
          return Status::Corrupt(Quoted(in_.path()) + ": truncated zstd frame at compressed byte " +
                                 std::to_string(in_.file_bytes()));
        }
        done_ = true;
        return size_t{0};
      }
    }
  }
  uint64_t compressed_bytes() const override { return in_.file_bytes(); }

 private:
  // File offset of the next unconsumed compressed byte.
  uint64_t Offset() const { return in_.file_bytes() - (buf_.size - buf_.pos); }

  CompressedInput in_;
  ZSTD_DCtx* dctx_;
  ZSTD_inBuffer buf_;
  bool eof_ = false;
  bool frame_open_ = false;
  bool done_ = false;
};

class GzipSource final : public ByteSource {
 public:
  GzipSource(CompressedInput in, size_t first_block) : in_(std::move(in)) {
    std::memset(&strm_, 0, sizeof strm_);
    init_ok_ = inflateInit2(&strm_, 15 + 16) == Z_OK;  // 15 + 16: gzip wrapper only
    strm_.next_in = reinterpret_cast<Bytef*>(in_.data());
    strm_.avail_in = static_cast<uInt>(first_block);
  }
  ~GzipSource() override {
    if (init_ok_) inflateEnd(&strm_);
  }

  Result<size_t> Read(char* dst, size_t cap) override {
    if (done_ || cap == 0) return size_t{0};
    if (!init_ok_) return Status::Internal("cannot allocate a gzip decoder");
    cap = std::min<size_t>(cap, UINT_MAX);
    strm_.next_out = reinterpret_cast<Bytef*>(dst);
    strm_.avail_out = static_cast<uInt>(cap);
    for (;;) {
      if (strm_.avail_in == 0) {
        Result<size_t> n = in_.Refill();
        if (!n.ok()) return n.status();
        if (*n == 0) {
          size_t produced = cap - strm_.avail_out;
          if (produced > 0) return produced;
          if (in_member_) {
            return Status::Corrupt(Quoted(in_.path()) + ": truncated gzip member at compressed byte " +
                                   std::to_string(in_.file_bytes()));
          }
          done_ = true;
          return size_t{0};
        }
        strm_.next_in = reinterpret_cast<Bytef*>(in_.data());
        strm_.avail_in = static_cast<uInt>(*n);
      }
      if (member_ended_) {
        // More input after a member's trailer: the next member of a
        // concatenated (multi-member) gzip file.
        inflateReset(&strm_);
        member_ended_ = false;
      }
      in_member_ = true;
      int ret = inflate(&strm_, Z_NO_FLUSH);
      if (ret == Z_STREAM_END) {
        in_member_ = false;
        member_ended_ = true;
      } else if (ret != Z_OK && ret != Z_BUF_ERROR) {
        return Status::Corrupt(Quoted(in_.path()) + ": corrupt gzip data at compressed byte " +
                               std::to_string(in_.file_bytes() - strm_.avail_in) + ": " + GzipProblem(ret, strm_.msg));
      }
      if (strm_.avail_out == 0) return cap;
    }
  }
  uint64_t compressed_bytes() const override { return in_.file_bytes(); }

 private:
  CompressedInput in_;
  z_stream strm_;
  bool init_ok_ = false;
  bool in_member_ = false;     // inside a member whose trailer is not yet read
  bool member_ended_ = false;  // a member just ended; reset before more input
  bool done_ = false;
};

class MemoryByteSource final : public ByteSource {
 public:
  explicit MemoryByteSource(std::string bytes) : bytes_(std::move(bytes)) {}
  Result<size_t> Read(char* dst, size_t cap) override {
    size_t n = std::min(cap, bytes_.size() - pos_);
    std::memcpy(dst, bytes_.data() + pos_, n);
    pos_ += n;
    return n;
  }
  uint64_t compressed_bytes() const override { return pos_; }

 private:
  std::string bytes_;
  size_t pos_ = 0;
};

bool HasMagic(Compression c, const unsigned char* b, size_t n) {
  if (c == Compression::kGzip) return n >= 2 && b[0] == 0x1F && b[1] == 0x8B;
  if (n < 4) return false;
  if (b[0] == 0x28 && b[1] == 0xB5 && b[2] == 0x2F && b[3] == 0xFD) return true;
  // A zstd stream may also begin with a skippable frame, magic 0x184D2A5?.
  return (b[0] & 0xF0) == 0x50 && b[1] == 0x2A && b[2] == 0x4D && b[3] == 0x18;
}

}  // namespace

Compression CompressionFromName(const std::string& path) {
  if (EndsWith(path, ".zst")) return Compression::kZstd;
  if (EndsWith(path, ".gz")) return Compression::kGzip;
  return Compression::kNone;
}

const char* CompressionName(Compression c) {
  switch (c) {
    case Compression::kZstd: return "zstd";
    case Compression::kGzip: return "gzip";
    case Compression::kNone: break;
  }
  return "none";
}

Result<std::unique_ptr<ByteSource>> OpenShardSource(const std::string& path, Compression expected,
                                                    uint64_t offset, uint64_t length) {
  bool ranged = offset != 0 || length != UINT64_MAX;
  if (ranged && expected != Compression::kNone) {
    return Status::InvalidArgument(Quoted(path) + ": a byte range of " + CompressionName(expected) +
                                   " data cannot be read; byte ranges need an uncompressed file");
  }
  int raw_fd;
  do {
    raw_fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  } while (raw_fd < 0 && errno == EINTR);
  if (raw_fd < 0) return Status::IoError("cannot open " + Quoted(path) + ": " + ErrnoText(errno));
  Fd fd(raw_fd);
  struct stat st;
  if (::fstat(fd.get(), &st) != 0) return Status::IoError("cannot stat " + Quoted(path) + ": " + ErrnoText(errno));
  if (S_ISDIR(st.st_mode)) return Status::IoError("cannot open " + Quoted(path) + ": " + ErrnoText(EISDIR));
  // A file that one read takes whole gains nothing from a read-ahead hint;
  // a tiny shard saves the system call.
  if (static_cast<uint64_t>(st.st_size) > kInputBlock) ::posix_fadvise(fd.get(), 0, 0, POSIX_FADV_SEQUENTIAL);

  if (expected == Compression::kNone) {
    if (ranged) {
      uint64_t size = static_cast<uint64_t>(st.st_size);
      if (offset > size || (length != UINT64_MAX && length > size - offset)) {
        return Status::InvalidArgument(Quoted(path) + ": byte range at " + std::to_string(offset) +
                                       " of length " + std::to_string(length) +
                                       " runs past the end of the file (" + std::to_string(size) +
                                       " bytes)");
      }
      if (::lseek(fd.get(), static_cast<off_t>(offset), SEEK_SET) < 0) {
        return Status::IoError("cannot seek in " + Quoted(path) + ": " + ErrnoText(errno));
      }
    }
    return std::unique_ptr<ByteSource>(new PlainFileSource(path, std::move(fd), length));
  }

  if (expected == Compression::kGzip) {
    Result<std::unique_ptr<ByteSource>> whole = OpenWholeGzip(path, fd.get(), static_cast<uint64_t>(st.st_size));
    if (!whole.ok() || *whole != nullptr) return whole;
  }
  CompressedInput in(path, std::move(fd));
  Result<size_t> first = in.RefillAtLeast(4);
  if (!first.ok()) return first.status();
  auto* b = reinterpret_cast<const unsigned char*>(in.data());
  if (!HasMagic(expected, b, *first)) {
    const char* magic = expected == Compression::kZstd ? "28 B5 2F FD" : "1F 8B";
    return Status::Corrupt(Quoted(path) + ": not " + CompressionName(expected) +
                           " data: expected magic bytes " + magic + ", " + DescribeStart(b, *first));
  }
  if (expected == Compression::kZstd) return std::unique_ptr<ByteSource>(new ZstdSource(std::move(in), *first));
  return std::unique_ptr<ByteSource>(new GzipSource(std::move(in), *first));
}

void ReturnBlock(LentBlock* block) {
  if (block->bytes == nullptr) return;
  std::shared_ptr<BlockHome> home = std::move(block->home);
  block->home.reset();
  block->size = 0;
  if (home != nullptr) home->Give(std::move(*block));
  *block = LentBlock{};
}

std::unique_ptr<ByteSource> MemorySource(std::string bytes) {
  return std::make_unique<MemoryByteSource>(std::move(bytes));
}

}  // namespace fanfold
