#include "common/expr/compiler.h"

#include <cmath>
#include <string>

#include "common/base/nearest_names.h"
#include "common/expr/conditional_functions.h"
#include "common/expr/program.h"
#include "common/expr/time_arguments.h"
#include "common/base/scratch_arena.h"

namespace fanfold {
namespace {

Status ErrorAt(int column, const std::string& found, const std::string& expected) {
  return Status::InvalidArgument("column " + std::to_string(column) + ": " + found +
                                 "; expected " + expected);
}

CompareOp ToCompareOp(AstOp op) {
  switch (op) {
    case AstOp::kNe: return CompareOp::kNe;
    case AstOp::kLt: return CompareOp::kLt;
    case AstOp::kLe: return CompareOp::kLe;
    case AstOp::kGt: return CompareOp::kGt;
    case AstOp::kGe: return CompareOp::kGe;
    default: return CompareOp::kEq;
  }
}

ExprOp ToArithmeticOp(AstOp op) {
  switch (op) {
    case AstOp::kAdd: return ExprOp::kAdd;
    case AstOp::kSub: return ExprOp::kSub;
    case AstOp::kMul: return ExprOp::kMul;
    case AstOp::kDiv: return ExprOp::kDiv;
    default: return ExprOp::kMod;
  }
}

// "lower()" for a suggested function name.
std::string Parens(std::string_view name) { return std::string(name) + "()"; }

bool IsComparison(AstOp op) { return op >= AstOp::kEq && op <= AstOp::kGe; }

class Compiler {
 public:
  Compiler(FieldTable* fields, Expr::Program* program) : fields_(fields), p_(program) {}

  // Appends the nodes of `a` (children first) and sets *index to its root.
  Status Lower(const AstNode& a, int32_t* index) {
    const size_t nodes_before = p_->nodes.size();
    const size_t args_before = p_->args.size();
    const size_t sets_before = p_->sets.size();
    ExprNode n;
    switch (a.kind) {
      case AstKind::kNumber: return Constant(a.number, index);
      case AstKind::kString: return Constant(Value::String(Keep(a.text)), index);
      case AstKind::kBool: return Constant(Value::Bool(a.boolean), index);
      case AstKind::kNull: return Constant(Value::Null(), index);
      case AstKind::kField:
        n.op = ExprOp::kSlot;
        n.slot = fields_->InternField(a.text);
        return Push(n, index);
      case AstKind::kName:
        n.op = ExprOp::kSlot;
        n.slot = fields_->FindDerived(a.text);
        if (n.slot < 0 && HiddenDerived(a.text))
          return Status::InvalidArgument("column " + std::to_string(a.column) + ": derived field '" + a.text +
                                         "' belongs to an earlier reduction; expected a field of this reduction's "
                                         "or the job's \"derive\" (move it to the job's top-level \"derive\" "
                                         "to share it)");
        if (n.slot < 0)
          return Status::InvalidArgument("column " + std::to_string(a.column) + ": unknown derived field '" + a.text +
                                         "'" + NearDerived(a.text) +
                                         "; derived fields must be defined earlier in \"derive\"");
        return Push(n, index);
      case AstKind::kUnary:
        n.op = a.op == AstOp::kNot ? ExprOp::kNot : ExprOp::kNeg;
        FF_RETURN_IF_ERROR(Kids(a, 1, &n));
        break;
      case AstKind::kBinary:
        FF_RETURN_IF_ERROR(Binary(a, &n));
        break;
      case AstKind::kIn:
        FF_RETURN_IF_ERROR(In(a, &n));
        break;
      case AstKind::kCall:
        FF_RETURN_IF_ERROR(Call(a, &n));
        break;
    }
    if (!AllKidsConstant(n)) {
      Specialize(&n);
      return Push(n, index);
    }
    // Nothing below depends on a record: evaluate once now, keep the result,
    // and drop the subtree.
    FF_RETURN_IF_ERROR(Push(n, index));
    ScratchArena arena;
    Value v = p_->EvalAt(*index, nullptr, &arena);
    if (v.kind == ValueKind::kString) v.str = Keep(v.str);
    p_->nodes.resize(nodes_before);
    p_->args.resize(args_before);
    p_->sets.resize(sets_before);
    return Constant(v, index);
  }

 private:
  std::string_view Keep(std::string_view s) { return p_->strings.emplace_back(s); }

  Status Push(const ExprNode& n, int32_t* index) {
    p_->nodes.push_back(n);
    *index = static_cast<int32_t>(p_->nodes.size() - 1);
    return Status::Ok();
  }

  Status Constant(const Value& v, int32_t* index) {
    ExprNode n;
    n.op = ExprOp::kConst;
    n.constant = MakeCompareConstant(v);
    return Push(n, index);
  }

  bool IsConstant(int32_t i) const { return p_->nodes[i].op == ExprOp::kConst; }

  // Replaces a general op by its fast path (program.h) where one applies.
  // Only for nodes that stay in the program: constant folding evaluates the
  // general ops.
  void Specialize(ExprNode* n) const {
    if (n->op == ExprOp::kCompareConst && (n->compare == CompareOp::kEq || n->compare == CompareOp::kNe) &&
        n->constant.value.kind == ValueKind::kString && !n->constant.numeric) {
      n->op = ExprOp::kTextEq;
      n->negated = n->compare == CompareOp::kNe;
      return;
    }
    if (n->op != ExprOp::kCall) return;
    switch (n->function) {
      case ExprFunction::kTime:
      case ExprFunction::kTimeMs: n->op = ExprOp::kEpoch; return;
      case ExprFunction::kClockHour:
      case ExprFunction::kWeekday: n->op = ExprOp::kClockField; return;
      case ExprFunction::kSubstr: {
        double start, count = HUGE_VAL;
        if (!IsConstant(n->kids[1]) || !SubstrOffset(p_->nodes[n->kids[1]].constant.value, &start)) return;
        if (n->nargs == 3 &&
            (!IsConstant(n->kids[2]) || !SubstrOffset(p_->nodes[n->kids[2]].constant.value, &count)))
          return;
        n->op = ExprOp::kSubstrFixed;
        n->span[0] = start;
        n->span[1] = count;
        return;
      }
      default: return;
    }
  }

  bool AllKidsConstant(const ExprNode& n) const {
    if (n.op == ExprOp::kCoalesce || n.op == ExprOp::kBranch) {
      for (int k = 0; k < n.nargs; ++k)
        if (!IsConstant(p_->args[n.first_arg + k])) return false;
      return true;
    }
    const int kids = n.op == ExprOp::kCompareConst || n.op == ExprOp::kNot ||
                             n.op == ExprOp::kNeg || n.op == ExprOp::kIn
                         ? 1
                     : n.op == ExprOp::kCall ? n.nargs
                                             : 2;
    for (int k = 0; k < kids; ++k)
      if (!IsConstant(n.kids[k])) return false;
    return true;
  }

  Status Kids(const AstNode& a, int count, ExprNode* n) {
    for (int k = 0; k < count; ++k) FF_RETURN_IF_ERROR(Lower(a.kids[k], &n->kids[k]));
    n->nargs = static_cast<uint8_t>(count);
    return Status::Ok();
  }

  Status Binary(const AstNode& a, ExprNode* n) {
    switch (a.op) {
      case AstOp::kOr: n->op = ExprOp::kOr; return Kids(a, 2, n);
      case AstOp::kAnd: n->op = ExprOp::kAnd; return Kids(a, 2, n);
      default: break;
    }
    if (!IsComparison(a.op)) {
      n->op = ToArithmeticOp(a.op);
      return Kids(a, 2, n);
    }
    for (const AstNode& side : a.kids)
      if (side.kind == AstKind::kNull)
        return ErrorAt(side.column, "comparison with null, which is always false",
                       "has(x) or lacks(x) to test for null or missing values");
    n->compare = ToCompareOp(a.op);
    FF_RETURN_IF_ERROR(Kids(a, 2, n));
    const bool left = IsConstant(n->kids[0]), right = IsConstant(n->kids[1]);
    if (left == right) {
      n->op = ExprOp::kCompare;
      return Status::Ok();
    }
    // One constant side: keep it in the node, pre-parsed, on the right.
    const int32_t c = left ? n->kids[0] : n->kids[1];
    n->op = ExprOp::kCompareConst;
    n->constant = p_->nodes[c].constant;
    if (left) {
      n->kids[0] = n->kids[1];
      n->compare = MirrorCompareOp(n->compare);
    }
    n->kids[1] = -1;
    n->nargs = 1;
    return Status::Ok();
  }

  Status In(const AstNode& a, ExprNode* n) {
    LiteralSet set;
    for (const AstNode& lit : a.list) {
      switch (lit.kind) {
        case AstKind::kNumber: set.AddNumber(lit.number); break;
        case AstKind::kString: set.AddString(lit.text); break;
        case AstKind::kBool: set.AddBool(lit.boolean); break;
        default:
          return ErrorAt(lit.column, "null in a list, which never matches",
                         "has(x) or lacks(x) to test for null or missing values");
      }
    }
    set.Seal();
    n->op = ExprOp::kIn;
    n->negated = a.negated;
    FF_RETURN_IF_ERROR(Kids(a, 1, n));
    n->slot = static_cast<int32_t>(p_->sets.size());
    p_->sets.push_back(std::move(set));
    return Status::Ok();
  }

  Status Call(const AstNode& a, ExprNode* n) {
    const ExprFunctionInfo* f = FindExprFunction(a.text);
    if (f == nullptr)
      return ErrorAt(a.column, "unknown function '" + a.text + "'" + DidYouMean(a.text, ExprFunctionNames(), Parens),
                     "one of " + ExprFunctionSignatures());
    const int got = static_cast<int>(a.kids.size());
    if (f->function == ExprFunction::kBranch) {
      FF_RETURN_IF_ERROR(CheckBranchCall(a));
      n->function = f->function;
      return LazyArgs(a, ExprOp::kBranch, n);
    }
    if (got < f->min_args || got > f->max_args)
      return ErrorAt(a.column,
                     a.text + "() with " + std::to_string(got) +
                         (got == 1 ? " argument" : " arguments"),
                     std::string(f->signature) +
                         (f->function == ExprFunction::kCoalesce ? " with 1 to 16 arguments" : ""));
    n->function = f->function;
    if (f->function == ExprFunction::kCoalesce) return LazyArgs(a, ExprOp::kCoalesce, n);
    n->op = ExprOp::kCall;
    if (TakesTimeArguments(f->function)) {
      FF_RETURN_IF_ERROR(ReadTimeArguments(a, f->function, &n->time));
      return Kids(a, 1, n);  // the unit and zone are compiled into the node
    }
    return Kids(a, got, n);
  }

  // Lowers every argument of `a` into Program::args for an op that
  // evaluates its arguments only as needed (coalesce, branch).
  Status LazyArgs(const AstNode& a, ExprOp op, ExprNode* n) {
    const int got = static_cast<int>(a.kids.size());
    n->op = op;
    n->nargs = static_cast<uint8_t>(got);
    // Arguments first, then their indices: Lower appends to args as well.
    std::vector<int32_t> kids(got);
    for (int k = 0; k < got; ++k) FF_RETURN_IF_ERROR(Lower(a.kids[k], &kids[k]));
    n->first_arg = static_cast<int32_t>(p_->args.size());
    p_->args.insert(p_->args.end(), kids.begin(), kids.end());
    return Status::Ok();
  }

  // True iff `name` is a derived field out of scope (another reduction's).
  bool HiddenDerived(const std::string& name) const {
    for (const FieldTable::Slot& s : fields_->slots())
      if (s.derived && s.hidden && s.name == name) return true;
    return false;
  }

  // " (did you mean hour?)" from the derived fields defined so far.
  std::string NearDerived(const std::string& name) const {
    std::vector<std::string> names;
    for (const FieldTable::Slot& s : fields_->slots())
      if (s.derived && !s.hidden) names.push_back(s.name);
    return DidYouMean(name, names);
  }

  FieldTable* fields_;
  Expr::Program* p_;
};

}  // namespace

Status CompileExprAst(const AstNode& root, FieldTable* fields, Expr::Program* program) {
  int32_t index;
  return Compiler(fields, program).Lower(root, &index);
}

}  // namespace fanfold
