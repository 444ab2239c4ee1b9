// The POSIX implementation of Platform: the only file, with file_identity.cc,
// that calls the operating system for files. Stateless apart from the
// descriptors its file objects own; thread-safe.
#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <filesystem>
#include <system_error>

#include "common/port/clock.h"
#include "common/port/platform.h"
#include "common/port/process_control.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;

// Owns one descriptor; closes it on destruction.
class Fd {
 public:
  explicit Fd(int fd) : fd_(fd) {}
  Fd(const Fd&) = delete;
  Fd& operator=(const Fd&) = delete;
  ~Fd() { Reset(); }
  int get() const { return fd_; }
  int Reset() {
    int rc = fd_ >= 0 ? ::close(fd_) : 0;
    fd_ = -1;
    return rc;
  }

 private:
  int fd_;
};

class PosixWritableFile final : public WritableFile {
 public:
  explicit PosixWritableFile(int fd) : fd_(fd) {}
  OsError Append(std::string_view data) override {
    size_t done = 0;
    while (done < data.size()) {
      ssize_t n = ::write(fd_.get(), data.data() + done, data.size() - done);
      if (n < 0 && errno == EINTR) continue;
      if (n <= 0) return OsError::Of("write", n < 0 ? errno : ENOSPC);
      done += static_cast<size_t>(n);
    }
    return OsError::Ok();
  }
  OsError Sync(SyncDepth depth) override {
    int rc = depth == SyncDepth::kData ? ::fdatasync(fd_.get()) : ::fsync(fd_.get());
    return rc == 0 ? OsError::Ok() : OsError::Of(depth == SyncDepth::kData ? "fdatasync" : "fsync", errno);
  }
  OsError Close() override {
    if (fd_.get() < 0) return OsError::Of("close", EBADF);
    return fd_.Reset() == 0 ? OsError::Ok() : OsError::Of("close", errno);
  }

 private:
  Fd fd_;
};

class PosixReadableFile final : public ReadableFile {
 public:
  explicit PosixReadableFile(int fd) : fd_(fd) {}
  OsError Size(uint64_t* size) override {
    struct stat st;
    if (::fstat(fd_.get(), &st) != 0) return OsError::Of("fstat", errno);
    *size = static_cast<uint64_t>(st.st_size);
    return OsError::Ok();
  }
  OsError ReadAt(uint64_t offset, size_t n, char* buf) override {
    size_t done = 0;
    while (done < n) {
      ssize_t got = ::pread(fd_.get(), buf + done, n - done, static_cast<off_t>(offset + done));
      if (got < 0 && errno == EINTR) continue;
      if (got <= 0) return OsError::Of("read", got < 0 ? errno : EIO);
      done += static_cast<size_t>(got);
    }
    return OsError::Ok();
  }

 private:
  Fd fd_;
};

// flock() is released when its descriptor closes.
class PosixFileLock final : public FileLock {
 public:
  explicit PosixFileLock(int fd) : fd_(fd) {}

 private:
  Fd fd_;
};

OsError FromErrorCode(const char* call, const std::error_code& ec) {
  return ec ? OsError::Of(call, ec.value()) : OsError::Ok();
}

class PosixPlatform final : public Platform {
 public:
  OsError ReadFile(const std::string& path, std::string* out) override {
    Fd fd(::open(path.c_str(), O_RDONLY | O_CLOEXEC));
    if (fd.get() < 0) return OsError::Of("open", errno);
    out->clear();
    char buf[1 << 16];
    for (;;) {
      ssize_t n = ::read(fd.get(), buf, sizeof buf);
      if (n < 0 && errno == EINTR) continue;
      if (n < 0) return OsError::Of("read", errno);
      if (n == 0) return OsError::Ok();
      out->append(buf, static_cast<size_t>(n));
    }
  }

  OsError OpenForRead(const std::string& path, std::unique_ptr<ReadableFile>* out) override {
    int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd < 0) return OsError::Of("open", errno);
    *out = std::make_unique<PosixReadableFile>(fd);
    return OsError::Ok();
  }

  OsError OpenForWrite(const std::string& path, CreateMode mode, unsigned permissions,
                       std::unique_ptr<WritableFile>* out) override {
    int flags = O_WRONLY | O_CREAT | O_CLOEXEC;
    switch (mode) {
      case CreateMode::kTruncate: flags |= O_TRUNC; break;
      case CreateMode::kExclusive: flags |= O_EXCL; break;
      case CreateMode::kAppend: flags |= O_APPEND; break;
    }
    int fd = ::open(path.c_str(), flags, static_cast<mode_t>(permissions));
    if (fd < 0) return OsError::Of("open", errno);
    *out = std::make_unique<PosixWritableFile>(fd);
    return OsError::Ok();
  }

  OsError Rename(const std::string& from, const std::string& to) override {
    return ::rename(from.c_str(), to.c_str()) == 0 ? OsError::Ok() : OsError::Of("rename", errno);
  }

  OsError Remove(const std::string& path) override {
    return ::unlink(path.c_str()) == 0 ? OsError::Ok() : OsError::Of("unlink", errno);
  }

  OsError RemoveTree(const std::string& path) override {
    std::error_code ec;
    fs::remove_all(path, ec);
    return FromErrorCode("remove", ec);
  }

  OsError CreateDirectories(const std::string& path) override {
    std::error_code ec;
    fs::create_directories(path, ec);
    return FromErrorCode("mkdir", ec);
  }

  OsError SyncDirectory(const std::string& dir) override {
    Fd fd(::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC));
    if (fd.get() < 0) return OsError::Of("open", errno);
    return ::fsync(fd.get()) == 0 ? OsError::Ok() : OsError::Of("fsync", errno);
  }

  OsError ListDirectory(const std::string& dir, std::vector<std::string>* names) override {
    names->clear();
    std::error_code ec;
    for (const auto& e : fs::directory_iterator(dir, ec)) names->push_back(e.path().filename().string());
    return FromErrorCode("opendir", ec);
  }

  bool Exists(const std::string& path) override {
    std::error_code ec;
    return fs::exists(path, ec);
  }

  OsError Identify(const std::string& path, FileIdentity* out) override { return IdentifyFile(path, out); }

  OsError LockFile(const std::string& path, std::unique_ptr<FileLock>* out) override {
    int fd = ::open(path.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
    if (fd < 0) return OsError::Of("open", errno);
    if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
      int err = errno;
      ::close(fd);
      return OsError::Of("flock", err);
    }
    *out = std::make_unique<PosixFileLock>(fd);
    return OsError::Ok();
  }

  uint64_t WallNanos() override { return fanfold::WallNanos(); }
  uint64_t MonotonicNanos() override { return fanfold::MonotonicNanos(); }
  int CurrentPid() override { return fanfold::CurrentPid(); }
};

}  // namespace

Platform& Platform::Posix() {
  static PosixPlatform* const posix = new PosixPlatform();  // never destroyed: usable from exit handlers
  return *posix;
}

}  // namespace fanfold
