// Builders for JSON Pointer (RFC 6901) locations used in job-file error
// messages ("/measures/2/fn"): escape one reference token and append it.
// Pure functions; thread-safe. (Parsing pointers: common/input/json_pointer.h.)
#pragma once

#include <string>
#include <string_view>

namespace fanfold {

// Returns pointer + "/" + token, with '~' → "~0" and '/' → "~1" (§3).
inline std::string ChildPointer(const std::string& pointer, std::string_view token) {
  std::string out = pointer + "/";
  for (char c : token) {
    if (c == '~') out += "~0";
    else if (c == '/') out += "~1";
    else out += c;
  }
  return out;
}
inline std::string ChildPointer(const std::string& pointer, size_t index) {
  return pointer + "/" + std::to_string(index);
}

}  // namespace fanfold
