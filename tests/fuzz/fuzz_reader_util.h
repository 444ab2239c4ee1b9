// Helpers shared by the record-reader fuzz targets: a sink that reads every
// byte of every string slot (so ASan sees a view that points outside live
// memory) and a source that hands out its bytes in small, uneven pieces (so
// records straddle reads). Test-only; single-threaded.
#pragma once

#include <algorithm>
#include <bit>
#include <cstddef>
#include <cstdint>
#include <cstring>
#include <string>

#include "common/input/byte_source.h"
#include "common/input/field_table.h"
#include "common/input/record_reader.h"

namespace fanfold {

class TouchSink : public RecordSink {
 public:
  explicit TouchSink(const FieldTable& fields) : n_(fields.size()) {}
  bool OnRecord(Value* slots) override {
    for (size_t i = 0; i < n_; ++i) {
      const Value& v = slots[i];
      if (static_cast<uint8_t>(v.kind) > static_cast<uint8_t>(ValueKind::kOther)) __builtin_trap();
      for (char c : v.str) hash_ = hash_ * 31 + static_cast<unsigned char>(c);
      // Numbers by their exact form too (integer or double, and its bits).
      hash_ = hash_ * 31 + static_cast<uint8_t>(v.rep) + v.bits + std::bit_cast<uint64_t>(v.number);
      double d;
      (void)v.AsNumber(&d);
    }
    ++records_;
    return true;
  }
  uint64_t records() const { return records_; }
  uint64_t hash() const { return hash_; }

 private:
  size_t n_;
  uint64_t records_ = 0;
  uint64_t hash_ = 0;
};

// Returns at most 1..max_step bytes per Read, varying from call to call.
class ChoppySource : public ByteSource {
 public:
  ChoppySource(std::string bytes, size_t max_step) : bytes_(std::move(bytes)), max_step_(max_step) {}
  Result<size_t> Read(char* dst, size_t cap) override {
    size_t step = 1 + (calls_++ * 7919) % max_step_;
    size_t n = std::min({cap, step, bytes_.size() - pos_});  // 0 only at the end (cap > 0)
    std::memcpy(dst, bytes_.data() + pos_, n);
    pos_ += n;
    return n;
  }
  uint64_t compressed_bytes() const override { return pos_; }

 private:
  std::string bytes_;
  size_t max_step_;
  size_t pos_ = 0;
  size_t calls_ = 0;
};

// A small chunk size picked by the input, so records cross chunk ends.
inline size_t FuzzChunkBytes(const uint8_t* data, size_t size) {
  uint32_t h = 2166136261u;
  for (size_t i = 0; i < size; ++i) h = (h ^ data[i]) * 16777619u;
  return 1 + h % 97;
}

}  // namespace fanfold
