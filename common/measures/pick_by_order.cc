#include "common/measures/pick_by_order.h"

#include <cmath>

#include "common/base/number_encoding.h"
#include "common/base/value_compare.h"

namespace fanfold {

int PickByOrderState::CompareKeys(ValueKind a_kind, const Value& a_num, std::string_view a_str,
                                  const Slot& b) {
  if (a_kind != b.kind) return a_kind == ValueKind::kNumber ? -1 : 1;  // numbers first
  if (a_kind == ValueKind::kNumber) return CompareNumbers(a_num, b.number);  // never NaN: ordered
  const int c = a_str.compare(b.str);
  return c < 0 ? -1 : (c > 0 ? 1 : 0);
}

bool PickByOrderState::Add(const Value* args) {
  const Value& value = args[0];
  const Value& key = args[1];
  Value key_num;
  ValueKind key_kind;
  if (key.AsNumeric(&key_num)) {
    if (std::isnan(key_num.number)) {
      ++skipped_;
      return true;
    }
    key_kind = ValueKind::kNumber;
    key_num = NumberEncoding::Canonical(key_num);  // -0.0 and 0.0 are one key
  } else if (key.kind == ValueKind::kString) {
    key_kind = ValueKind::kString;
  } else {
    ++skipped_;
    return true;
  }
  if (value.kind != ValueKind::kString && value.kind != ValueKind::kNumber &&
      value.kind != ValueKind::kBool) {
    ++skipped_;
    return true;
  }
  if (!Takes(has_ ? CompareKeys(key_kind, key_num, key.str, key_) : 0)) return true;
  // assign() reuses the strings' capacity: a warm state allocates nothing.
  key_.kind = key_kind;
  key_.number = key_num;
  if (key_kind == ValueKind::kString) key_.str.assign(key.str.data(), key.str.size());
  value_.kind = value.kind;
  value_.boolean = value.boolean;
  if (value.kind == ValueKind::kNumber) value_.number = value;  // as it came: -0.0 and NaN too
  if (value.kind == ValueKind::kString) value_.str.assign(value.str.data(), value.str.size());
  has_ = true;
  return true;
}

Status PickByOrderState::Merge(const MeasureState& other) {
  const auto* o = dynamic_cast<const PickByOrderState*>(&other);
  if (o == nullptr || o->highest_ != highest_)
    return Status::Internal("at_lowest/at_highest: merge with a state of another measure");
  skipped_ += o->skipped_;
  if (!o->has_) return Status::Ok();
  if (Takes(has_ ? CompareKeys(o->key_.kind, o->key_.number, o->key_.str, key_) : 0)) {
    key_ = o->key_;
    value_ = o->value_;
    has_ = true;
  }
  return Status::Ok();
}

void PickByOrderState::EncodeSlot(const Slot& s, ByteWriter& w) {
  switch (s.kind) {
    case ValueKind::kBool:
      w.U8('b');
      w.U8(s.boolean ? 1 : 0);
      break;
    case ValueKind::kNumber:
      NumberEncoding::Write(s.number, w);
      break;
    default:
      w.U8('s');
      w.Str(s.str);
      break;
  }
}

bool PickByOrderState::DecodeSlot(ByteReader& r, bool allow_bool, Slot* s) {
  const uint8_t tag = r.U8();
  if (!r.ok()) return false;
  if (tag == 'b' && allow_bool) {
    const uint8_t b = r.U8();
    if (!r.ok() || b > 1) return false;
    s->kind = ValueKind::kBool;
    s->boolean = b == 1;
  } else if (NumberEncoding::IsTag(tag)) {
    s->kind = ValueKind::kNumber;
    // Keys are never NaN or -0.0 (Add); a captured value may be either.
    if (!NumberEncoding::Read(tag, r, /*any_double=*/allow_bool, &s->number)) return false;
  } else if (tag == 's') {
    s->kind = ValueKind::kString;
    s->str.assign(r.Str());
  } else {
    return false;
  }
  return r.ok();
}

void PickByOrderState::Encode(ByteWriter& w) const {
  w.Varint(skipped_);
  w.U8(has_ ? 1 : 0);
  if (!has_) return;
  EncodeSlot(key_, w);
  EncodeSlot(value_, w);
}

Status PickByOrderState::Decode(ByteReader& r) {
  // Built only on failure: a Status holds a heap string, and this runs per state.
  auto corrupt = [] { return Status::Corrupt("at_lowest/at_highest: bad or truncated state"); };
  const uint64_t skipped = r.Varint();
  const uint8_t has = r.U8();
  if (!r.ok() || has > 1) return corrupt();
  Slot key, value;
  if (has == 1) {
    if (!DecodeSlot(r, /*allow_bool=*/false, &key) || !DecodeSlot(r, /*allow_bool=*/true, &value))
      return corrupt();
  }
  skipped_ = skipped;
  has_ = has == 1;
  key_ = std::move(key);
  value_ = std::move(value);
  return Status::Ok();
}

void PickByOrderState::Finalize(std::vector<Cell>* out) const {
  if (!has_) {
    out->push_back(Cell::Null());
    return;
  }
  switch (value_.kind) {
    case ValueKind::kBool: out->push_back(Cell::Bool(value_.boolean)); break;
    case ValueKind::kNumber: out->push_back(NumberEncoding::ToCell(value_.number)); break;
    default: out->push_back(Cell::String(value_.str)); break;
  }
}

}  // namespace fanfold
