#include "common/expr/functions.h"

#include <algorithm>
#include <charconv>
#include <cmath>
#include <cstring>

#include "common/base/number_text.h"
#include "common/expr/conditional_functions.h"
#include "common/expr/number_arithmetic.h"

namespace fanfold {
namespace {

using F = ExprFunction;

constexpr ExprFunctionInfo kFunctions[] = {
    {"lower", F::kLower, 1, 1, "lower(s)"},
    {"upper", F::kUpper, 1, 1, "upper(s)"},
    {"starts_with", F::kStartsWith, 2, 2, "starts_with(s, prefix)"},
    {"ends_with", F::kEndsWith, 2, 2, "ends_with(s, suffix)"},
    {"contains", F::kContains, 2, 2, "contains(s, part)"},
    {"len", F::kLen, 1, 1, "len(s)"},
    {"substr", F::kSubstr, 2, 3, "substr(s, start[, count])"},
    {"has", F::kHas, 1, 1, "has(x)"},
    {"lacks", F::kLacks, 1, 1, "lacks(x)"},
    {"coalesce", F::kCoalesce, 1, kMaxFunctionArgs, "coalesce(a, b, ...)"},
    {"bucket_start", F::kBucketStart, 2, 2, "bucket_start(x, width)"},
    {"num", F::kNum, 1, 1, "num(x)"},
    {"text", F::kText, 1, 1, "text(x)"},
    {"time", F::kTime, 1, 1, "time(x)"},
    {"time_ms", F::kTimeMs, 1, 1, "time_ms(x)"},
    {"period_start", F::kPeriodStart, 2, 3, "period_start(t, unit[, zone])"},
    {"clock_hour", F::kClockHour, 1, 2, "clock_hour(t[, zone])"},
    {"weekday", F::kWeekday, 1, 2, "weekday(t[, zone])"},
    {"span_start", F::kSpanStart, 2, 3, "span_start(t, length[, zone])"},
    {"branch", F::kBranch, 3, kMaxBranchArgs, "branch(test, value, ..., otherwise)"},
    {"one_if", F::kOneIf, 1, 1, "one_if(test)"},
};

// A view that stays valid until the arena's next Reset(): the text of a
// number lives in the caller's stack buffer and is copied; strings and the
// static "true"/"false" already outlive the call.
Value Stable(std::string_view s, const Value& from, ScratchArena* arena) {
  if (from.kind == ValueKind::kNumber) return Value::String(arena->Copy(s));
  return Value::String(s);
}

char FoldCase(char c, bool upper) {
  if (upper) return c >= 'a' && c <= 'z' ? static_cast<char>(c - 32) : c;
  return c >= 'A' && c <= 'Z' ? static_cast<char>(c + 32) : c;
}

Value ChangeCase(const Value& v, bool upper, ScratchArena* arena) {
  char buf[kNumberTextMax];
  std::string_view s;
  if (!ValueText(v, buf, &s)) return Value::Missing();
  size_t first = 0;
  while (first < s.size() && FoldCase(s[first], upper) == s[first]) ++first;
  if (first == s.size()) return Stable(s, v, arena);  // already folded: no copy
  char* out = arena->Allocate(s.size());
  std::memcpy(out, s.data(), first);
  for (size_t i = first; i < s.size(); ++i) out[i] = FoldCase(s[i], upper);
  return Value::String({out, s.size()});
}

Value Match(ExprFunction f, const Value& a, const Value& b) {
  char buf_a[kNumberTextMax], buf_b[kNumberTextMax];
  std::string_view s, p;
  if (!ValueText(a, buf_a, &s) || !ValueText(b, buf_b, &p)) return Value::Missing();
  switch (f) {
    case F::kStartsWith: return Value::Bool(s.starts_with(p));
    case F::kEndsWith: return Value::Bool(s.ends_with(p));
    default: return Value::Bool(s.find(p) != std::string_view::npos);
  }
}

// Reads a byte offset/count; false iff not a number (NaN included).
bool Offset(const Value& v, double* out) {
  if (!v.AsNumber(out) || std::isnan(*out)) return false;
  *out = std::floor(*out);
  return true;
}

Value FiniteNumber(double d) { return std::isfinite(d) ? Value::Number(d) : Value::Missing(); }

Value Substr(const Value* args, int nargs, ScratchArena* arena) {
  double start, count = HUGE_VAL;
  if (!Offset(args[1], &start)) return Value::Missing();
  if (nargs == 3 && !Offset(args[2], &count)) return Value::Missing();
  return SubstrOf(args[0], start, count, arena);
}

}  // namespace

Value SubstrOfText(const Value& v, double start, double count, ScratchArena* arena) {
  char buf[kNumberTextMax];
  std::string_view s;
  if (!ValueText(v, buf, &s)) return Value::Missing();
  return Stable(SubstrBytes(s, start, count), v, arena);
}

bool SubstrOffset(const Value& v, double* out) { return Offset(v, out); }

const ExprFunctionInfo* FindExprFunction(std::string_view name) {
  for (const ExprFunctionInfo& f : kFunctions)
    if (f.name == name) return &f;
  return nullptr;
}

std::vector<std::string> ExprFunctionNames() {
  std::vector<std::string> names;
  for (const ExprFunctionInfo& f : kFunctions) names.emplace_back(f.name);
  return names;
}

std::string ExprFunctionSignatures() {
  std::string out;
  for (const ExprFunctionInfo& f : kFunctions) {
    if (!out.empty()) out += ", ";
    out += f.signature;
  }
  return out;
}

bool ValueText(const Value& v, char* buf, std::string_view* out) {
  switch (v.kind) {
    case ValueKind::kString: *out = v.str; return true;
    case ValueKind::kNumber:
      if (v.is_integer()) {  // every digit: an id's text is the id
        const auto r = v.rep == NumberRep::kUint64
                           ? std::to_chars(buf, buf + kNumberTextMax, v.bits)
                           : std::to_chars(buf, buf + kNumberTextMax, static_cast<int64_t>(v.bits));
        *out = {buf, static_cast<size_t>(r.ptr - buf)};
        return true;
      }
      *out = FormatNumber(v.number, buf);
      return true;
    case ValueKind::kBool: *out = v.boolean ? "true" : "false"; return true;
    default: return false;
  }
}

Value ApplyExprFunction(ExprFunction function, const Value* args, int nargs, const TimeBucket& time,
                        ScratchArena* arena) {
  switch (function) {
    case F::kLower: return ChangeCase(args[0], false, arena);
    case F::kUpper: return ChangeCase(args[0], true, arena);
    case F::kStartsWith:
    case F::kEndsWith:
    case F::kContains: return Match(function, args[0], args[1]);
    case F::kLen: {
      char buf[kNumberTextMax];
      std::string_view s;
      if (!ValueText(args[0], buf, &s)) return Value::Missing();
      return Value::Uint(s.size());
    }
    case F::kSubstr: return Substr(args, nargs, arena);
    case F::kHas: return Value::Bool(args[0].is_present());
    case F::kLacks: return Value::Bool(!args[0].is_present());
    case F::kCoalesce:
      for (int i = 0; i < nargs; ++i)
        if (args[i].is_present()) return args[i];
      return Value::Missing();
    case F::kBucketStart: {
      Value x, w;
      if (!args[0].AsNumeric(&x) || !args[1].AsNumeric(&w)) return Value::Missing();
      return BucketStartOf(x, w);
    }
    case F::kNum: {
      Value x;
      if (!args[0].AsNumeric(&x)) return Value::Missing();
      return x.is_integer() ? x : FiniteNumber(x.number);
    }
    case F::kText: {
      char buf[kNumberTextMax];
      std::string_view s;
      if (!ValueText(args[0], buf, &s)) return Value::Missing();
      return Stable(s, args[0], arena);
    }
    case F::kTime:
    case F::kTimeMs: return EpochOf(args[0], function == F::kTimeMs);
    case F::kPeriodStart:
    case F::kSpanStart: {
      double t;
      char label[kBucketLabelMax];
      size_t n;
      if (!ValueEpochSeconds(args[0], 1, &t) || (n = time.Label(t, label)) == 0)
        return Value::Missing();
      return Value::String(arena->Copy({label, n}));
    }
    case F::kClockHour:
    case F::kWeekday: return ClockFieldOf(function, args[0], time);
    case F::kOneIf: return OneIf(args[0]);
    case F::kBranch: break;  // lazy: Expr::Program evaluates it
  }
  return Value::Missing();
}

}  // namespace fanfold
