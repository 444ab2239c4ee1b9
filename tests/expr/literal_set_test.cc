// Tests for common/expr/literal_set: membership must give exactly what a chain of
// == comparisons (common/base/value_compare) would.
#include "common/expr/literal_set.h"

#include <doctest/doctest.h>

#include <vector>

#include "common/base/value_compare.h"

namespace fanfold {

// Intent: for many list shapes and probe values, Contains equals "== some
// element", including numeric text, bools, duplicates and non-matches.
TEST_CASE("LiteralSet matches the == rule") {
  const std::vector<Value> literals = {
      Value::Number(-5), Value::Number(0), Value::Number(120), Value::Number(61.5),
      Value::String("120"), Value::String("fault"), Value::String("Fault"), Value::String(""),
      Value::String("1e2"), Value::Bool(true), Value::Bool(false), Value::String("fault")};
  const std::vector<Value> probes = {
      Value::Missing(), Value::Null(), Value::Other(), Value::Bool(true), Value::Bool(false),
      Value::Number(100), Value::Number(120), Value::Number(-5), Value::Number(-0.0),
      Value::Number(7), Value::String("120.0"), Value::String("100"), Value::String("fault"),
      Value::String("FAULT"), Value::String(""), Value::String("nan"), Value::String("-5"),
      Value::String("x")};
  // Every contiguous sub-list, so that empty, single and mixed lists all occur.
  for (size_t from = 0; from <= literals.size(); ++from) {
    for (size_t to = from; to <= literals.size(); ++to) {
      LiteralSet set;
      for (size_t i = from; i < to; ++i) {
        const Value& v = literals[i];
        if (v.kind == ValueKind::kNumber) set.AddNumber(v);
        else if (v.kind == ValueKind::kString) set.AddString(v.str);
        else set.AddBool(v.boolean);
      }
      set.Seal();
      for (const Value& p : probes) {
        bool expected = false;
        for (size_t i = from; i < to; ++i) expected |= CompareValues(CompareOp::kEq, p, literals[i]);
        CAPTURE(from);
        CAPTURE(to);
        CHECK(set.Contains(p) == expected);
      }
    }
  }
}

// Intent: duplicates collapse, and numeric text joins the numbers.
TEST_CASE("LiteralSet size after Seal") {
  LiteralSet set;
  set.AddString("200");
  set.AddNumber(Value::Number(200));
  set.AddString("north");
  set.AddString("north");
  set.AddBool(true);
  set.Seal();
  CHECK(set.size() == 3);
}

}  // namespace fanfold
