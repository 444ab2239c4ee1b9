#include "common/transport/spill_file.h"

#include <fcntl.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>
#include <cstring>

#include "common/port/os_error.h"

namespace fanfold {
namespace {

Status ErrnoStatus(const std::string& what, const std::string& path, int err) {
  return Status::IoError(what + " '" + path + "': " + ErrnoText(err));
}

// Closes fd on every exit path.
struct FdCloser {
  int fd;
  ~FdCloser() {
    if (fd >= 0) ::close(fd);
  }
};

}  // namespace

std::string SpillFileName(std::string_view segment, uint32_t slot, uint64_t seq) {
  return std::string(segment) + "-w" + std::to_string(slot) + "-" + std::to_string(seq) + ".partial";
}

bool IsPlainFileName(std::string_view name) {
  return !name.empty() && name != "." && name != ".." &&
         name.find_first_of(std::string_view("/\0", 2)) == std::string_view::npos;
}

Status WriteSpillFile(const std::string& dir, const std::string& name, std::string_view bytes) {
  if (!IsPlainFileName(name)) return Status::InvalidArgument("bad spill file name '" + name + "'");
  const std::string path = dir + "/" + name;
  const std::string temp = path + ".tmp";
  int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0600);
  if (fd < 0) return ErrnoStatus("cannot create spill file", temp, errno);
  {
    FdCloser closer{fd};
    const char* p = bytes.data();
    size_t left = bytes.size();
    while (left > 0) {
      ssize_t n = ::write(fd, p, left);
      if (n < 0 && errno == EINTR) continue;
      if (n <= 0) {
        int err = n < 0 ? errno : ENOSPC;
        ::unlink(temp.c_str());
        return ErrnoStatus("cannot write spill file", temp, err);
      }
      p += n;
      left -= static_cast<size_t>(n);
    }
    if (::fsync(fd) != 0) {
      int err = errno;
      ::unlink(temp.c_str());
      return ErrnoStatus("cannot sync spill file", temp, err);
    }
  }
  if (::rename(temp.c_str(), path.c_str()) != 0) {
    int err = errno;
    ::unlink(temp.c_str());
    return ErrnoStatus("cannot rename spill file to", path, err);
  }
  return Status::Ok();
}

Status TakeSpillFile(const std::string& dir, const std::string& name, uint64_t expected_length,
                     std::string* out) {
  if (!IsPlainFileName(name)) return Status::Corrupt("bad spill file name '" + name + "'");
  const std::string path = dir + "/" + name;
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return ErrnoStatus("cannot open spill file", path, errno);
  FdCloser closer{fd};
  ::unlink(path.c_str());  // the open descriptor keeps the bytes readable
  struct stat st;
  if (::fstat(fd, &st) != 0) return ErrnoStatus("cannot stat spill file", path, errno);
  if (static_cast<uint64_t>(st.st_size) != expected_length) {
    return Status::Corrupt("spill file '" + path + "' has " + std::to_string(st.st_size) +
                           " bytes, the worker reported " + std::to_string(expected_length));
  }
  out->resize(expected_length);
  size_t got = 0;
  while (got < expected_length) {
    ssize_t n = ::read(fd, out->data() + got, expected_length - got);
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      out->clear();
      return ErrnoStatus("cannot read spill file", path, n < 0 ? errno : EIO);
    }
    got += static_cast<size_t>(n);
  }
  return Status::Ok();
}

}  // namespace fanfold
