// Expression functions: the fixed catalogue of functions the expression
// language offers (name, arity, signature) and their per-record
// implementations on already-evaluated arguments. Strings a function makes go
// to the caller's ScratchArena; nothing here allocates on the heap at
// evaluation time. Stateless; thread-safe.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/expr/time_bucket.h"
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
// argument(s) shown.
// time(v) (ms false) or time_ms(v) (ms true).
Value EpochOf(const Value& v, bool ms);
// clock_hour(v) or weekday(v) (f) on the clock of time.zone.
Value ClockFieldOf(ExprFunction f, const Value& v, const TimeBucket& time);
// substr(v, start, count) for numeric start and count already floored
// (count +infinity when not given): what Substr makes of them.
Value SubstrOf(const Value& v, double start, double count, ScratchArena* arena);
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
bool ValueEpochSeconds(const Value& v, double units_per_second, double* out);

}  // namespace fanfold
