// LookupTable: one small table a job names, held in memory: each row's key
// (in canonical key bytes) maps to the values of the fields the table brings.
// Filled once per process and run by LoadLookupTable (table_loader.h), then
// read-only: Find is const and thread-safe (each caller brings its own key
// buffer), so a Plan holding a shared_ptr<const LookupTable> stays shareable.
//
// Keys follow the expression language's equality (==, docs/expressions.md):
// numbers and numeric text by exact numeric value (7, 7.0 and "7" are one
// key; integers beyond 2^53 stay exact), other text bytewise, bools as bools.
// Missing, null, NaN and objects/arrays are no key: they match no row.
#pragma once

#include <cstdint>
#include <deque>
#include <string>
#include <string_view>
#include <unordered_map>
#include <vector>

#include "common/base/value.h"
#include "common/base/value_key.h"

namespace fanfold {

// Where a table came from, as the plan fingerprint records it.
struct TableIdentity {
  std::string path;           // absolute
  uint64_t size = 0;          // the file's size in bytes (as stored, compressed or not)
  int64_t mtime_ns = 0;       // its modification time
  uint64_t content_hash = 0;  // XXH3-64 of its decompressed bytes
  uint64_t bytes = 0;         // its decompressed bytes
};

class LookupTable {
 public:
  // field_names: the names the table's values are known by, in order.
  explicit LookupTable(std::vector<std::string> field_names) : field_names_(std::move(field_names)) {}
  LookupTable(const LookupTable&) = delete;
  LookupTable& operator=(const LookupTable&) = delete;

  // Replaces *out with the lookup key of v and returns true, or returns
  // false iff v can be no key (missing, null, NaN, object or array).
  static bool MakeKey(const Value& v, std::string* out);

  // The values of the row whose key equals `key` (field_count() of them,
  // valid while the table lives), or nullptr iff there is none or `key` can
  // be no key. *scratch is the caller's reusable buffer.
  const Value* Find(const Value& key, std::string* scratch) const;

  // Adds a row read on `line` whose key bytes are `key` (from MakeKey),
  // copying values[0 .. field_count()) (strings included). Returns 0 iff
  // added, or the line of the earlier row with the same key (nothing added).
  uint64_t AddRow(std::string_view key, const Value* values, uint64_t line);

  size_t field_count() const { return field_names_.size(); }
  size_t row_count() const { return rows_.size(); }
  const std::vector<std::string>& field_names() const { return field_names_; }

  const TableIdentity& identity() const { return identity_; }
  void set_identity(TableIdentity id) { identity_ = std::move(id); }

 private:
  struct Row {
    size_t first = 0;   // index of its first value in values_
    uint64_t line = 0;  // where it was read
  };
  std::vector<std::string> field_names_;
  std::vector<Value> values_;        // row after row, field_count() each
  std::deque<std::string> strings_;  // what the string values point into (never moves)
  std::unordered_map<std::string, Row, TransparentStringHash, std::equal_to<>> rows_;
  TableIdentity identity_;
};

}  // namespace fanfold
