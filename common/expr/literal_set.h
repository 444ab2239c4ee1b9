// LiteralSet: the literals of an expression's "x in [a, b, ...]" test,
// compiled into sorted arrays so that a membership test is a binary search
// with no allocation. Matching follows the language's == rule: numbers (and
// numeric text) numerically and exactly, other strings bytewise, bools as bools; null
// never matches. Built once at compile time, then read-only; thread-safe to
// read.
#pragma once

#include <string>
#include <string_view>
#include <vector>

#include "common/base/value.h"

namespace fanfold {

class LiteralSet {
 public:
  // REQUIRES: v is kNumber (an integer or a double).
  void AddNumber(const Value& v);
  // Numeric text ("200") joins the numbers, so that "200" and 200 match alike.
  void AddString(std::string_view s);
  void AddBool(bool b);
  // Sorts and removes duplicates. REQUIRES: called once, after the last Add.
  void Seal();

  // Returns true iff v == some element. Missing, null and non-scalar values
  // match nothing.
  bool Contains(const Value& v) const;

  size_t size() const { return numbers_.size() + strings_.size() + has_true_ + has_false_; }

 private:
  std::vector<Value> numbers_;       // sorted by CompareNumbers after Seal(); no NaN
  std::vector<std::string> strings_;  // sorted bytewise; none of them numeric
  bool has_true_ = false;
  bool has_false_ = false;
};

}  // namespace fanfold
