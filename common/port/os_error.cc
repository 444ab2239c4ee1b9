#include "common/port/os_error.h"

#include <cstring>

namespace fanfold {

std::string ErrnoText(int err) {
  char buf[256];
  // GNU strerror_r may return a static string instead of filling buf.
  const char* text = strerror_r(err, buf, sizeof buf);
  if (text == nullptr || *text == '\0') return "errno " + std::to_string(err);
  return text;
}

Status IoFailure(std::string_view what, const std::string& path, int err) {
  std::string m = "cannot ";
  m.append(what).append(" '").append(path).append("': ").append(ErrnoText(err));
  return Status::IoError(std::move(m));
}

Status OsError::ToStatus(std::string_view what, const std::string& path) const {
  if (ok()) return Status::Ok();
  return IoFailure(what, path, err_);
}

}  // namespace fanfold
