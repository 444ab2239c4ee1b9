// JsonDocument: the one preamble for decoding a whole JSON document (a run
// manifest, a summary, a scale result, a job file) with nlohmann: parse,
// insist on an object, turn a thrown json::exception into the caller's own
// error (where a text stops being JSON: json_syntax.h). Lenient field reads for
// documents that may come from another fanfold version. Pure; thread-safe.
#pragma once

#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

#include "common/base/json_syntax.h"
#include "common/base/status.h"

namespace fanfold {

// What a json::exception thrown while reading a parsed document means, in
// our words: "found a string where a number belongs", "found no \"size\"
// key where one belongs". (Without JSON_DIAGNOSTICS, which GCC 12 answers
// with false -Warray-bounds warnings, the exception does not know where.)
std::string JsonDecodeProblem(const nlohmann::json::exception& e);

// Parses text; if it is a JSON object, returns decode(root), else
// bad("not valid JSON at line L, column C: ...") or bad("not a JSON object").
// A json::exception thrown by decode (a missing key, a wrong type) becomes
// bad(JsonDecodeProblem(it)). `bad` maps a detail to the caller's Status;
// `decode` returns Result<T>.
template <typename T, typename Bad, typename Decode>
Result<T> DecodeJsonObject(std::string_view text, const Bad& bad, const Decode& decode) {
  nlohmann::json doc = nlohmann::json::parse(text, nullptr, /*allow_exceptions=*/false);
  if (doc.is_discarded()) {
    const std::string problem = JsonSyntaxProblem(text);
    return Status(bad(problem.empty() ? std::string("not a JSON object") : "not valid JSON" + problem));
  }
  if (!doc.is_object()) return Status(bad(std::string("not a JSON object")));
  try {
    return decode(doc);
  } catch (const nlohmann::json::exception& e) {
    return Status(bad(JsonDecodeProblem(e)));
  }
}

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
