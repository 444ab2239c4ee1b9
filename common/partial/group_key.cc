#include "common/partial/group_key.h"

#include <cmath>

#include "common/base/byte_io.h"
#include "common/base/cell_text.h"

namespace fanfold {

void AppendKeyValue(const Value& v, std::string* key) {
  ByteWriter w(key);
  switch (v.kind) {
    case ValueKind::kBool:
      w.U8(v.boolean ? 0x02 : 0x01);
      return;
    case ValueKind::kNumber:
      w.U8(0x03);
      w.F64(v.number == 0 ? 0.0 : v.number);
      return;
    case ValueKind::kString:
      w.U8(0x04);
      w.Str(v.str);
      return;
    default:
      w.U8(0x00);
      return;
  }
}

Status DecodeKey(std::string_view key, size_t arity, std::vector<Cell>* out) {
  ByteReader r(key);
  for (size_t i = 0; i < arity; ++i) {
    uint8_t tag = r.U8();
    switch (tag) {
      case 0x00: out->push_back(Cell::Null()); break;
      case 0x01: out->push_back(Cell::Bool(false)); break;
      case 0x02: out->push_back(Cell::Bool(true)); break;
      case 0x03: out->push_back(Cell::Float(r.F64())); break;
      case 0x04: out->push_back(Cell::String(std::string(r.Str()))); break;
      default: return Status::Corrupt("group key has unknown value tag " + std::to_string(tag));
    }
    if (!r.ok()) return Status::Corrupt("group key is truncated");
  }
  if (!r.at_end()) return Status::Corrupt("group key has trailing bytes");
  return Status::Ok();
}

namespace {
int Rank(const Cell& c) {
  switch (c.kind) {
    case Cell::Kind::kNull: return 0;
    case Cell::Kind::kBool: return 1;
    case Cell::Kind::kInt:
    case Cell::Kind::kFloat: return 2;
    case Cell::Kind::kString: return 3;
    default: return 4;
  }
}
double AsDouble(const Cell& c) { return c.kind == Cell::Kind::kInt ? static_cast<double>(c.integer) : c.number; }
}  // namespace

int CompareCells(const Cell& a, const Cell& b) {
  int ra = Rank(a), rb = Rank(b);
  if (ra != rb) return ra < rb ? -1 : 1;
  switch (ra) {
    case 0: return 0;
    case 1: return static_cast<int>(a.boolean) - static_cast<int>(b.boolean);
    case 2: {
      if (a.kind == Cell::Kind::kInt && b.kind == Cell::Kind::kInt)
        return a.integer < b.integer ? -1 : (a.integer > b.integer ? 1 : 0);
      double x = AsDouble(a), y = AsDouble(b);
      if (std::isnan(x) || std::isnan(y)) return std::isnan(x) - std::isnan(y);  // NaN last
      return x < y ? -1 : (x > y ? 1 : 0);
    }
    case 3: {
      int c = a.str.compare(b.str);
      return c < 0 ? -1 : (c > 0 ? 1 : 0);
    }
    default: {
      int c = CellJson(a).compare(CellJson(b));
      return c < 0 ? -1 : (c > 0 ? 1 : 0);
    }
  }
}

}  // namespace fanfold
