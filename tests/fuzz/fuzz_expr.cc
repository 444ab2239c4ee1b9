// Fuzz target: expression text → Expr::Compile against a FieldTable that
// already has derived fields `t` and `hour`; what compiles is evaluated on
// fixed slot vectors (all missing, numbers, strings, other kinds) and on one
// whose strings come from the input. Input: the expression, optionally
// followed by '\n' and newline-separated strings for that last vector.
#include <algorithm>
#include <cmath>
#include <cstddef>
#include <cstdint>
#include <limits>
#include <memory>
#include <string>
#include <string_view>
#include <vector>

#include "common/expr/expr.h"

using namespace fanfold;

namespace {

volatile unsigned g_sink = 0;

void EvalOn(const Expr& e, const std::vector<Value>& slots, ScratchArena* arena) {
  arena->Reset();
  Value v = e.Eval(slots.data(), arena);
  unsigned h = static_cast<unsigned>(v.kind);
  for (char c : v.str) h = h * 31 + static_cast<unsigned char>(c);  // ASan checks the view
  g_sink = g_sink + h;
}

}  // namespace

extern "C" int LLVMFuzzerTestOneInput(const uint8_t* data, size_t size) {
  std::string_view in(reinterpret_cast<const char*>(data), size);
  std::string_view head = in.substr(0, in.find('\n'));
  std::string_view rest = head.size() < in.size() ? in.substr(head.size() + 1) : std::string_view();
  // The expression in an allocation of its exact size, so that reading past
  // its end is caught even when a '\n' and more input follow it.
  std::unique_ptr<char[]> text_bytes = std::make_unique<char[]>(head.size());
  std::copy(head.begin(), head.end(), text_bytes.get());
  std::string_view text(text_bytes.get(), head.size());

  FieldTable fields;
  const int t_slot = fields.AddDerived("t");
  const int hour_slot = fields.AddDerived("hour");
  Result<Expr> expr = Expr::Compile(text, &fields);
  if (!expr.ok()) return 0;
  const Expr& e = *expr;
  const size_t n = fields.size();
  ScratchArena arena;

  std::vector<Value> slots(n);  // all missing
  EvalOn(e, slots, &arena);

  static const double kNumbers[] = {0.0, -0.0, 1.5, -7, 1772323203.454, 1e300, -1e300,
                                    4.9e-324, 9007199254740993.0, 1e19, -1e19, 86400, 3};
  for (size_t i = 0; i < n; ++i) slots[i] = Value::Number(kNumbers[i % std::size(kNumbers)]);
  EvalOn(e, slots, &arena);

  // Exact integers at the edges of the 64-bit range, where WideInt arithmetic
  // must not overflow.
  const Value kIntegers[] = {Value::Int(INT64_MIN), Value::Uint(UINT64_MAX), Value::Int(-1), Value::Int(0),
                             Value::Int(9007199254740993), Value::Uint(uint64_t{1} << 63), Value::Int(INT64_MAX)};
  for (size_t i = 0; i < n; ++i) slots[i] = kIntegers[i % std::size(kIntegers)];
  EvalOn(e, slots, &arena);

  static const std::string kLong(300, 'x');
  const std::string_view kStrings[] = {"2026-03-01T00:00:03.454Z", "", "12", "L-70804", "\xc3\xa9t\xc3\xa9",
                                       " 5", "2026-02-29T25:61:61+14:00", "1e400", kLong, "week",
                                       "hour", "-0", "2026-03-01"};
  for (size_t i = 0; i < n; ++i) slots[i] = Value::String(kStrings[i % std::size(kStrings)]);
  EvalOn(e, slots, &arena);

  for (size_t i = 0; i < n; ++i) {
    switch (i % 4) {
      case 0: slots[i] = Value::Null(); break;
      case 1: slots[i] = Value::Bool(true); break;
      case 2: slots[i] = Value::Other(); break;
      default: slots[i] = Value::Bool(false); break;
    }
  }
  slots[t_slot] = Value::Number(1772323203.454);
  slots[hour_slot] = Value::String("2026-03-01T00:00:00Z");
  EvalOn(e, slots, &arena);

  // Strings from the input, each in an allocation of its exact size (no
  // small-string buffer) so that a read past its end is caught.
  std::vector<std::unique_ptr<char[]>> owned;
  std::vector<std::string_view> views;
  while (!rest.empty() && views.size() < n) {
    std::string_view s = rest.substr(0, rest.find('\n'));
    rest = s.size() < rest.size() ? rest.substr(s.size() + 1) : std::string_view();
    owned.push_back(std::make_unique<char[]>(s.size()));
    std::copy(s.begin(), s.end(), owned.back().get());
    views.emplace_back(owned.back().get(), s.size());
  }
  if (!views.empty()) {
    for (size_t i = 0; i < n; ++i) slots[i] = Value::String(views[i % views.size()]);
    EvalOn(e, slots, &arena);
  }
  return 0;
}
