#include "common/port/files/file_identity.h"

#include <sys/stat.h>

#include <cerrno>

namespace fanfold {

OsError IdentifyFile(const std::string& path, FileIdentity* out) {
  struct stat st;
  if (::stat(path.c_str(), &st) != 0) return OsError::Of("stat", errno);
  out->size = static_cast<uint64_t>(st.st_size);
  out->mtime_ns = static_cast<int64_t>(st.st_mtim.tv_sec) * 1'000'000'000 + st.st_mtim.tv_nsec;
  return OsError::Ok();
}

}  // namespace fanfold
