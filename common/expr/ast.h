// ExprAst: the syntax tree ParseExpr builds from expression text, before
// names are resolved against a FieldTable (that is ExprCompiler's job).
// Each node owns its children. Plain data; thread-compatible.
#pragma once

#include <string>
#include <vector>

#include "common/base/value.h"

namespace fanfold {

enum class AstKind : uint8_t {
  kNumber,  // number
  kString,  // text (unescaped)
  kBool,    // boolean
  kNull,
  kField,   // text: the raw reference between the braces, unescaped
  kName,    // text: a bare identifier (a derived field)
  kCall,    // text: the function name; kids: the arguments
  kUnary,   // op kNeg or kNot; kids[0]
  kBinary,  // op; kids[0], kids[1]
  kIn,      // kids[0] in list; negated for "not in"
};

enum class AstOp : uint8_t {
  kNone,
  kOr, kAnd, kNot,
  kEq, kNe, kLt, kLe, kGt, kGe,
  kAdd, kSub, kMul, kDiv, kMod,
  kNeg,
};

struct AstNode {
  AstKind kind = AstKind::kNull;
  AstOp op = AstOp::kNone;
  int column = 0;  // 1-based: the literal, name, field, function name or operator
  int depth = 1;   // height of this subtree; bounded by the parser
  Value number;  // kNumber: a kNumber Value (exact for integer literals)
  bool boolean = false;
  bool negated = false;  // kIn: "not in"
  std::string text;
  std::vector<AstNode> kids;
  std::vector<AstNode> list;  // kIn: the literal elements (kNumber/kString/kBool/kNull)
};

// The operator as written: "or", "==", "+", "-" (kNeg) ...
const char* AstOpText(AstOp op);

// A compact prefix rendering used by tests and debugging, e.g.
// "(or (== {/event} 'fault') (> {/power_w} 100))"; calls read "(lower {/a})".
std::string AstToString(const AstNode& node);

}  // namespace fanfold
