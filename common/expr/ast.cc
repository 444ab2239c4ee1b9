#include "common/expr/ast.h"

#include "common/base/number_text.h"

namespace fanfold {

const char* AstOpText(AstOp op) {
  switch (op) {
    case AstOp::kNone: return "?";
    case AstOp::kOr: return "or";
    case AstOp::kAnd: return "and";
    case AstOp::kNot: return "not";
    case AstOp::kEq: return "==";
    case AstOp::kNe: return "!=";
    case AstOp::kLt: return "<";
    case AstOp::kLe: return "<=";
    case AstOp::kGt: return ">";
    case AstOp::kGe: return ">=";
    case AstOp::kAdd: return "+";
    case AstOp::kSub: return "-";
    case AstOp::kMul: return "*";
    case AstOp::kDiv: return "/";
    case AstOp::kMod: return "%";
    case AstOp::kNeg: return "-";
  }
  return "?";
}

namespace {

void Append(const AstNode& n, std::string* out) {
  switch (n.kind) {
    case AstKind::kNumber: {
      if (n.number.is_integer()) {
        AppendWideInt(n.number.Wide(), out);
        return;
      }
      char buf[kNumberTextMax];
      out->append(FormatNumber(n.number.number, buf));
      return;
    }
    case AstKind::kString:
      out->push_back('\'');
      for (char c : n.text) {
        if (c == '\'' || c == '\\') out->push_back('\\');
        if (c == '\n') { out->append("\\n"); continue; }
        if (c == '\t') { out->append("\\t"); continue; }
        out->push_back(c);
      }
      out->push_back('\'');
      return;
    case AstKind::kBool: out->append(n.boolean ? "true" : "false"); return;
    case AstKind::kNull: out->append("null"); return;
    case AstKind::kField:
      out->push_back('{');
      for (char c : n.text) {
        if (c == '}' || c == '\\') out->push_back('\\');
        out->push_back(c);
      }
      out->push_back('}');
      return;
    case AstKind::kName: out->append(n.text); return;
    case AstKind::kCall:
    case AstKind::kUnary:
    case AstKind::kBinary:
      out->push_back('(');
      out->append(n.kind == AstKind::kCall ? n.text : AstOpText(n.op));
      for (const AstNode& k : n.kids) {
        out->push_back(' ');
        Append(k, out);
      }
      out->push_back(')');
      return;
    case AstKind::kIn:
      out->append(n.negated ? "(not-in " : "(in ");
      Append(n.kids[0], out);
      out->append(" [");
      for (size_t i = 0; i < n.list.size(); ++i) {
        if (i) out->push_back(' ');
        Append(n.list[i], out);
      }
      out->append("])");
      return;
  }
}

}  // namespace

std::string AstToString(const AstNode& node) {
  std::string out;
  Append(node, &out);
  return out;
}

}  // namespace fanfold
