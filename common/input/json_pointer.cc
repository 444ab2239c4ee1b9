#include "common/input/json_pointer.h"

namespace fanfold {

Result<std::vector<std::string>> ParseJsonPointer(std::string_view text) {
  std::vector<std::string> tokens;
  if (text.empty()) return tokens;
  if (text[0] != '/') {
    return Status::InvalidArgument("'" + std::string(text) + "' is not a JSON Pointer: it must start with '/'");
  }
  std::string token;
  for (size_t i = 1; i <= text.size(); ++i) {
    if (i == text.size() || text[i] == '/') {
      tokens.push_back(token);
      token.clear();
    } else if (text[i] == '~') {
      char next = i + 1 < text.size() ? text[i + 1] : '\0';
      if (next != '0' && next != '1') {
        return Status::InvalidArgument("'" + std::string(text) +
                                       "' is not a JSON Pointer: '~' must be followed by '0' or '1'");
      }
      token += next == '0' ? '~' : '/';
      ++i;
    } else {
      token += text[i];
    }
  }
  return tokens;
}

int64_t JsonPointerIndex(std::string_view token) {
  // 18 digits always fit in int64; longer indices are never real arrays.
  if (token.empty() || token.size() > 18) return -1;
  if (token.size() > 1 && token[0] == '0') return -1;
  int64_t v = 0;
  for (char c : token) {
    if (c < '0' || c > '9') return -1;
    v = v * 10 + (c - '0');
  }
  return v;
}

}  // namespace fanfold
