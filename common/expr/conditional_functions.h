// Conditional functions of the expression language: branch(test, value, ...,
// otherwise) picks the value of the first test that holds; one_if(test) turns
// a truth value into the integer 1 or 0. Their compile-time checks and
// evaluation rules; Expr::Program calls them. Stateless; thread-safe.
#pragma once

#include "common/base/status.h"
#include "common/base/value.h"
#include "common/expr/ast.h"

namespace fanfold {

// Most arguments branch() takes: 32 tests with their values, then the value
// when no test holds. Fits ExprNode::nargs.
inline constexpr int kMaxBranchArgs = 65;

// Checks a call of branch() (its arguments not yet compiled): an odd number
// of 3 to kMaxBranchArgs arguments, and no test that is the literal null
// (which never holds). Returns InvalidArgument "column N: ...; expected ..."
// naming the call or the offending test otherwise.
// REQUIRES: call is an AstKind::kCall node named "branch".
Status CheckBranchCall(const AstNode& call);

// The integer 1 iff `test` is true (the language's truthiness, as `keep`
// reads it), else the integer 0: missing and null give 0, never missing.
inline Value OneIf(const Value& test) { return Value::Int(test.Truthy() ? 1 : 0); }

// Evaluates branch() lazily: eval(k) evaluates argument k. Tests run left to
// right until one holds, and only that test's value is evaluated; with none
// holding, only the last argument (the otherwise value) is. The chosen value
// is returned unchanged (missing stays missing, integers stay exact).
// REQUIRES: nargs is odd and >= 3.
template <typename EvalArg>
Value EvalBranch(int nargs, EvalArg eval) {
  for (int k = 0; k + 1 < nargs; k += 2)
    if (eval(k).Truthy()) return eval(k + 1);
  return eval(nargs - 1);
}

}  // namespace fanfold
