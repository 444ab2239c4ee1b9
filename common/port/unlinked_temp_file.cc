#include "common/port/unlinked_temp_file.h"

#include <fcntl.h>
#include <unistd.h>

#include <cerrno>
#include <cstdlib>
#include <cstring>
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
      return Status::IoError("cannot create a temporary file in " + where + ": " + std::strerror(errno));
    }
    unlink(name.data());  // nameless from here on: freed when closed, however the process ends
  }
  std::FILE* f = fdopen(fd, "w+b");
  if (f == nullptr) {
    close(fd);
    return Status::IoError("cannot open a temporary file in " + where + ": " + std::strerror(errno));
  }
  UnlinkedTempFile t(f, where);
  t.buffer_ = std::make_unique_for_overwrite<char[]>(buffer_bytes);
  std::setvbuf(f, t.buffer_.get(), _IOFBF, buffer_bytes);
  return t;
}

void UnlinkedTempFile::Write(std::string_view bytes) {
  if (bytes.empty() || write_failed_) return;
  if (std::fwrite(bytes.data(), 1, bytes.size(), file_.get()) != bytes.size()) write_failed_ = true;
  written_ += bytes.size();
}

Status UnlinkedTempFile::Rewind() {
  if (write_failed_ || std::fflush(file_.get()) != 0)
    return Status::IoError("cannot write a temporary file in " + where_ + " (disk full?)");
  if (std::fseek(file_.get(), 0, SEEK_SET) != 0)
    return Status::IoError("cannot rewind a temporary file in " + where_ + ": " + std::strerror(errno));
  return Status::Ok();
}

bool UnlinkedTempFile::Read(char* dst, size_t n, Status* error) {
  if (n == 0) return true;
  const size_t got = std::fread(dst, 1, n, file_.get());
  if (got == n) return true;
  if (got == 0 && std::feof(file_.get())) return false;
  *error = Status::IoError("cannot read back a temporary file in " + where_ +
                           (std::ferror(file_.get()) ? std::string(": ") + std::strerror(errno) : ": it ended early"));
  return false;
}

}  // namespace fanfold
