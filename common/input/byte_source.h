// ByteSource: a stream of a shard's decompressed bytes. OpenShardSource picks
// the decoder from the file name (".zst", ".gz", otherwise plain), confirms it
// by the magic bytes, and streams into the caller's buffer, so memory stays
// bounded whatever the shard size; a gzip file small enough is read whole
// and decompressed in one call instead (whole_gzip.h). Errors name the file
// and what went wrong (truncated frame, corrupt data, wrong magic). One
// reader per source; not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>
#include <string>

#include "common/base/status.h"
#include "common/input/block_study.h"

namespace fanfold {

class BlockLender;

enum class Compression { kNone, kZstd, kGzip };

// Compression implied by a file name's last extension.
Compression CompressionFromName(const std::string& path);
const char* CompressionName(Compression c);

class ByteSource {
 public:
  virtual ~ByteSource() = default;
  // Reads up to cap decompressed bytes into dst. Returns the count, 0 only at
  // the clean end of the stream, or an error (truncated/corrupt input).
  virtual Result<size_t> Read(char* dst, size_t cap) = 0;
  // Bytes consumed from the underlying file so far.
  virtual uint64_t compressed_bytes() const = 0;
  // True iff the first byte this source yields is the first byte of its file
  // (false for a chunk of a cut file other than the first): a byte-order mark
  // is skipped only there, so a cut file reads exactly as the whole file.
  virtual bool starts_file() const { return true; }
  // Non-null iff the source hands out its bytes as whole blocks
  // (decode_ahead.h); a ChunkBuffer then takes the blocks instead of
  // copying them through Read. Read still works (it copies).
  virtual BlockLender* lender() { return nullptr; }
};

// A block of decompressed bytes lent whole. The allocation holds `front`
// writable bytes, then the data (`size` of at most `cap` bytes), then `tail`
// writable bytes; `home` takes the allocation back for reuse.
class BlockHome;
struct LentBlock {
  std::unique_ptr<char[]> bytes;
  size_t front = 0;
  size_t cap = 0;
  size_t tail = 0;
  size_t size = 0;
  std::shared_ptr<BlockHome> home;
  // What the lender's study found in the bytes (block_study.h); kept with
  // the allocation for reuse.
  std::unique_ptr<BlockNote> note;
  char* data() const { return bytes.get() + front; }
};

// Where a LentBlock's allocation goes back to (thread-safe).
class BlockHome {
 public:
  virtual ~BlockHome() = default;
  virtual void Give(LentBlock block) = 0;
};

// Gives a block back to its home, if it has one (an empty block has none).
void ReturnBlock(LentBlock* block);

class BlockLender {
 public:
  virtual ~BlockLender() = default;
  // Moves the next block of bytes into *out and returns its size: 0 only at
  // the clean end of the stream. As ByteSource::Read, bytes that arrived
  // before an error come first and the error with the next call; after an
  // error or the end every call returns the same. The caller returns the
  // block with ReturnBlock when done with it.
  virtual Result<size_t> Lend(LentBlock* out) = 0;
  // Runs study on every block before it is lent (block_study.h), on the
  // thread that fills it. REQUIRES: no block lent yet. Default: ignored
  // (the blocks then carry no note of the study's making).
  virtual void SetStudy(std::shared_ptr<BlockStudy> study) { (void)study; }
};

// Opens `path`, reading the byte range [offset, offset + length) of it when
// length != UINT64_MAX (byte ranges are only valid for kNone).
Result<std::unique_ptr<ByteSource>> OpenShardSource(const std::string& path, Compression expected,
                                                    uint64_t offset = 0,
                                                    uint64_t length = UINT64_MAX);

// A source over bytes held in memory (tests, fuzzers), with no compression.
std::unique_ptr<ByteSource> MemorySource(std::string bytes);

}  // namespace fanfold
