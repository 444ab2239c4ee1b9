#include "common/base/json_document.h"

namespace fanfold {
namespace {

// "line L, column C" for a byte offset into text (1-based).
std::string LineColumn(std::string_view text, size_t byte) {
  size_t line = 1, col = 1;
  for (size_t i = 0; i < byte && i < text.size(); ++i) {
    if (text[i] == '\n') {
      ++line;
      col = 1;
    } else {
      ++col;
    }
  }
  return "line " + std::to_string(line) + ", column " + std::to_string(col);
}

}  // namespace

std::string JsonSyntaxProblem(std::string_view text) {
  // Parse again with exceptions only to learn where it broke.
  try {
    const nlohmann::json thrown_away = nlohmann::json::parse(text);  // GCC warns on a (void) cast of [[nodiscard]]
    (void)thrown_away;
  } catch (const nlohmann::json::parse_error& e) {
    std::string what = e.what();
    auto pos = what.find("error while parsing");
    return " at " + LineColumn(text, e.byte > 0 ? e.byte - 1 : 0) +
           (pos == std::string::npos ? "" : ": " + what.substr(pos));
  } catch (const nlohmann::json::exception& e) {  // e.g. out_of_range 406: a number too large for a double
    std::string what = e.what();
    auto pos = what.find("] ");
    return ": " + (pos == std::string::npos ? what : what.substr(pos + 2));
  }
  return "";
}

const nlohmann::json& JsonObjectOrEmpty(const nlohmann::json& j, const char* key) {
  static const nlohmann::json kEmpty = nlohmann::json::object();
  auto it = j.find(key);
  return it != j.end() && it->is_object() ? *it : kEmpty;
}

}  // namespace fanfold
