#include "common/job/job_checker.h"

#include <cmath>
#include <sstream>
#include <vector>

#include "common/base/json_location.h"
#include "common/base/nearest_names.h"
#include "common/base/number_text.h"
#include "common/base/value_compare.h"

namespace fanfold {
namespace {

using nlohmann::json;

const char* TypeName(const json& v) {
  switch (v.type()) {
    case json::value_t::null: return "null";
    case json::value_t::boolean: return "a boolean";
    case json::value_t::number_integer:
    case json::value_t::number_unsigned: return "an integer";
    case json::value_t::number_float: return "a number";
    case json::value_t::string: return "a string";
    case json::value_t::array: return "an array";
    case json::value_t::object: return "an object";
    default: return "a value";
  }
}

}  // namespace

std::string FoundText(const json& v) {
  if (v.is_string() || v.is_number() || v.is_boolean()) {
    std::string s = v.dump();
    if (s.size() > 60) s = s.substr(0, 57) + "...";
    return s + " (" + TypeName(v) + ")";
  }
  return TypeName(v);
}

std::string Quoted(std::string_view name) {
  std::string out = "\"";  // appended: GCC 12 falsely warns on "\"" + string (-Wrestrict)
  return out.append(name).append("\"");
}

Status JobChecker::Error(const std::string& pointer, const std::string& found, const std::string& expected) const {
  return Status::InvalidArgument(file_ + ": " + (pointer.empty() ? "(top level)" : pointer) + ": found " + found +
                                 "; expected " + expected);
}

Status JobChecker::OnlyKeys(const json& obj, const std::string& pointer, const std::set<std::string>& allowed) const {
  for (auto it = obj.begin(); it != obj.end(); ++it) {
    if (allowed.count(it.key())) continue;
    std::string list;
    for (const auto& k : allowed) list += (list.empty() ? "" : ", ") + k;
    const std::vector<std::string> names(allowed.begin(), allowed.end());
    return Error(ChildPointer(pointer, it.key()),
                 "unknown key \"" + it.key() + "\"" + DidYouMean(it.key(), names, Quoted), "one of: " + list);
  }
  return Status::Ok();
}

Status JobChecker::String(const json& v, const std::string& p, std::string* out, bool nonempty) const {
  if (!v.is_string()) return Error(p, FoundText(v), "a string");
  *out = v.get<std::string>();
  if (nonempty && out->empty()) return Error(p, "an empty string", "a non-empty string");
  return Status::Ok();
}

Status JobChecker::Number(const json& v, const std::string& p, double lo, double hi, bool open, double* out) const {
  if (!v.is_number()) return Error(p, FoundText(v), "a number");
  double d = v.get<double>();
  // An integer the nearest double would change (2^53 + 1) is refused
  // rather than read as another number than the one written.
  if (v.is_number_integer()) {
    const WideInt w = v.is_number_unsigned() ? static_cast<WideInt>(v.get<uint64_t>())
                                             : static_cast<WideInt>(v.get<int64_t>());
    if (CompareWideToDouble(w, d) != 0) {
      char buf[kNumberTextMax];
      return Error(p, FoundText(v), "a number a double holds exactly (this one would be read as " +
                                        std::string(FormatNumber(d, buf)) + ")");
    }
  }
  bool in = open ? (d > lo && d < hi) : (d >= lo && d <= hi);
  if (!in || !std::isfinite(d)) {
    std::ostringstream range;
    range << "a number in " << (open ? "(" : "[") << lo << ", " << hi << (open ? ")" : "]");
    return Error(p, FoundText(v), range.str());
  }
  *out = d;
  return Status::Ok();
}

Status JobChecker::Integer(const json& v, const std::string& p, uint64_t lo, uint64_t hi, uint64_t* out) const {
  if (!v.is_number_integer() || (v.is_number_integer() && !v.is_number_unsigned() && v.get<int64_t>() < 0) ||
      v.get<uint64_t>() < lo || v.get<uint64_t>() > hi) {
    return Error(p, FoundText(v), "an integer in [" + std::to_string(lo) + ", " + std::to_string(hi) + "]");
  }
  *out = v.get<uint64_t>();
  return Status::Ok();
}

}  // namespace fanfold
