// CompileExprAst: lowers an ExprAst into an Expr::Program. Resolves {field}
// references (interned as raw fields) and bare names (derived fields that
// must already exist), function names and arities, period_start units and
// "in" lists, and folds subtrees without fields into constants. Runs once
// per expression while a plan is built; single-threaded (it edits *fields).
#pragma once

#include "common/expr/expr.h"
#include "common/expr/ast.h"
#include "common/input/field_table.h"
#include "common/base/status.h"

namespace fanfold {

// Fills *program (which must be empty) from `root`. On error returns
// InvalidArgument "column N: ..." naming the offending name or literal; raw
// fields interned before the error stay in *fields.
Status CompileExprAst(const AstNode& root, FieldTable* fields, Expr::Program* program);

}  // namespace fanfold
