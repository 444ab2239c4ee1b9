#include "common/lookup/lookup_table.h"

#include <cmath>

namespace fanfold {

bool LookupTable::MakeKey(const Value& v, std::string* out) {
  if (v.kind == ValueKind::kBool) return MakeValueKey(v, out);
  // Numeric text is its number, as == compares it: "7" == 7 holds.
  Value number;
  if (v.AsNumeric(&number)) {
    if (number.rep == NumberRep::kDouble && std::isnan(number.number)) return false;  // NaN == NaN is false
    return MakeValueKey(number, out);
  }
  if (v.kind == ValueKind::kString) return MakeValueKey(v, out);
  return false;
}

const Value* LookupTable::Find(const Value& key, std::string* scratch) const {
  if (!MakeKey(key, scratch)) return nullptr;
  const auto it = rows_.find(std::string_view(*scratch));
  return it == rows_.end() ? nullptr : values_.data() + it->second.first;
}

uint64_t LookupTable::AddRow(std::string_view key, const Value* values, uint64_t line) {
  const auto [it, added] = rows_.try_emplace(std::string(key), Row{values_.size(), line});
  if (!added) return it->second.line;
  for (size_t f = 0; f < field_names_.size(); ++f) {
    Value v = values[f];
    if (!v.str.empty()) v.str = strings_.emplace_back(v.str);
    values_.push_back(v);
  }
  return 0;
}

}  // namespace fanfold
