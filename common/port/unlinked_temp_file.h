// UnlinkedTempFile: a scratch file that has no name. It is created in the
// system's temporary directory ($TMPDIR, else /tmp) with O_TMPFILE (Linux: it
// never has a name), else with mkstemp and unlinked at once, so the kernel
// frees its blocks when the descriptor closes — on
// success, on an error return and when the process is killed (SIGKILL
// included): no exit path can leave it behind. Written sequentially through a
// buffer, then rewound and read sequentially. Movable, not copyable; not
// thread-safe.
#pragma once

#include <cstdint>
#include <cstdio>
#include <memory>
#include <string>
#include <string_view>

#include "common/base/status.h"

namespace fanfold {

class UnlinkedTempFile {
 public:
  // A new empty file in `dir`, or in the system temporary directory when dir
  // is empty, read and written through a buffer of buffer_bytes. The name
  // (gone before this returns) starts with `tag`.
  static Result<UnlinkedTempFile> Create(const std::string& tag, size_t buffer_bytes, const std::string& dir = "");

  UnlinkedTempFile(UnlinkedTempFile&&) noexcept = default;
  UnlinkedTempFile& operator=(UnlinkedTempFile&&) noexcept = default;

  // Appends bytes (buffered). Errors are remembered and reported by Finish.
  void Write(std::string_view bytes);
  // Flushes what was written and moves to the start for reading.
  Status Rewind();
  // Reads exactly n bytes into dst. Returns false at a clean end of file
  // before the first byte, and sets *error for a short read or I/O error.
  bool Read(char* dst, size_t n, Status* error);

  uint64_t bytes_written() const { return written_; }

 private:
  struct Closer {
    void operator()(std::FILE* f) const { std::fclose(f); }
  };
  UnlinkedTempFile(std::FILE* f, std::string where) : file_(f), where_(std::move(where)) {}

  // The stdio buffer outlives the stream (fclose flushes through it), so it
  // is declared first and destroyed last.
  std::unique_ptr<char[]> buffer_;
  std::unique_ptr<std::FILE, Closer> file_;
  std::string where_;  // for messages: the directory it lives in
  uint64_t written_ = 0;
  bool write_failed_ = false;
};

}  // namespace fanfold
