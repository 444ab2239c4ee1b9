#include "common/port/files/file_util.h"

namespace fanfold {

const DurableWritePolicy& AtomicFilePolicy() {
  static const DurableWritePolicy policy;  // the defaults are this policy
  return policy;
}

Status WriteFileAtomic(const std::string& path, std::string_view data) {
  return WriteFileDurably(Platform::Posix(), path, data, AtomicFilePolicy());
}

Status ReadWholeFile(const std::string& path, std::string* out) {
  return Platform::Posix().ReadFile(path, out).ToStatus(path);
}

}  // namespace fanfold
