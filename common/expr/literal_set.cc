#include "common/expr/literal_set.h"

#include <algorithm>
#include <cmath>

namespace fanfold {

void LiteralSet::AddNumber(double d) {
  if (!std::isnan(d)) numbers_.push_back(d);  // NaN equals nothing
}

void LiteralSet::AddString(std::string_view s) {
  double d;
  if (Value::String(s).AsNumber(&d)) {
    AddNumber(d);
  } else {
    strings_.emplace_back(s);
  }
}

void LiteralSet::AddBool(bool b) { (b ? has_true_ : has_false_) = true; }

void LiteralSet::Seal() {
  std::sort(numbers_.begin(), numbers_.end());
  numbers_.erase(std::unique(numbers_.begin(), numbers_.end()), numbers_.end());
  std::sort(strings_.begin(), strings_.end());
  strings_.erase(std::unique(strings_.begin(), strings_.end()), strings_.end());
}

bool LiteralSet::Contains(const Value& v) const {
  double d;
  switch (v.kind) {
    case ValueKind::kBool: return v.boolean ? has_true_ : has_false_;
    case ValueKind::kNumber:
      // binary_search would "find" NaN, which compares neither less nor greater.
      return !std::isnan(v.number) &&
             std::binary_search(numbers_.begin(), numbers_.end(), v.number);
    case ValueKind::kString:
      // Numeric text can only equal a number (every numeric element is one),
      // other text only a string element.
      if (!numbers_.empty() && v.AsNumber(&d))
        return !std::isnan(d) && std::binary_search(numbers_.begin(), numbers_.end(), d);
      return std::binary_search(strings_.begin(), strings_.end(), v.str,
                                [](const auto& a, const auto& b) {
                                  return std::string_view(a) < std::string_view(b);
                                });
    default: return false;
  }
}

}  // namespace fanfold
