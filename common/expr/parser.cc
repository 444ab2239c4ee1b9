#include "common/expr/parser.h"

#include <algorithm>
#include <utility>
#include <vector>

#include "common/expr/lexer.h"
#include "common/expr/number_arithmetic.h"

namespace fanfold {
namespace {

constexpr const char* kOperand =
    "an operand: a number, string, {field}, name, function call or '('";

std::string Col(int column) { return "column " + std::to_string(column); }

Status ErrorAt(int column, const std::string& found, const std::string& expected) {
  return Status::InvalidArgument(Col(column) + ": " + found + "; expected " + expected);
}

AstOp CompareOp(TokenKind k) {
  switch (k) {
    case TokenKind::kEq: return AstOp::kEq;
    case TokenKind::kNe: return AstOp::kNe;
    case TokenKind::kLt: return AstOp::kLt;
    case TokenKind::kLe: return AstOp::kLe;
    case TokenKind::kGt: return AstOp::kGt;
    case TokenKind::kGe: return AstOp::kGe;
    default: return AstOp::kNone;
  }
}

class Parser {
 public:
  explicit Parser(std::vector<Token> tokens) : tokens_(std::move(tokens)) {}

  Status Parse(AstNode* out) {
    if (Peek().kind == TokenKind::kEnd) return ErrorAt(1, "empty expression", kOperand);
    FF_RETURN_IF_ERROR(Or(out));
    if (Peek().kind != TokenKind::kEnd)
      return Unexpected(Peek(), "an operator or the end of the expression");
    return Status::Ok();
  }

 private:
  const Token& Peek(size_t ahead = 0) const {
    return tokens_[std::min(pos_ + ahead, tokens_.size() - 1)];
  }
  const Token& Next() { return tokens_[std::min(pos_++, tokens_.size() - 1)]; }

  static Status Unexpected(const Token& t, const std::string& expected) {
    return ErrorAt(t.column, DescribeToken(t), expected);
  }

  // Counts recursion so that "((((...", "not not not ..." and "- - - ..."
  // fail cleanly instead of exhausting the stack.
  Status Enter(const Token& at) {
    if (++nesting_ > kMaxExprDepth)
      return ErrorAt(at.column, "expression nested deeper than " + std::to_string(kMaxExprDepth) +
                                    " levels", "a shallower expression");
    return Status::Ok();
  }

  // Links kids under a new node and bounds the tree height, which the loops
  // for "a + b + c ..." would otherwise let grow without limit.
  static Status Make(AstKind kind, AstOp op, int column, std::vector<AstNode> kids,
                     AstNode* out) {
    AstNode n;
    n.kind = kind;
    n.op = op;
    n.column = column;
    for (const AstNode& k : kids) n.depth = std::max(n.depth, k.depth + 1);
    if (n.depth > kMaxExprDepth)
      return ErrorAt(column, "expression nested deeper than " + std::to_string(kMaxExprDepth) +
                                 " levels", "a shallower expression");
    n.kids = std::move(kids);
    *out = std::move(n);
    return Status::Ok();
  }

  template <typename Sub>
  Status LeftAssoc(AstNode* out, Sub sub, AstOp (*op_of)(TokenKind)) {
    FF_RETURN_IF_ERROR((this->*sub)(out));
    for (AstOp op; (op = op_of(Peek().kind)) != AstOp::kNone;) {
      const int column = Next().column;
      AstNode rhs;
      FF_RETURN_IF_ERROR((this->*sub)(&rhs));
      std::vector<AstNode> kids;
      kids.push_back(std::move(*out));
      kids.push_back(std::move(rhs));
      FF_RETURN_IF_ERROR(Make(AstKind::kBinary, op, column, std::move(kids), out));
    }
    return Status::Ok();
  }

  Status Or(AstNode* out) {
    return LeftAssoc(out, &Parser::And,
                     [](TokenKind k) { return k == TokenKind::kOr ? AstOp::kOr : AstOp::kNone; });
  }
  Status And(AstNode* out) {
    return LeftAssoc(out, &Parser::Not,
                     [](TokenKind k) { return k == TokenKind::kAnd ? AstOp::kAnd : AstOp::kNone; });
  }

  Status Not(AstNode* out) {
    if (Peek().kind != TokenKind::kNot) return Compare(out);
    const Token& t = Next();
    FF_RETURN_IF_ERROR(Enter(t));
    std::vector<AstNode> kids(1);
    FF_RETURN_IF_ERROR(Not(&kids[0]));
    --nesting_;
    return Make(AstKind::kUnary, AstOp::kNot, t.column, std::move(kids), out);
  }

  Status Compare(AstNode* out) {
    FF_RETURN_IF_ERROR(Sum(out));
    const Token& t = Peek();
    const AstOp op = CompareOp(t.kind);
    bool negated = false;
    if (op != AstOp::kNone) {
      Next();
      std::vector<AstNode> kids(2);
      kids[0] = std::move(*out);
      FF_RETURN_IF_ERROR(Sum(&kids[1]));
      FF_RETURN_IF_ERROR(Make(AstKind::kBinary, op, t.column, std::move(kids), out));
    } else if (t.kind == TokenKind::kIn ||
               (t.kind == TokenKind::kNot && Peek(1).kind == TokenKind::kIn)) {
      negated = t.kind == TokenKind::kNot;
      Next();
      if (negated) Next();
      std::vector<AstNode> kids(1);
      kids[0] = std::move(*out);
      FF_RETURN_IF_ERROR(Make(AstKind::kIn, AstOp::kNone, t.column, std::move(kids), out));
      out->negated = negated;
      FF_RETURN_IF_ERROR(List(&out->list));
    } else if (t.kind == TokenKind::kNot) {
      return Unexpected(Peek(1), "'in' after 'not' at " + Col(t.column));
    } else {
      return Status::Ok();
    }
    const Token& after = Peek();
    if (CompareOp(after.kind) != AstOp::kNone || after.kind == TokenKind::kIn ||
        (after.kind == TokenKind::kNot && Peek(1).kind == TokenKind::kIn))
      return ErrorAt(after.column, DescribeToken(after) + " after a comparison",
                     "'and', 'or' or parentheses (comparisons do not chain)");
    return Status::Ok();
  }

  Status List(std::vector<AstNode>* out) {
    if (Peek().kind != TokenKind::kLBracket)
      return Unexpected(Peek(), "'[' to start the list of literals after 'in'");
    const int open = Next().column;
    if (Peek().kind == TokenKind::kRBracket) {
      Next();
      return Status::Ok();
    }
    for (;;) {
      AstNode lit;
      const Token& t = Next();
      lit.column = t.column;
      switch (t.kind) {
        case TokenKind::kNumber: lit.kind = AstKind::kNumber; lit.number = t.number; break;
        case TokenKind::kString: lit.kind = AstKind::kString; lit.text = t.text; break;
        case TokenKind::kTrue: lit.kind = AstKind::kBool; lit.boolean = true; break;
        case TokenKind::kFalse: lit.kind = AstKind::kBool; lit.boolean = false; break;
        case TokenKind::kNull: lit.kind = AstKind::kNull; break;
        case TokenKind::kMinus:
          if (Peek().kind == TokenKind::kNumber) {
            lit.kind = AstKind::kNumber;
            lit.number = NegateNumber(Next().number);
            break;
          }
          return Unexpected(Peek(), "a number after '-' in the list");
        default:
          return Unexpected(t, "a literal (number, string, true, false or null) in the list");
      }
      out->push_back(std::move(lit));
      const Token& sep = Next();
      if (sep.kind == TokenKind::kRBracket) return Status::Ok();
      if (sep.kind != TokenKind::kComma)
        return Unexpected(sep, "',' or ']' to close the list opened at " + Col(open));
    }
  }

  static AstOp SumOp(TokenKind k) {
    return k == TokenKind::kPlus ? AstOp::kAdd : k == TokenKind::kMinus ? AstOp::kSub : AstOp::kNone;
  }
  static AstOp ProductOp(TokenKind k) {
    return k == TokenKind::kStar    ? AstOp::kMul
           : k == TokenKind::kSlash ? AstOp::kDiv
           : k == TokenKind::kPercent ? AstOp::kMod
                                      : AstOp::kNone;
  }
  Status Sum(AstNode* out) { return LeftAssoc(out, &Parser::Product, &Parser::SumOp); }
  Status Product(AstNode* out) { return LeftAssoc(out, &Parser::Unary, &Parser::ProductOp); }

  Status Unary(AstNode* out) {
    if (Peek().kind != TokenKind::kMinus) return Primary(out);
    const Token& t = Next();
    FF_RETURN_IF_ERROR(Enter(t));
    std::vector<AstNode> kids(1);
    FF_RETURN_IF_ERROR(Unary(&kids[0]));
    --nesting_;
    return Make(AstKind::kUnary, AstOp::kNeg, t.column, std::move(kids), out);
  }

  Status Primary(AstNode* out) {
    const Token& t = Next();
    out->column = t.column;
    switch (t.kind) {
      case TokenKind::kNumber: out->kind = AstKind::kNumber; out->number = t.number; return Status::Ok();
      case TokenKind::kString: out->kind = AstKind::kString; out->text = t.text; return Status::Ok();
      case TokenKind::kTrue: out->kind = AstKind::kBool; out->boolean = true; return Status::Ok();
      case TokenKind::kFalse: out->kind = AstKind::kBool; out->boolean = false; return Status::Ok();
      case TokenKind::kNull: out->kind = AstKind::kNull; return Status::Ok();
      case TokenKind::kField: out->kind = AstKind::kField; out->text = t.text; return Status::Ok();
      case TokenKind::kName:
        if (Peek().kind == TokenKind::kLParen) return Call(t, out);
        out->kind = AstKind::kName;
        out->text = t.text;
        return Status::Ok();
      case TokenKind::kLParen: {
        FF_RETURN_IF_ERROR(Enter(t));
        FF_RETURN_IF_ERROR(Or(out));
        --nesting_;
        if (Peek().kind != TokenKind::kRParen)
          return Unexpected(Peek(), "an operator or ')' to close '(' at " + Col(t.column));
        Next();
        return Status::Ok();
      }
      default:
        return Unexpected(t, kOperand);
    }
  }

  Status Call(const Token& name, AstNode* out) {
    const int open = Next().column;  // '('
    FF_RETURN_IF_ERROR(Enter(name));
    std::vector<AstNode> args;
    if (Peek().kind == TokenKind::kRParen) {
      Next();
    } else {
      for (;;) {
        args.emplace_back();
        FF_RETURN_IF_ERROR(Or(&args.back()));
        const Token& sep = Next();
        if (sep.kind == TokenKind::kRParen) break;
        if (sep.kind != TokenKind::kComma)
          return Unexpected(sep, "an operator, ',' or ')' to close the call of " + name.text +
                                     " at " + Col(open));
      }
    }
    --nesting_;
    FF_RETURN_IF_ERROR(Make(AstKind::kCall, AstOp::kNone, name.column, std::move(args), out));
    out->text = name.text;
    return Status::Ok();
  }

  std::vector<Token> tokens_;
  size_t pos_ = 0;
  int nesting_ = 0;
};

}  // namespace

Result<AstNode> ParseExpr(std::string_view text) {
  Result<std::vector<Token>> tokens = Tokenize(text);
  if (!tokens.ok()) return tokens.status();
  Parser parser(std::move(tokens).value());
  AstNode root;
  FF_RETURN_IF_ERROR(parser.Parse(&root));
  return root;
}

}  // namespace fanfold
