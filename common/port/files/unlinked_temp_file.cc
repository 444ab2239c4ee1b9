#include "common/port/files/unlinked_temp_file.h"

#include "common/port/os_error.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
#include <utility>
#include <vector>

namespace fanfold {
namespace {

std::string TempDir(const std::string& dir) {
  if (!dir.empty()) return dir;
  const char* t = std::getenv("TMPDIR");
  return t != nullptr && *t != '\0' ? std::string(t) : std::string("/tmp");
}

}  // namespace

Result<UnlinkedTempFile> UnlinkedTempFile::Create(const std::string& tag, size_t buffer_bytes, const std::string& dir) {
  const std::string where = TempDir(dir);
  int fd = -1;
#ifdef O_TMPFILE
  // Linux: a file that never has a name at all.
  fd = open(where.c_str(), O_TMPFILE | O_RDWR | O_CLOEXEC, 0600);
#endif
  if (fd < 0) {
    // Elsewhere, or a file system without O_TMPFILE: named for a moment.
    std::string pattern = where + "/" + tag + "-XXXXXX";
    std::vector<char> name(pattern.begin(), pattern.end());
    name.push_back('\0');
    fd = mkstemp(name.data());
    if (fd < 0) {
      return IoFailure("create a temporary file in", where, errno);
    }
    unlink(name.data());  // nameless from here on: freed when closed, however the process ends
  }
  return UnlinkedTempFile(fd, where, buffer_bytes < 64 ? 64 : buffer_bytes);
}

UnlinkedTempFile::UnlinkedTempFile(int fd, std::string where, size_t buffer_bytes)
    : fd_(fd), where_(std::move(where)), buffer_(std::make_unique_for_overwrite<char[]>(buffer_bytes)),
      capacity_(buffer_bytes) {}

UnlinkedTempFile::UnlinkedTempFile(UnlinkedTempFile&& o) noexcept
    : fd_(std::exchange(o.fd_, -1)), where_(std::move(o.where_)), buffer_(std::move(o.buffer_)),
      capacity_(o.capacity_), begin_(o.begin_), end_(o.end_), written_(o.written_),
      write_failed_(o.write_failed_) {}

UnlinkedTempFile& UnlinkedTempFile::operator=(UnlinkedTempFile&& o) noexcept {
  if (this != &o) {
    if (fd_ >= 0) close(fd_);
    fd_ = std::exchange(o.fd_, -1);
    where_ = std::move(o.where_);
    buffer_ = std::move(o.buffer_);
    capacity_ = o.capacity_;
    begin_ = o.begin_;
    end_ = o.end_;
    written_ = o.written_;
    write_failed_ = o.write_failed_;
  }
  return *this;
}

UnlinkedTempFile::~UnlinkedTempFile() {
  if (fd_ >= 0) close(fd_);
}

bool UnlinkedTempFile::Flush() {
  size_t at = 0;
  while (at < end_ && !write_failed_) {
    const ssize_t n = ::write(fd_, buffer_.get() + at, end_ - at);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) write_failed_ = true;
    else at += static_cast<size_t>(n);
  }
  end_ = 0;
  return !write_failed_;
}

void UnlinkedTempFile::Write(std::string_view bytes) {
  written_ += bytes.size();
  while (!bytes.empty() && !write_failed_) {
    if (end_ == capacity_) Flush();
    const size_t take = std::min(bytes.size(), capacity_ - end_);
    std::memcpy(buffer_.get() + end_, bytes.data(), take);
    end_ += take;
    bytes.remove_prefix(take);
  }
}

Status UnlinkedTempFile::Rewind() {
  if (!Flush()) return Status::IoError("cannot write a temporary file in " + where_ + " (disk full?)");
  if (lseek(fd_, 0, SEEK_SET) != 0)
    return IoFailure("rewind a temporary file in", where_, errno);
  begin_ = end_ = 0;
  return Status::Ok();
}

bool UnlinkedTempFile::Fill(size_t n, Status* error) {
  if (end_ - begin_ >= n) return true;
  if (n > capacity_) {  // a longer view: the buffer grows
    auto bigger = std::make_unique_for_overwrite<char[]>(n);
    std::memcpy(bigger.get(), buffer_.get() + begin_, end_ - begin_);
    buffer_ = std::move(bigger);
    capacity_ = n;
  } else {
    std::memmove(buffer_.get(), buffer_.get() + begin_, end_ - begin_);
  }
  end_ -= begin_;
  begin_ = 0;
  while (end_ < n) {
    const ssize_t got = ::read(fd_, buffer_.get() + end_, capacity_ - end_);
    if (got < 0 && errno == EINTR) continue;
    if (got < 0) {
      *error = IoFailure("read back a temporary file in", where_, errno);
      return false;
    }
    if (got == 0) {
      if (end_ != 0) *error = Status::IoError("cannot read back a temporary file in " + where_ + ": it ended early");
      return false;
    }
    end_ += static_cast<size_t>(got);
  }
  return true;
}

bool UnlinkedTempFile::View(size_t n, std::string_view* view, Status* error) {
  if (!Fill(n, error)) return false;
  *view = std::string_view(buffer_.get() + begin_, n);
  begin_ += n;
  return true;
}

bool UnlinkedTempFile::Read(char* dst, size_t n, Status* error) {
  std::string_view v;
  if (!View(n, &v, error)) return false;
  if (n > 0) std::memcpy(dst, v.data(), n);
  return true;
}

}  // namespace fanfold
