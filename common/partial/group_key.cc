#include "common/partial/group_key.h"

#include <bit>
#include <climits>
#include <cstring>
#include <cmath>
#include <cstdint>

#include "common/base/byte_io.h"
#include "common/base/cell_text.h"
#include "common/base/value_compare.h"

namespace fanfold {
using namespace group_key_detail;  // the tags and bounds WriteKeyValue uses

void AppendKeyValue(const Value& v, std::string* key) {
  const size_t at = key->size();
  key->resize(at + KeyValueBound(v));
  key->resize(at + WriteKeyValue(v, key->data() + at));
}

Status DecodeKey(std::string_view key, size_t arity, std::vector<Cell>* out) {
  ByteReader r(key);
  for (size_t i = 0; i < arity; ++i) {
    uint8_t tag = r.U8();
    switch (tag) {
      case 0x00: out->push_back(Cell::Null()); break;
      case 0x01: out->push_back(Cell::Bool(false)); break;
      case 0x02: out->push_back(Cell::Bool(true)); break;
      case kTagDouble: {
        const double d = r.F64();
        if (d >= -kTwo63 && d < kTwo64 && std::floor(d) == d)
          return Status::Corrupt("group key holds an integral double that should be an integer");
        out->push_back(Cell::Float(d));
        break;
      }
      case 0x04: out->push_back(Cell::String(std::string(r.Str()))); break;
      case kTagInt64: out->push_back(Cell::Int(r.I64())); break;
      case kTagUint64: {
        const uint64_t u = r.U64();
        if (u <= static_cast<uint64_t>(INT64_MAX) && r.ok())
          return Status::Corrupt("group key holds a small integer under the unsigned tag");
        out->push_back(Cell::Int(u));
        break;
      }
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
      // An integer against a float exactly (2^53 + 1 > 2^53); NaN last.
      if (a.kind == Cell::Kind::kInt) {
        const int c = CompareWideToDouble(a.integer, b.number);
        return c == kUnordered ? -1 : c;
      }
      if (b.kind == Cell::Kind::kInt) {
        const int c = CompareWideToDouble(b.integer, a.number);
        return c == kUnordered ? 1 : -c;
      }
      const double x = a.number, y = b.number;
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
