// Exact integers in expressions (common/expr/number_arithmetic.h and the
// evaluator): literals, + - * % and unary minus of integers, the overflow
// rule, / and mixed operands, integer text, functions and `in` lists. Every
// expected value is Python's int arithmetic, named beside it.
#include <doctest/doctest.h>

#include "tests/expr/expr_test_util.h"

namespace fanfold {
namespace {
using namespace expr_testing;

const Record kIds = {
    {"/id", Value::Int(9007199254740993)},  // 2**53 + 1
    {"/big", Value::Uint(UINT64_MAX)},      // 2**64 - 1
    {"/min", Value::Int(INT64_MIN)},        // -2**63
    {"/csv", S("18446744073709551615")},    // a CSV cell: integer text
};

}  // namespace

// Intent: integer operations stay exact inside [-2^63, 2^64) and become the nearest double outside.
TEST_CASE("integer arithmetic is exact") {
  CheckAll({
               {"{/id} + 1", "9007199254740994"},                  // Python: 2**53 + 1 + 1
               {"{/id} - 9007199254740992", "1"},                  // Python: 2**53 + 1 - 2**53
               {"{/id} * 2", "18014398509481986"},                 // Python: (2**53 + 1) * 2
               {"{/big} - {/big}", "0"},                           // Python: 0
               {"{/min} + {/big}", "9223372036854775807"},         // Python: -2**63 + 2**64 - 1
               {"-{/min}", "9223372036854775808"},                 // Python: 2**63
               {"{/csv} - 1", "18446744073709551614"},             // Python: int('18446744073709551615') - 1
               {"{/big} % 1000", "615"},                           // Python: (2**64 - 1) % 1000
               {"{/min} % 10", "-8"},                              // sign of the dividend: Python -(2**63 % 10)
               {"-7 % 3", "-1"},                                   // Python: math.fmod(-7, 3) == -1
               {"9223372036854775807 + 1", "9223372036854775808"},  // Python: 2**63 - 1 + 1
               {"-(-9223372036854775808)", "9223372036854775808"},  // Python: -(-2**63)
               {"-18446744073709551615", "-1.8446744073709552e+19"},  // Python: float(-(2**64 - 1))
               // Beyond the 64-bit range: the nearest double (Python: '%.17g' % float(x)).
               {"{/big} + 1", "1.8446744073709552e+19"},           // float(2**64)
               {"{/min} - 1", "-9.2233720368547758e+18"},          // float(-2**63 - 1)
               {"-{/big}", "-1.8446744073709552e+19"},             // float(-(2**64 - 1))
               {"{/big} * {/big}", "3.4028236692093846e+38"},      // float((2**64 - 1)**2)
               {"18446744073709551616", "1.8446744073709552e+19"},  // a literal past 2**64 - 1
               // `/` and double operands: double arithmetic.
               {"7 / 2", "3.5"},                                   // Python: 7 / 2
               {"{/id} / 1", "9007199254740992"},                  // Python: (2**53 + 1) / 1 == 2.0**53
               {"{/id} + 0.5", "9007199254740992"},                // Python: (2**53 + 1) + 0.5 == 9007199254740992.0
               {"1 % 0", "missing"},
               {"{/id} / 0", "missing"},
           },
           kIds);
}

// Intent: functions keep integers exact where the result is an integer, and text() prints every digit.
TEST_CASE("functions on exact integers") {
  CheckAll({
               {"text({/big})", "'18446744073709551615'"},            // Python: str(2**64 - 1)
               {"text({/min})", "'-9223372036854775808'"},            // Python: str(-2**63)
               {"text({/csv} - 0)", "'18446744073709551615'"},
               {"upper({/id})", "'9007199254740993'"},
               {"len(text({/big}))", "20"},                          // Python: len(str(2**64 - 1))
               {"num({/csv})", "18446744073709551615"},              // Python: int('18446744073709551615')
               {"num({/id})", "9007199254740993"},
               {"bucket_start({/id}, 10)", "9007199254740990"},       // Python: (2**53 + 1) // 10 * 10
               {"bucket_start(-{/id}, 10)", "-9007199254741000"},     // Python: -(2**53 + 1) // 10 * 10
               {"bucket_start({/big}, 2)", "18446744073709551614"},   // Python: (2**64 - 1) // 2 * 2
               {"bucket_start({/id}, 0)", "missing"},
               {"coalesce({/none}, {/big})", "18446744073709551615"},
           },
           kIds);
}

// Intent: comparisons and `in` lists match integers exactly, against integers, doubles and integer text.
TEST_CASE("comparisons and lists with exact integers") {
  CheckAll({
               {"{/id} > 9007199254740992.0", "true"},           // Python: 2**53 + 1 > 2.0**53
               {"{/id} == 9007199254740992", "false"},           // Python: 2**53 + 1 == 2**53
               {"{/id} != 9007199254740992", "true"},
               {"{/csv} == {/big}", "true"},                     // Python: int('18446744073709551615') == 2**64 - 1
               {"{/big} < 18446744073709551616", "true"},        // Python: 2**64 - 1 < float(2**64)
               {"{/id} in [9007199254740992]", "false"},         // Python: 2**53 + 1 in [2**53]
               {"{/id} in [1, 9007199254740993]", "true"},
               {"{/csv} in [18446744073709551615]", "true"},
               {"{/min} in [-9223372036854775808]", "true"},    // Python: -2**63 in [-2**63]
               {"{/min} in [-9223372036854775807]", "false"},
               {"'9007199254740992' in [9007199254740993]", "false"},
               {"5 in [5.0]", "true"},                           // Python: 5 in [5.0]
           },
           kIds);
}

}  // namespace fanfold
