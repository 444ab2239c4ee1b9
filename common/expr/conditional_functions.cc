#include "common/expr/conditional_functions.h"

#include <string>

namespace fanfold {
namespace {

constexpr const char* kBranchShape =
    "branch(test, value, ..., otherwise): pairs of a test and its value, then the value when no "
    "test holds (an odd number of arguments, 3 to 65)";

Status ErrorAt(int column, const std::string& found, const std::string& expected) {
  return Status::InvalidArgument("column " + std::to_string(column) + ": " + found +
                                 "; expected " + expected);
}

}  // namespace

Status CheckBranchCall(const AstNode& call) {
  const int got = static_cast<int>(call.kids.size());
  if (got % 2 == 0 && got >= 2 && got < kMaxBranchArgs) {
    // The usual slip: the otherwise value was left out, so the last
    // argument reads as a test's value and nothing covers the rest.
    return ErrorAt(call.kids[got - 1].column,
                   "branch() with " + std::to_string(got) +
                       " arguments, so no otherwise value after the last test's value",
                   kBranchShape);
  }
  if (got < 3 || got > kMaxBranchArgs) {
    return ErrorAt(call.column,
                   "branch() with " + std::to_string(got) + (got == 1 ? " argument" : " arguments"),
                   kBranchShape);
  }
  for (int k = 0; k + 1 < got; k += 2) {
    const AstNode& test = call.kids[k];
    if (test.kind == AstKind::kNull)
      return ErrorAt(test.column, "a test that is null, which never holds",
                     "a condition such as has(x) or x > 0");
  }
  return Status::Ok();
}

}  // namespace fanfold
