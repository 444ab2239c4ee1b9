// JobChecker: walks a job file's JSON document and turns what it finds into
// values or into the first error, naming the job file, the JSON Pointer
// (RFC 6901) of the value at fault, what was found and what was expected.
// Shared by the parsers of the job's parts (job_spec.cc, reduction_parser.cc).
// Holds only the file name; thread-compatible.
#pragma once

#include <cstdint>
#include <set>
#include <string>
#include <string_view>

#include <nlohmann/json.hpp>

#include "common/base/status.h"

namespace fanfold {

// Short rendering of a found value for messages: the value and its type
// for scalars ("\"x\" (a string)"), the type alone otherwise.
std::string FoundText(const nlohmann::json& v);

// "\"name\"", for DidYouMean over job-file keys and names.
std::string Quoted(std::string_view name);

class JobChecker {
 public:
  explicit JobChecker(std::string file) : file_(std::move(file)) {}

  const std::string& file() const { return file_; }

  // The error "FILE: POINTER: found FOUND; expected EXPECTED".
  Status Error(const std::string& pointer, const std::string& found, const std::string& expected) const;

  // Fails iff obj has a key outside `allowed` (offering the nearest).
  Status OnlyKeys(const nlohmann::json& obj, const std::string& pointer, const std::set<std::string>& allowed) const;

  // A string (non-empty unless nonempty is false) into *out.
  Status String(const nlohmann::json& v, const std::string& p, std::string* out, bool nonempty = true) const;

  // A finite number in [lo, hi] (or (lo, hi) when open) into *out; an
  // integer the nearest double would change is refused.
  Status Number(const nlohmann::json& v, const std::string& p, double lo, double hi, bool open, double* out) const;

  // An integer in [lo, hi] into *out.
  Status Integer(const nlohmann::json& v, const std::string& p, uint64_t lo, uint64_t hi, uint64_t* out) const;

 private:
  std::string file_;
};

}  // namespace fanfold
