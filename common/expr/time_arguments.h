// Compile-time reading of the literal arguments of the time functions: the
// unit or length of period_start()/span_start() and the zone of those and of
// clock_hour()/weekday(). Resolves a zone name once, here, so evaluation never
// looks one up. Pure; thread-safe.
#pragma once

#include "common/base/status.h"
#include "common/expr/ast.h"
#include "common/expr/functions.h"

namespace fanfold {

// True iff `function` takes literal time arguments after its first.
bool TakesTimeArguments(ExprFunction function);

// Reads the arguments after the first of `call` (a kCall of `function`,
// arity already checked) into *time. On error returns InvalidArgument
// "column N: <found>; expected <expected>" pointing at the argument.
Status ReadTimeArguments(const AstNode& call, ExprFunction function, TimeBucket* time);

}  // namespace fanfold
