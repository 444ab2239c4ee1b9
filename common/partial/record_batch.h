// RecordBatch: records copied out of the reader (strings included, since a
// reader's strings live only during its sink call, unless it lends them:
// common/input/record_reader.h), so the shard processor
// aggregates and times them a batch at a time: two clock reads per batch, not
// per record. Owns its memory, reused between batches; not thread-safe.
#pragma once

#include <cstddef>
#include <vector>

#include "common/base/scratch_arena.h"
#include "common/base/value.h"

namespace fanfold {

class RecordBatch {
 public:
  // Records per batch: enough that the two clock reads of a batch vanish
  // next to its work, few enough that the batch stays in the CPU's caches.
  static constexpr size_t kCapacity = 256;
  // The batch is also full once its strings take this many bytes, so that
  // records with long strings never pile up: the memory a batch holds stays
  // about what one record's strings need when they are long.
  static constexpr size_t kStringBudget = size_t{1} << 20;

  // REQUIRES: width = the number of slots of every record added (a job
  // that reads no field has none: its records are counted, not read).
  explicit RecordBatch(size_t width);

  // Copies the record's width slots, and the bytes of its strings unless
  // set_copy_strings(false) said they outlive the batch's records.
  // REQUIRES: !full().
  void Add(const Value* slots);
  // Whether Add copies strings (initially true). Set false only while the
  // strings handed to Add stay valid until the batch is cleared.
  void set_copy_strings(bool copy) { copy_strings_ = copy; }

  // The row the next record takes, for a reader to build the record in
  // place (RecordSink::RecordBuffer); then Commit adds it.
  // REQUIRES: !full().
  Value* NextRow() { return record(size_); }
  // Adds the record built in NextRow(), copying the bytes of its strings
  // (Add without the copy of the slots). REQUIRES: !full().
  void Commit();

  size_t size() const { return size_; }
  bool full() const { return size_ == kCapacity || string_bytes_ >= kStringBudget; }
  // The i-th record's width slots, valid (and writable) until Clear().
  // REQUIRES: i < size().
  Value* record(size_t i) { return rows_.data() + i * width_; }

  // Forgets the records (keeps the memory).
  void Clear();

 private:
  size_t width_;
  size_t size_ = 0;
  std::vector<Value> rows_;  // kCapacity rows of width_ slots
  ScratchArena strings_;     // the records' string bytes
  size_t string_bytes_ = 0;  // their total
  bool copy_strings_ = true;
};

}  // namespace fanfold
