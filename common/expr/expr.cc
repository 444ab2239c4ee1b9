#include "common/expr/expr.h"

#include <algorithm>

#include <utility>

#include "common/expr/compiler.h"
#include "common/expr/parser.h"
#include "common/expr/program.h"

namespace fanfold {

Result<Expr> Expr::Compile(std::string_view text, FieldTable* fields) {
  Result<AstNode> ast = ParseExpr(text);
  if (!ast.ok()) return ast.status();
  return CompileTree(ast.value(), text, fields);
}

Result<Expr> Expr::CompileTree(const AstNode& root, std::string_view text, FieldTable* fields) {
  auto program = std::make_unique<Program>();
  program->text = std::string(text);
  FF_RETURN_IF_ERROR(CompileExprAst(root, fields, program.get()));
  return Expr(std::move(program));
}

Value Expr::Eval(const Value* slots, ScratchArena* arena) const {
  return program_->Eval(slots, arena);
}

void Expr::EvalBatch(const Value* rows, size_t width, const uint32_t* sel, size_t n, size_t cap, Value* out,
                     size_t out_stride, BatchScratch* scratch, ScratchArena* arena) const {
  program_->EvalBatch(rows, width, sel, n, cap, out, out_stride, scratch, arena);
}

const std::string& Expr::text() const { return program_->text; }

int Expr::DirectSlot() const {
  const auto& nodes = program_->nodes;
  return nodes.size() == 1 && nodes[0].op == ExprOp::kSlot ? nodes[0].slot : -1;
}

bool Expr::ReadsZoneRules() const {
  for (const ExprNode& n : program_->nodes)
    if (!n.time.zone.is_utc()) return true;
  return false;
}

std::vector<int> Expr::SlotsRead() const {
  std::vector<int> out;
  for (const ExprNode& n : program_->nodes)
    if (n.op == ExprOp::kSlot) out.push_back(n.slot);
  std::sort(out.begin(), out.end());
  out.erase(std::unique(out.begin(), out.end()), out.end());
  return out;
}

Expr::Expr(std::unique_ptr<Program> p) : program_(std::move(p)) {}
Expr::Expr(Expr&&) noexcept = default;
Expr& Expr::operator=(Expr&&) noexcept = default;
Expr::~Expr() = default;

}  // namespace fanfold
