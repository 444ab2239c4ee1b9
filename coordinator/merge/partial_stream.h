// PartialStream: a stored partial (docs/partial-state.md: a 160-byte
// header, then the body as one zstd frame, or raw when tiny) read as a
// stream, so the merge's batch of partials costs small buffers per partial
// instead of every body decompressed (docs/streaming-merge.md, "Batches read
// as streams"). Three parts:
//   StoredPartialBytes  where the stored bytes are: owned in memory, or a
//                       byte range of a file (a pack of the run directory)
//                       read with pread, so several streams may share it;
//   ScanStoredPartial   one pass that checks the checksum over every stored
//                       byte and reads what the run's totals need (samples,
//                       field and lookup counts, each reduction's kept and
//                       group counts), decompressing only up to the last
//                       reduction's group count;
//   PartialGroupStream  a cursor over one reduction's group table, decoded
//                       through a 64 KiB read buffer and a window that holds
//                       the current group: the same framing checks and
//                       messages as EncodedGroupCursor.
// Bad bytes give Status::Corrupt, never a crash. A StoredPartialBytes is
// read-only and thread-safe; a stream is not.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/partial/partial_codec.h"
#include "common/port/platform.h"

namespace fanfold {

class StoredPartialBytes {
 public:
  static std::unique_ptr<StoredPartialBytes> InMemory(std::string bytes);
  // Bytes [offset, offset + length) of an open file; `path` names it in messages.
  static std::unique_ptr<StoredPartialBytes> InFile(std::unique_ptr<ReadableFile> file, std::string path,
                                                    uint64_t offset, uint64_t length);
  uint64_t size() const { return length_; }
  bool in_memory() const { return file_ == nullptr; }
  // Bytes held in memory (0 for a file's).
  uint64_t memory_bytes() const { return bytes_.size(); }
  // Reads exactly n bytes at offset (of the partial) into buf.
  Status ReadAt(uint64_t offset, size_t n, char* buf) const;

 private:
  StoredPartialBytes() = default;
  std::string bytes_;
  std::unique_ptr<ReadableFile> file_;
  std::string path_;
  uint64_t offset_ = 0;
  uint64_t length_ = 0;
};

// What a scan found: `info` as OpenPartial fills it but without the body
// (header, samples, field and lookup counts, each reduction's kept count;
// reductions' `groups` views empty), each reduction's group count, and the
// memory one stream of this partial takes (zstd's window for its frame,
// plus the buffers).
struct ScannedPartial {
  std::vector<uint64_t> group_counts;
  uint64_t stream_bytes = 0;
  uint64_t raw_bytes = 0;  // the body decompressed (as its header says)
};
// measure_counts: per reduction of the plan, its measure count. With
// checksum_checked, the caller checked these very bytes (as OpenPartial's
// flag). A partial of another reduction count is Corrupt.
Status ScanStoredPartial(const StoredPartialBytes& bytes, const std::vector<size_t>& measure_counts,
                         bool checksum_checked, OpenedPartial* info, ScannedPartial* scanned);

// Decodes a stored body's bytes in order (zstd stream or raw) into a
// window: coordinator/merge/body_reader.h, internal to the streams.
class BodyReader;

class PartialGroupStream {
 public:
  // Reduction `reduction`'s group table of the partial in `bytes` (which
  // must outlive the stream), `measure_count` states per group. Opening
  // decodes the body up to that table; a failure shows in status().
  PartialGroupStream(const StoredPartialBytes* bytes, size_t reduction, size_t measure_count);
  ~PartialGroupStream();
  PartialGroupStream(const PartialGroupStream&) = delete;
  PartialGroupStream& operator=(const PartialGroupStream&) = delete;

  // As EncodedGroupCursor's. The views key() and state() stay valid until
  // the next Next() or SeekAtLeast() that moves the stream.
  bool Next();
  bool SeekAtLeast(std::string_view key);
  std::string_view key() const { return key_; }
  std::string_view state(size_t j) const { return states_[j]; }
  const Status& status() const { return status_; }
  uint64_t group_count() const { return count_; }
  uint64_t groups_read() const { return read_; }
  bool positioned() const { return positioned_; }

  // Bytes read from the stored partial at once, and the least the window
  // grows by.
  static constexpr size_t kReadStep = size_t{64} << 10;
  static constexpr size_t kWindowStep = size_t{64} << 10;
  // The largest zstd window a stored body may need (partials are written
  // at level 1: 512 KiB at most); a frame asking more is Corrupt.
  static constexpr int kWindowLogMax = 22;

 private:
  bool Fail(const Status& s);
  bool Fail(const std::string& what) { return Fail(Status::Corrupt(what)); }

  std::unique_ptr<BodyReader> in_;
  size_t m_;
  uint64_t count_ = 0;
  uint64_t read_ = 0;
  uint64_t table_left_ = 0;  // bytes of the group table not yet consumed
  size_t pending_ = 0;       // the current group's bytes, consumed on the next move
  bool positioned_ = false;
  bool done_ = false;
  std::string prev_key_;
  std::string_view key_;
  std::vector<std::string_view> states_;
  std::vector<size_t> at_, lens_;  // the current group's states: offsets in the window, lengths
  Status status_;
};

}  // namespace fanfold
