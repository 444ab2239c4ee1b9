#include "common/expr/literal_set.h"

#include <algorithm>
#include <cmath>

#include "common/base/value_compare.h"

namespace fanfold {
namespace {

// Exact numeric order; the set holds no NaN, so it is a strict weak order.
bool NumberLess(const Value& a, const Value& b) { return CompareNumbers(a, b) < 0; }

}  // namespace

void LiteralSet::AddNumber(const Value& v) {
  if (v.is_integer() || !std::isnan(v.number)) numbers_.push_back(v);  // NaN equals nothing
}

void LiteralSet::AddString(std::string_view s) {
  Value v;
  if (Value::String(s).AsNumeric(&v)) {
    AddNumber(v);
  } else {
    strings_.emplace_back(s);
  }
}

void LiteralSet::AddBool(bool b) { (b ? has_true_ : has_false_) = true; }

void LiteralSet::Seal() {
  std::sort(numbers_.begin(), numbers_.end(), NumberLess);
  numbers_.erase(std::unique(numbers_.begin(), numbers_.end(),
                             [](const Value& a, const Value& b) { return CompareNumbers(a, b) == 0; }),
                 numbers_.end());
  std::sort(strings_.begin(), strings_.end());
  strings_.erase(std::unique(strings_.begin(), strings_.end()), strings_.end());
}

bool LiteralSet::Contains(const Value& v) const {
  Value n;
  switch (v.kind) {
    case ValueKind::kBool: return v.boolean ? has_true_ : has_false_;
    case ValueKind::kNumber:
      // binary_search would "find" NaN, which compares neither less nor greater.
      return (v.is_integer() || !std::isnan(v.number)) &&
             std::binary_search(numbers_.begin(), numbers_.end(), v, NumberLess);
    case ValueKind::kString:
      // Numeric text can only equal a number (every numeric element is one),
      // other text only a string element.
      if (!numbers_.empty() && v.AsNumeric(&n))
        return (n.is_integer() || !std::isnan(n.number)) &&
               std::binary_search(numbers_.begin(), numbers_.end(), n, NumberLess);
      return std::binary_search(strings_.begin(), strings_.end(), v.str,
                                [](const auto& a, const auto& b) {
                                  return std::string_view(a) < std::string_view(b);
                                });
    default: return false;
  }
}

}  // namespace fanfold
