// JsonDocument: the one preamble for decoding a whole JSON document (a run
// manifest, a summary, a scale result, a job file) with nlohmann: parse,
// insist on an object, turn a thrown json::exception into the caller's own
// error, and say where a text stopped being JSON. Lenient field reads for
// documents that may come from another fanfold version. Pure; thread-safe.
#pragma once

#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

#include "common/base/status.h"

namespace fanfold {

// Parses text; if it is a JSON object, returns decode(root), else
// bad("not a JSON object"). A json::exception thrown by decode (a missing
// key, a wrong type) becomes bad(its what()). `bad` maps a detail to the
// caller's Status; `decode` returns Result<T>.
template <typename T, typename Bad, typename Decode>
Result<T> DecodeJsonObject(std::string_view text, const Bad& bad, const Decode& decode) {
  nlohmann::json doc = nlohmann::json::parse(text, nullptr, /*allow_exceptions=*/false);
  if (doc.is_discarded() || !doc.is_object()) return Status(bad(std::string("not a JSON object")));
  try {
    return decode(doc);
  } catch (const nlohmann::json::exception& e) {
    return Status(bad(std::string(e.what())));
  }
}

// Where and why text is not valid JSON, for a message that follows
// "not valid JSON": " at line L, column C: error while parsing ..." (1-based,
// the byte where parsing stopped), or ": <reason>" when no position applies
// (e.g. a number too large for a double), or "" if text is valid JSON.
std::string JsonSyntaxProblem(std::string_view text);

// j[key] as T; `fallback` when the key is missing, null or of another type.
template <typename T>
T JsonValueOr(const nlohmann::json& j, const char* key, T fallback) {
  auto it = j.find(key);
  if (it == j.end() || it->is_null()) return fallback;
  try {
    return it->get<T>();
  } catch (const nlohmann::json::exception&) {
    return fallback;
  }
}

// j[key] if it is an object, else an empty object.
const nlohmann::json& JsonObjectOrEmpty(const nlohmann::json& j, const char* key);

}  // namespace fanfold
