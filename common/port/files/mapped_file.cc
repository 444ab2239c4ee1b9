#include "common/port/files/mapped_file.h"

#include <fcntl.h>
#include <sys/mman.h>
#include <sys/stat.h>
#include <unistd.h>

#include <cerrno>

#include "common/port/os_error.h"

namespace fanfold {

Result<std::unique_ptr<MappedFile>> MappedFile::Open(const std::string& path) {
  const int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return IoFailure("open", path, errno);
  struct stat st {};
  if (::fstat(fd, &st) != 0) {
    const int err = errno;
    ::close(fd);
    return IoFailure("stat", path, err);
  }
  const size_t size = static_cast<size_t>(st.st_size);
  const char* data = nullptr;
  if (size > 0) {
    void* p = ::mmap(nullptr, size, PROT_READ, MAP_PRIVATE, fd, 0);
    if (p == MAP_FAILED) {
      const int err = errno;
      ::close(fd);
      return IoFailure("map", path, err);
    }
    // Read once, front to back.
    (void)::madvise(p, size, MADV_SEQUENTIAL);
    data = static_cast<const char*>(p);
  }
  ::close(fd);  // the mapping keeps the file
  return std::unique_ptr<MappedFile>(new MappedFile(data, size));
}

MappedFile::~MappedFile() {
  if (data_ != nullptr) ::munmap(const_cast<char*>(data_), size_);
}

void MappedFile::Release(uint64_t from, uint64_t to) const {
  if (data_ == nullptr) return;
  const uint64_t page = static_cast<uint64_t>(::sysconf(_SC_PAGESIZE));
  if (to > size_) to = size_;
  const uint64_t lo = (from + page - 1) / page * page;
  const uint64_t hi = to / page * page;
  if (hi <= lo) return;
  (void)::madvise(const_cast<char*>(data_) + lo, hi - lo, MADV_DONTNEED);
}

}  // namespace fanfold
