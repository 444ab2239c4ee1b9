// Platform: the seam between fanfold and the operating system — files (read,
// write, rename, remove, directory sync, listing, locking), file identity,
// the two clocks and the process id. Platform::Posix() is the real one;
// MemoryPlatform (memory_platform.h) keeps files in memory and injects faults
// for tests. Calls cost a virtual dispatch each, so callers make them per
// file operation, never per record. Implementations are thread-safe.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/port/files/file_identity.h"
#include "common/port/os_error.h"

namespace fanfold {

// How much of a file Sync makes durable: its data (fdatasync), or its data
// and all its metadata (fsync).
enum class SyncDepth { kData, kFull };

// How OpenForWrite treats an existing file: empty it, refuse it (EEXIST), or
// append to it. Every mode creates a missing file.
enum class CreateMode { kTruncate, kExclusive, kAppend };

// A file open for writing. Destroying it closes it (without a sync).
class WritableFile {
 public:
  virtual ~WritableFile() = default;
  // Writes all of data, retrying short writes and EINTR; a write that makes
  // no progress reports ENOSPC. On an error a prefix of data may be written.
  virtual OsError Append(std::string_view data) = 0;
  virtual OsError Sync(SyncDepth depth) = 0;
  // Closes the file; later calls fail with EBADF.
  virtual OsError Close() = 0;
};

// A file open for reading at offsets. Destroying it closes it.
class ReadableFile {
 public:
  virtual ~ReadableFile() = default;
  virtual OsError Size(uint64_t* size) = 0;
  // Reads exactly n bytes at offset into buf; EIO if the file ends first.
  virtual OsError ReadAt(uint64_t offset, size_t n, char* buf) = 0;
};

// An exclusive advisory lock on a file, held until destroyed.
class FileLock {
 public:
  virtual ~FileLock() = default;
};

class Platform {
 public:
  virtual ~Platform() = default;
  // The operating system's implementation; lives as long as the process.
  static Platform& Posix();

  // Reads the whole file into *out (cleared first).
  virtual OsError ReadFile(const std::string& path, std::string* out) = 0;
  virtual OsError OpenForRead(const std::string& path, std::unique_ptr<ReadableFile>* out) = 0;
  // Opens path for writing; a created file gets `permissions` (before umask).
  virtual OsError OpenForWrite(const std::string& path, CreateMode mode, unsigned permissions,
                               std::unique_ptr<WritableFile>* out) = 0;
  // rename(2): atomically replaces `to`.
  virtual OsError Rename(const std::string& from, const std::string& to) = 0;
  // Removes one file (a missing one is ENOENT).
  virtual OsError Remove(const std::string& path) = 0;
  // Removes a file, or a directory and everything below it; missing is ok.
  virtual OsError RemoveTree(const std::string& path) = 0;
  // Creates a directory and its missing parents; an existing one is ok.
  virtual OsError CreateDirectories(const std::string& path) = 0;
  // Makes the directory's entries durable (open + fsync; call() names the
  // step that failed).
  virtual OsError SyncDirectory(const std::string& dir) = 0;
  // The names in dir (not "." or ".."), in no particular order.
  virtual OsError ListDirectory(const std::string& dir, std::vector<std::string>* names) = 0;
  // True iff path names a file or directory (false on any error).
  virtual bool Exists(const std::string& path) = 0;
  virtual OsError Identify(const std::string& path, FileIdentity* out) = 0;
  // Creates path if missing and locks it without waiting; another holder
  // makes it fail with call() "flock".
  virtual OsError LockFile(const std::string& path, std::unique_ptr<FileLock>* out) = 0;

  // Nanoseconds since the Unix epoch.
  virtual uint64_t WallNanos() = 0;
  // Monotonic nanoseconds, for durations.
  virtual uint64_t MonotonicNanos() = 0;
  virtual int CurrentPid() = 0;
};

}  // namespace fanfold
