// Cell: one finalized output value — a measure's result or a group key as it
// will be written. Scalars (null, integer, float, string, bool) or, for
// measures such as top-k, a list of records (each a list of named cells).
// Owns its memory; built once per output row, so simplicity wins over speed.
#pragma once

#include <cstdint>
#include <string>
#include <utility>
#include <vector>

namespace fanfold {

struct Cell {
  enum class Kind : uint8_t { kNull, kBool, kInt, kFloat, kString, kList, kRecord };
  Kind kind = Kind::kNull;
  bool boolean = false;
  __int128 integer = 0;  // kInt: exact, so int64, uint64 and wider exact sums all print as they are
  double number = 0;
  std::string str;
  std::vector<Cell> items;          // kList: elements; kRecord: field values
  std::vector<std::string> names;   // kRecord: field names, parallel to items

  static Cell Null() { return Cell{}; }
  static Cell Bool(bool b) { Cell c; c.kind = Kind::kBool; c.boolean = b; return c; }
  static Cell Int(__int128 v) { Cell c; c.kind = Kind::kInt; c.integer = v; return c; }
  static Cell Float(double v) { Cell c; c.kind = Kind::kFloat; c.number = v; return c; }
  static Cell String(std::string s) { Cell c; c.kind = Kind::kString; c.str = std::move(s); return c; }
  static Cell List(std::vector<Cell> items) {
    Cell c;
    c.kind = Kind::kList;
    c.items = std::move(items);
    return c;
  }
  // A record with named fields, e.g. {"value": "x", "count": 3}.
  static Cell Record(std::vector<std::string> names, std::vector<Cell> items) {
    Cell c;
    c.kind = Kind::kRecord;
    c.names = std::move(names);
    c.items = std::move(items);
    return c;
  }
};

}  // namespace fanfold
