// Helpers shared by the expression tests: a record of raw fields, a
// one-call compile-and-evaluate that prints the result, and the demo record
// (one streetlight controller's event) most cases evaluate against, and a
// runner for the Python scripts some tests compare with.
#pragma once

#include <doctest/doctest.h>

#include <cstdio>
#include <initializer_list>
#include <string>
#include <utility>
#include <vector>

#include "common/base/number_text.h"
#include "common/expr/expr.h"

namespace fanfold::expr_testing {

// Runs a Python script with the system's python3 (the outside reference of
// the time tests) and returns what it printed; "" if it cannot start.
inline std::string RunPython(const std::string& script) {
  std::string out;
  FILE* f = popen(("python3 - <<'PYEOF'\n" + script + "\nPYEOF\n").c_str(), "r");
  if (f == nullptr) return out;
  char buf[4096];
  size_t n;
  while ((n = fread(buf, 1, sizeof buf, f)) > 0) out.append(buf, n);
  pclose(f);
  return out;
}

// A record: raw fields by reference text, with the values a reader would give.
using Record = std::vector<std::pair<std::string, Value>>;

// How a value prints in these tests: missing, null, true, false, 12, 'text';
// integers with every digit, other numbers as "%.17g".
inline std::string Show(const Value& v) {
  switch (v.kind) {
    case ValueKind::kMissing: return "missing";
    case ValueKind::kNull: return "null";
    case ValueKind::kBool: return v.boolean ? "true" : "false";
    case ValueKind::kNumber: {
      if (v.is_integer()) {  // exact digits, as Python's str(int)
        std::string digits;
        AppendWideInt(v.Wide(), &digits);
        return digits;
      }
      char buf[64];
      std::snprintf(buf, sizeof buf, "%.17g", v.number);
      return buf;
    }
    case ValueKind::kString: return "'" + std::string(v.str) + "'";
    case ValueKind::kOther: return "other";
  }
  return "?";
}

// Compiles `text` in a fresh FieldTable, fills the record's raw fields (the
// rest stay missing) and returns the result as Show() prints it, or
// "!! message" for a compile error.
inline std::string Eval(const std::string& text, const Record& record = {}) {
  FieldTable fields;
  for (const auto& [ref, v] : record) fields.InternField(ref);
  Result<Expr> e = Expr::Compile(text, &fields);
  if (!e.ok()) return "!! " + e.status().message();
  std::vector<Value> slots(fields.size());
  for (const auto& [ref, v] : record) slots[fields.InternField(ref)] = v;
  ScratchArena arena;
  return Show(e->Eval(slots.data(), &arena));
}

inline Value N(double d) { return Value::Number(d); }
inline Value S(std::string_view s) { return Value::String(s); }
inline Value B(bool b) { return Value::Bool(b); }

struct Case {
  const char* text;
  const char* expected;
};

inline void CheckAll(std::initializer_list<Case> cases, const Record& record) {
  for (const Case& c : cases) {
    const std::string text = c.text;
    CAPTURE(text);
    CHECK(Eval(text, record) == c.expected);
  }
}

// One streetlight controller's event, as the demo data has them.
inline const Record kLamp = {
    {"/ts", S("2026-03-05T14:07:09.250+01:00")},
    {"/lamp", S("NW-0042")},
    {"/district", S("Northwick")},
    {"/event", S("FAULT")},
    {"/power_w", N(61.5)},
    {"/latency_ms", S("120")},  // numeric text, as a CSV cell arrives
    {"/fw/version", S("2.4.1")},
    {"/dimmed", B(true)},
    {"/note", Value::Null()},
    {"/readings", Value::Other()},
    {"/empty", S("")},
    {"/epoch", N(1772719629)},
    {"/epoch_ms", S("1772719629250")},
};

}  // namespace fanfold::expr_testing
