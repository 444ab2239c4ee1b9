#include "common/job/rows_plan.h"

#include <algorithm>
#include <cctype>
#include <utility>

#include "common/base/json_location.h"
#include "common/base/nearest_names.h"
#include "common/expr/parser.h"

namespace fanfold {
namespace {

// The function that names a column whose name is not an identifier (or is a
// keyword): column('lat_p99.9'). Only the rows step knows it.
constexpr const char* kColumnFunction = "column";

// Letters, digits and _, not starting with a digit; keywords are not names.
bool IsBareName(const std::string& s) {
  if (s.empty() || std::isdigit(static_cast<unsigned char>(s[0]))) return false;
  for (char c : s)
    if (!std::isalnum(static_cast<unsigned char>(c)) && c != '_') return false;
  for (const char* k : {"and", "or", "not", "in", "true", "false", "null"})
    if (s == k) return false;
  return true;
}

std::string Quote(std::string_view name) { return std::string("'").append(name).append("'"); }

std::string ErrorAt(int column, const std::string& found, const std::string& expected) {
  return "column " + std::to_string(column) + ": found " + found + "; expected " + expected;
}

// Checks and rewrites one tree: column('x') becomes the bare name x; every
// bare name must be a column in `names`; field references are refused.
class NameCheck {
 public:
  explicit NameCheck(const std::vector<std::string>& names) : names_(names) {}

  // "" when fine, else the message (without the job file and pointer).
  std::string Check(AstNode* a) {
    switch (a->kind) {
      case AstKind::kField: {
        const std::string last = a->text.substr(a->text.rfind('/') + 1);
        std::string near = std::find(names_.begin(), names_.end(), last) != names_.end()
                               ? " (did you mean " + last + "?)"
                               : DidYouMean(last, names_, [](std::string_view n) { return std::string(n); });
        if (near.empty()) near = " (a field of the records)";
        return ErrorAt(a->column, "field {" + a->text + "}" + near,
                       "a column of the result row: after aggregation there are no records, so an expression "
                       "here names columns, as a bare name (events) or column('name')");
      }
      case AstKind::kName: return Known(a->text, a->column);
      case AstKind::kCall:
        if (a->text == kColumnFunction) {
          if (a->kids.size() != 1 || a->kids[0].kind != AstKind::kString)
            return ErrorAt(a->column, "column() with " + std::to_string(a->kids.size()) + " argument" +
                                          (a->kids.size() == 1 ? " that is not a string literal" : "s"),
                           "column('a column name'): one string literal");
          std::string name = std::move(a->kids[0].text);
          a->kind = AstKind::kName;
          a->text = std::move(name);
          a->kids.clear();
          return Known(a->text, a->column);
        }
        break;
      default: break;
    }
    for (AstNode& k : a->kids) {
      std::string problem = Check(&k);
      if (!problem.empty()) return problem;
    }
    return "";
  }

 private:
  std::string Known(const std::string& name, int column) const {
    if (std::find(names_.begin(), names_.end(), name) != names_.end()) return "";
    std::string list;
    for (const auto& n : names_) list += (list.empty() ? "" : ", ") + n;
    return ErrorAt(column, "unknown column " + Quote(name) + DidYouMean(name, names_, Quote),
                   "a column of the result row: " + list);
  }

  const std::vector<std::string>& names_;
};

// Compiles the expression at `pointer` over the slots of *fields, whose
// derived names are `names`.
Result<Expr> CompileOver(const std::string& job_path, const std::string& text, const std::string& pointer,
                         const std::vector<std::string>& names, FieldTable* fields) {
  const std::string where = job_path + ": " + pointer;
  Result<AstNode> tree = ParseExpr(text);
  if (!tree.ok()) {
    // lat_p99.9 reads as a name and a number: say how to write such a name.
    for (const std::string& n : names)
      if (!IsBareName(n) && text.find(n) != std::string::npos)
        return Status::InvalidArgument(where + ": " + tree.status().message() + " (a column whose name is not " +
                                       "a bare word is written column(" + Quote(n) + "))");
    return tree.status().WithContext(where);
  }
  const std::string problem = NameCheck(names).Check(&tree.value());
  if (!problem.empty()) return Status::InvalidArgument(where + ": " + problem);
  Result<Expr> e = Expr::CompileTree(tree.value(), text, fields);
  if (!e.ok()) return e.status().WithContext(where);
  return e;
}

}  // namespace

std::vector<std::string> RowsPlan::AddedNames() const {
  std::vector<std::string> out;
  for (const AddedColumn& a : add) out.push_back(a.name);
  return out;
}

Result<RowsPlan> CompileRowsPlan(const std::string& job_path, const ReductionSpec& spec,
                                 const std::vector<std::string>& columns) {
  RowsPlan plan;
  std::vector<std::string> names;
  for (const std::string& c : columns) {
    plan.fields.AddDerived(c);
    names.push_back(c);
  }
  plan.merged_columns = columns.size();
  for (size_t i = 0; i < spec.rows.add.size(); ++i) {
    const AddedColumnSpec& a = spec.rows.add[i];
    const std::string p = ChildPointer(spec.pointer + "/rows/add", i);
    // Compiled before its name is added, so a column cannot read itself.
    Result<Expr> e = CompileOver(job_path, a.expr, p + "/expr", names, &plan.fields);
    if (!e.ok()) return e.status();
    if (std::find(names.begin(), names.end(), a.name) != names.end())
      return Status::InvalidArgument(job_path + ": " + p + "/name: found \"" + a.name +
                                     "\", a column the result already has; expected a new column name");
    plan.fields.AddDerived(a.name);
    names.push_back(a.name);
    plan.add.push_back(AddedColumn{a.name, std::move(e.value()), a.shown_digits});
  }
  if (!spec.rows.keep.empty()) {
    Result<Expr> e = CompileOver(job_path, spec.rows.keep, spec.pointer + "/rows/keep", names, &plan.fields);
    if (!e.ok()) return e.status();
    plan.keep.emplace(std::move(e.value()));
  }
  return plan;
}

}  // namespace fanfold
