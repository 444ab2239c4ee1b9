#include "common/base/json_document.h"

namespace fanfold {
namespace {

// "a number" for nlohmann's type names ("number", "string", "object", ...).
std::string WithArticle(const std::string& type) {
  if (type == "null") return "null";
  if (type == "object" || type == "array") return "an " + type;
  return "a " + type;
}

}  // namespace

std::string JsonDecodeProblem(const nlohmann::json::exception& e) {
  // what() is "[json.exception.type_error.302] type must be number, but is string":
  // the tag, then nlohmann's sentence.
  std::string rest = e.what();
  if (size_t tag = rest.find("] "); tag != std::string::npos) rest = rest.substr(tag + 2);
  if (rest.rfind("type must be ", 0) == 0) {
    const size_t but = rest.find(", but is ");
    if (but != std::string::npos)
      return "found " + WithArticle(rest.substr(but + 9)) + " where " + WithArticle(rest.substr(13, but - 13)) +
             " belongs";
  }
  if (rest.rfind("key '", 0) == 0 && rest.size() > 16 && rest.compare(rest.size() - 11, 11, "' not found") == 0)
    return "found no \"" + rest.substr(5, rest.size() - 16) + "\" key where one belongs";
  if (rest.rfind("cannot use at() with ", 0) == 0)
    return "found " + WithArticle(rest.substr(21)) + " where an object belongs";
  return "unreadable: " + rest;
}

const nlohmann::json& JsonObjectOrEmpty(const nlohmann::json& j, const char* key) {
  static const nlohmann::json kEmpty = nlohmann::json::object();
  auto it = j.find(key);
  return it != j.end() && it->is_object() ? *it : kEmpty;
}

}  // namespace fanfold
