// Differential test of the batch evaluator (Expr::EvalBatch, program.h)
// against the per-record walk (Expr::Eval) on generated expressions and
// records: every result equal in kind, exact integer, double bits and
// bytes. The per-record walk is the reference here; it is itself checked
// against outside references (Python's json/datetime/decimal, RFC 3339,
// IEEE 754) in eval_test.cc, functions_test.cc and time_functions_test.cc.
#include <doctest/doctest.h>

#include <cstdint>
#include <cstring>
#include <random>
#include <string>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/expr/expr.h"
#include "common/input/field_table.h"
#include "tests/expr/expr_test_util.h"

namespace fanfold {
namespace {

// Same value: kind, bool, numeric representation, exact bits, the double's
// bits (so NaN equals NaN and -0 differs from 0) and the string's bytes.
bool Same(const Value& x, const Value& y) {
  if (x.kind != y.kind) return false;
  switch (x.kind) {
    case ValueKind::kBool: return x.boolean == y.boolean;
    case ValueKind::kNumber: {
      uint64_t a, b;
      std::memcpy(&a, &x.number, 8);
      std::memcpy(&b, &y.number, 8);
      return x.rep == y.rep && a == b && (x.rep == NumberRep::kDouble || x.bits == y.bits);
    }
    case ValueKind::kString: return x.str == y.str;
    default: return true;
  }
}

// Random expressions over the raw fields {/a} .. {/d}: every operator, the
// fast-path shapes (text == constant, time, clock_hour, substr with constant
// offsets) and the general calls, nested a few levels.
class ExprMaker {
 public:
  explicit ExprMaker(uint32_t seed) : rng_(seed) {}

  std::string Make(int depth) {
    if (depth <= 0 || Pick(4) == 0) return Leaf();
    switch (Pick(12)) {
      case 0: return "(" + Make(depth - 1) + " " + Of({"+", "-", "*", "/", "%"}) + " " + Make(depth - 1) + ")";
      case 1: return "(" + Make(depth - 1) + " " + Of({"==", "!=", "<", "<=", ">", ">="}) + " " + Make(depth - 1) + ")";
      case 2: return "(" + Field() + " " + Of({"==", "!="}) + " " + Of({"'on'", "'off'", "'12'", "''"}) + ")";
      case 3: return "(" + Make(depth - 1) + " " + Of({"and", "or"}) + " " + Make(depth - 1) + ")";
      case 4: return "(not " + Make(depth - 1) + ")";
      case 5: return "(-" + Make(depth - 1) + ")";
      case 6:
        return "(" + Make(depth - 1) + (Pick(2) ? " in " : " not in ") + Of({"[1, 'on', 2.5]", "['12', null]", "[true, 0]"}) + ")";
      case 7: return Of({"lower", "upper", "len", "has", "lacks", "num", "text", "time", "time_ms", "one_if", "clock_hour", "weekday"}) + "(" + Make(depth - 1) + ")";
      case 8: return Of({"starts_with", "ends_with", "contains", "bucket_start"}) + "(" + Make(depth - 1) + ", " + Make(depth - 1) + ")";
      case 9:
        if (Pick(2)) return "substr(" + Make(depth - 1) + ", " + Of({"0", "1", "-2", "2.7", "5", "1e300", "-1e300"}) + (Pick(2) ? ", " + Of({"0", "3", "1.5", "-1", "1e300"}) : "") + ")";
        return "substr(" + Make(depth - 1) + ", " + Make(depth - 1) + ")";
      case 10: {
        std::string s = "coalesce(" + Make(depth - 1);
        for (uint32_t k = Pick(3); k > 0; --k) s += ", " + Make(depth - 1);
        return s + ")";
      }
      default: {
        std::string s = "branch(";
        for (uint32_t k = 1 + Pick(2); k > 0; --k) s += "(" + Make(depth - 1) + " > 1), " + Make(depth - 1) + ", ";
        return s + Make(depth - 1) + ")";
      }
    }
  }

  // A random value for a field: every kind, numeric and timestamp text.
  Value MakeValue(std::vector<std::string>* texts) {
    switch (Pick(11)) {
      case 0: return Value::Missing();
      case 1: return Value::Null();
      case 2: return Value::Bool(Pick(2) == 1);
      case 3: return Value::Int(static_cast<int64_t>(Pick(41)) - 20);
      case 4: return Value::Int(1772323200122);
      case 5: return Value::Number(static_cast<double>(Pick(2001)) / 8 - 125);
      case 6: return Value::Other();
      case 7: return Value::Uint(18446744073709551615ULL);
      default: {
        static const char* const kTexts[] = {"on", "off", "12", "-3.5", "", "On", "2026-03-01T00:00:00.004Z",
                                             "2026-03-01T01:12:07.794+01:00", "1e3", "L-24806", "x y"};
        texts->push_back(kTexts[Pick(11)]);
        return Value::String(texts->back());
      }
    }
  }

 private:
  uint32_t Pick(uint32_t n) { return static_cast<uint32_t>(rng_() % n); }
  std::string Of(std::initializer_list<const char*> options) { return *(options.begin() + Pick(static_cast<uint32_t>(options.size()))); }
  std::string Field() { return Of({"{/a}", "{/b}", "{/c}", "{/d}"}); }
  std::string Leaf() {
    if (Pick(2)) return Field();
    return Of({"1", "0", "-7", "2.5", "1772323200", "'on'", "'12'", "'2026-03-01T00:00:00Z'", "true", "false", "null"});
  }
  std::mt19937 rng_;
};

TEST_CASE("EvalBatch gives what Eval gives, record by record, on generated expressions") {
  constexpr size_t kRecords = 37;
  int compiled = 0, compared = 0;
  ExprMaker maker(20261203);
  Expr::BatchScratch scratch;
  ScratchArena batch_arena, record_arena;
  for (int e = 0; e < 4000; ++e) {
    const std::string text = maker.Make(1 + e % 4);
    FieldTable fields;
    Result<Expr> expr = Expr::Compile(text, &fields);
    if (!expr.ok()) continue;
    ++compiled;
    // One more slot past the fields: the batch writes its results there, as
    // a derived field is written into its record.
    const size_t width = fields.size() + 1;
    const size_t out_slot = fields.size();
    std::vector<std::string> texts;
    texts.reserve(kRecords * width);  // the values point into it
    std::vector<Value> rows(kRecords * width);
    for (Value& v : rows) v = maker.MakeValue(&texts);
    for (size_t r = 0; r < kRecords; ++r) rows[r * width + out_slot] = Value::Int(-99);
    // Every third record left out of the selection: its result slot stays.
    std::vector<uint32_t> sel;
    for (uint32_t r = 0; r < kRecords; ++r)
      if ((r + static_cast<uint32_t>(e)) % 3 != 0) sel.push_back(r);
    const std::vector<Value> before = rows;
    batch_arena.Reset();
    expr->EvalBatch(rows.data(), width, sel.data(), sel.size(), kRecords, rows.data() + out_slot, width, &scratch,
                    &batch_arena);
    size_t j = 0;
    for (uint32_t r = 0; r < kRecords; ++r) {
      record_arena.Reset();
      const Value want = j < sel.size() && sel[j] == r ? expr->Eval(&before[r * width], &record_arena) : Value::Int(-99);
      if (j < sel.size() && sel[j] == r) ++j;
      const Value& got = rows[r * width + out_slot];
      if (!Same(got, want)) {
        FAIL_CHECK(text << " on record " << r << ": batch " << expr_testing::Show(got) << ", per record "
                        << expr_testing::Show(want));
      }
      ++compared;
      // The fields themselves are untouched.
      for (size_t s = 0; s < out_slot; ++s) CHECK(Same(rows[r * width + s], before[r * width + s]));
    }
  }
  // The generator must reach many shapes, or the test proves little.
  CHECK(compiled >= 3000);
  CHECK(compared >= 3000 * static_cast<int>(kRecords));
  MESSAGE(compiled << " expressions compiled, " << compared << " results compared");
}

TEST_CASE("EvalBatch: a field, a constant and an empty selection") {
  FieldTable fields;
  Result<Expr> field = Expr::Compile("{/a}", &fields);
  Result<Expr> constant = Expr::Compile("'on'", &fields);
  REQUIRE(field.ok());
  REQUIRE(constant.ok());
  std::vector<Value> rows = {Value::Int(4), Value::Missing(), Value::Int(5), Value::Missing()};
  const uint32_t sel[] = {0, 1};
  Expr::BatchScratch scratch;
  ScratchArena arena;
  field->EvalBatch(rows.data(), 2, sel, 2, 2, rows.data() + 1, 2, &scratch, &arena);
  CHECK(expr_testing::Show(rows[1]) == "4");
  CHECK(expr_testing::Show(rows[3]) == "5");
  constant->EvalBatch(rows.data(), 2, sel, 1, 2, rows.data() + 1, 2, &scratch, &arena);
  CHECK(expr_testing::Show(rows[1]) == "'on'");
  CHECK(expr_testing::Show(rows[3]) == "5");
  constant->EvalBatch(rows.data(), 2, sel, 0, 2, rows.data() + 1, 2, &scratch, &arena);
  CHECK(expr_testing::Show(rows[3]) == "5");
}

}  // namespace
}  // namespace fanfold
