// ParseExpr: turns expression text into an ExprAst by recursive descent over
// ExprLexer's tokens. Checks syntax only (names are resolved later by
// ExprCompiler). Pure; thread-safe.
//
// Grammar, lowest precedence first:
//   expr    := and ('or' and)*
//   and     := not ('and' not)*
//   not     := 'not' not | compare
//   compare := sum [ ('=='|'!='|'<'|'<='|'>'|'>=') sum
//                  | 'in' list | 'not' 'in' list ]       (comparisons do not chain)
//   sum     := product (('+'|'-') product)*
//   product := unary (('*'|'/'|'%') unary)*
//   unary   := '-' unary | primary
//   primary := NUMBER | STRING | 'true' | 'false' | 'null' | FIELD | NAME
//            | NAME '(' [expr (',' expr)*] ')' | '(' expr ')'
//   list    := '[' [literal (',' literal)*] ']'
//   literal := ['-'] NUMBER | STRING | 'true' | 'false' | 'null'
#pragma once

#include <string_view>

#include "common/expr/ast.h"
#include "common/base/status.h"

namespace fanfold {

// Deepest tree (and deepest nesting) an expression may have; keeps both the
// parser's and the evaluator's recursion far from the stack limit.
inline constexpr int kMaxExprDepth = 200;

// Returns the tree of `text`, or InvalidArgument "column N: <found>;
// expected <what>" (N 1-based, in bytes) for the first syntax error.
Result<AstNode> ParseExpr(std::string_view text);

}  // namespace fanfold
