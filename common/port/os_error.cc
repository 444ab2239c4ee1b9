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

}  // namespace fanfold
