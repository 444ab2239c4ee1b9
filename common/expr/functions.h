// Expression functions: the fixed catalogue of functions the expression
// language offers (name, arity, signature) and their per-record
// implementations on already-evaluated arguments. Strings a function makes go
// to the caller's ScratchArena; nothing here allocates on the heap at
// evaluation time. Stateless; thread-safe.
#pragma once

#include <algorithm>
#include <cmath>
#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/expr/time_bucket.h"
#include "common/expr/time_functions.h"
#include "common/base/value.h"

namespace fanfold {

enum class ExprFunction : uint8_t {
  kLower, kUpper, kStartsWith, kEndsWith, kContains, kLen, kSubstr,
  kHas, kLacks, kCoalesce, kBucketStart, kNum, kText,
  kTime, kTimeMs, kPeriodStart, kClockHour, kWeekday, kSpanStart,
  kBranch, kOneIf,  // conditional_functions.h
};

struct ExprFunctionInfo {
  std::string_view name;
  ExprFunction function;
  int min_args;
  int max_args;
  std::string_view signature;  // as shown in error messages, e.g. "substr(s, start[, count])"
};

// Most arguments coalesce takes (branch takes more: kMaxBranchArgs).
inline constexpr int kMaxFunctionArgs = 16;

// Returns the catalogue entry called `name`, or nullptr iff there is none.
const ExprFunctionInfo* FindExprFunction(std::string_view name);

// Every function's name, in catalogue order (for "did you mean").
std::vector<std::string> ExprFunctionNames();

// "lower(s), upper(s), ..." — every signature, for error messages.
std::string ExprFunctionSignatures();

// Evaluates `function` on args[0..nargs). `time` is what the compiler read
// from the literal unit and zone arguments of period_start, span_start,
// clock_hour and weekday (only their first argument is passed). Not for kCoalesce
// and kBranch, whose arguments the evaluator evaluates lazily.
// REQUIRES: nargs is within the function's arity.
Value ApplyExprFunction(ExprFunction function, const Value* args, int nargs, const TimeBucket& time,
                        ScratchArena* arena);

// The same functions for the evaluator's one-argument fast paths (no
// argument array, no dispatch): each equals ApplyExprFunction with the
// argument(s) shown. Inline (below): they run once per record.
// time(v) (ms false) or time_ms(v) (ms true).
inline Value EpochOf(const Value& v, bool ms);
// clock_hour(v) or weekday(v) (f) on the clock of time.zone.
inline Value ClockFieldOf(ExprFunction f, const Value& v, const TimeBucket& time);
// substr(v, start, count) for numeric start and count already floored
// (count +infinity when not given): what Substr makes of them. A string's
// part is a view into it (no copy); other values' text goes to the arena.
inline Value SubstrOf(const Value& v, double start, double count, ScratchArena* arena);
// The bytes [start, start + count) of s, both clamped to s: substr's part.
inline std::string_view SubstrBytes(std::string_view s, double start, double count) {
  const double size = static_cast<double>(s.size());
  start = std::clamp(start, 0.0, size);
  count = std::clamp(count, 0.0, size - start);
  return s.substr(static_cast<size_t>(start), static_cast<size_t>(count));
}
// SubstrOf for a value that is not a string (its text, as ValueText gives it).
Value SubstrOfText(const Value& v, double start, double count, ScratchArena* arena);
// How substr reads its start or count: the floor of a number (or numeric
// text); false iff not a number (NaN included).
bool SubstrOffset(const Value& v, double* out);

// The text a string function sees for `v`: strings as they are, integers
// as their exact digits and other numbers as FormatNumber writes them, into
// buf (at least kNumberTextMax bytes), bools
// as "true"/"false". Returns false iff v is missing, null or not a scalar.
bool ValueText(const Value& v, char* buf, std::string_view* out);

// Epoch seconds of `v` as time() reads it: ISO 8601 text, or a finite
// number (or numeric text) divided by `units_per_second` (1 for seconds, 1000
// for milliseconds). Returns false iff neither.
inline bool ValueEpochSeconds(const Value& v, double units_per_second, double* out) {
  double d;
  if (v.kind == ValueKind::kString && ParseIsoTimestamp(v.str, out)) return true;
  if (!v.AsNumber(&d) || !std::isfinite(d)) return false;
  *out = d / units_per_second;
  return true;
}

inline Value EpochOf(const Value& v, bool ms) {
  double t;
  if (!ValueEpochSeconds(v, ms ? 1000 : 1, &t) || !std::isfinite(t)) return Value::Missing();
  return Value::Number(t);
}

inline Value ClockFieldOf(ExprFunction f, const Value& v, const TimeBucket& time) {
  double t;
  if (!ValueEpochSeconds(v, 1, &t)) return Value::Missing();
  const int r = f != ExprFunction::kClockHour ? IsoWeekday(t, time.zone)
                : time.zone.is_utc()          ? ClockHourUtc(t)
                                              : ClockHour(t, time.zone);
  return r < 0 ? Value::Missing() : Value::Int(r);
}

inline Value SubstrOf(const Value& v, double start, double count, ScratchArena* arena) {
  if (v.kind == ValueKind::kString) return Value::String(SubstrBytes(v.str, start, count));
  return SubstrOfText(v, start, count, arena);
}

}  // namespace fanfold
