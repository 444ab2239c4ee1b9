// UnlinkedTempFile: a scratch file that has no name. It is created in the
// system's temporary directory ($TMPDIR, else /tmp) with O_TMPFILE (Linux: it
// never has a name), else with mkstemp and unlinked at once, so the kernel
// frees its blocks when the descriptor closes — on success, on an error
// return and when the process is killed (SIGKILL included): no exit path can
// leave it behind. Written sequentially through its own buffer, then
// rewound and read sequentially, either into the caller's memory or as
// views of the buffer (no copy, no stdio locking per call). Movable, not
// copyable; not thread-safe.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "common/base/status.h"

namespace fanfold {

class UnlinkedTempFile {
 public:
  // A new empty file in `dir`, or in the system temporary directory when dir
  // is empty, read and written through a buffer of buffer_bytes (it grows
  // for a longer view). The name, if it ever had one, starts with `tag`.
  static Result<UnlinkedTempFile> Create(const std::string& tag, size_t buffer_bytes, const std::string& dir = "");

  UnlinkedTempFile(UnlinkedTempFile&& o) noexcept;
  UnlinkedTempFile& operator=(UnlinkedTempFile&& o) noexcept;
  UnlinkedTempFile(const UnlinkedTempFile&) = delete;
  UnlinkedTempFile& operator=(const UnlinkedTempFile&) = delete;
  ~UnlinkedTempFile();

  // Appends bytes (buffered). A failed write is remembered and reported by
  // Rewind.
  void Write(std::string_view bytes);
  // Writes what is buffered and moves to the start for reading.
  Status Rewind();
  // Reads exactly n bytes into dst. Returns false at a clean end of file
  // before the first byte, and sets *error for a short read or I/O error.
  bool Read(char* dst, size_t n, Status* error);
  // Like Read, but *view points into the file's buffer, valid until the
  // next call on this file.
  bool View(size_t n, std::string_view* view, Status* error);

  uint64_t bytes_written() const { return written_; }

 private:
  UnlinkedTempFile(int fd, std::string where, size_t buffer_bytes);
  bool Flush();
  // Makes at least n bytes readable at buffer_ + begin_; false at the end.
  bool Fill(size_t n, Status* error);

  int fd_ = -1;
  std::string where_;  // for messages: the directory it lives in
  std::unique_ptr<char[]> buffer_;
  size_t capacity_ = 0;
  size_t begin_ = 0, end_ = 0;  // writing: [0, end_) waits; reading: [begin_, end_) is unread
  uint64_t written_ = 0;
  bool write_failed_ = false;
};

}  // namespace fanfold
