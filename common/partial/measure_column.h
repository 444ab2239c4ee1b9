// MeasureColumn: one measure's states for every group of a worker's group
// table (common/partial/worker_group_table.h), indexed by group id. The
// fixed-size measures (count, count_present, sum, mean/variance/stddev,
// min, max) keep their states in one flat array per measure — no heap object
// and no virtual call per group or record, since the column calls its final
// state class directly; the others (quantile, distinct, top, sketches,
// histogram, at_lowest/at_highest) keep one MeasureState per group behind
// the same interface; the sketches (hyperloglog, ddsketch) call their final
// class directly too. Records arrive a batch at a time: one virtual call per
// batch per measure. Each group's bytes are exactly what the group's
// MeasureState::Encode writes (same arithmetic, same order of inputs), so a
// partial made with columns equals one made with GroupTable byte for byte.
// Not thread-safe.
#pragma once

#include <cstddef>
#include <cstdint>
#include <memory>

#include "common/base/byte_io.h"
#include "common/base/value.h"
#include "common/measures/measure.h"

namespace fanfold {

// Where the arguments of a batch's inputs are: argument a of the input at
// record row is base[a][row * step[a]] (a field of the reader's batch, or a
// column of evaluated arguments), so they are read in place, not copied.
struct ArgColumns {
  size_t count = 0;  // arguments per input, 0..2
  const Value* base[2] = {nullptr, nullptr};
  size_t step[2] = {0, 0};
};

class MeasureColumn {
 public:
  virtual ~MeasureColumn() = default;

  // Appends empty states until the column holds `groups` of them.
  virtual void Resize(size_t groups) = 0;
  // Drops every state (a kept table's next shard); keeps the arrays' memory
  // and counts its bytes as a new column would (ApproxBytes).
  virtual void Clear() = 0;

  // Feeds n inputs in order: the i-th goes to group groups[i] with the
  // arguments args[i * stride, i * stride + stride) (stride >= the measure's
  // argument count; args unused when it takes none). Returns n, or the
  // index of the input at which a bounded measure exceeded its limit (the
  // column is then unusable and the shard fails).
  // REQUIRES: every groups[i] < the size given to Resize.
  virtual size_t AddBatch(const uint32_t* groups, const Value* args, size_t stride, size_t n) = 0;
  // The same, with the i-th input's arguments at record rows[i] of `args`
  // (see ArgColumns; args.count is the measure's argument count).
  virtual size_t AddRows(const uint32_t* groups, const uint32_t* rows, const ArgColumns& args, size_t n) = 0;

  // Appends group g's state as MeasureState::Encode would write it.
  virtual void EncodeGroup(uint32_t g, ByteWriter& w) const = 0;
  // The most bytes one group's state takes in EncodeRangeTo, or 0 when the
  // column's states have no such bound (the table then encodes through
  // EncodeGroup). Count and sum have one: a worker's table with many groups
  // has their states written a block at a time, by pointer, with no
  // ByteWriter call per field and no virtual call per group.
  virtual size_t EncodeBound() const { return 0; }
  // Writes the states of groups[0, n) (EncodeGroup's bytes each) one after
  // another at out, which has room for n * EncodeBound() bytes, and sets
  // ends[i] to the offset from out at which group i's state ends.
  // REQUIRES: EncodeBound() > 0.
  virtual void EncodeRangeTo(const uint32_t* groups, size_t n, char* out, uint32_t* ends) const;
  // The bytes EncodeRangeTo writes for the states of groups [0, groups),
  // together (in group order: no sort needed). REQUIRES: EncodeBound() > 0.
  virtual size_t EncodedStateBytes(size_t groups) const;
  // A hint that group g's state will be encoded soon (groups are encoded
  // in key order, which is random in memory): fetches it into the cache.
  virtual void Prefetch(uint32_t g) const { (void)g; }

  // Heap bytes the column holds beyond its states' inline part (an
  // estimate for the variable-size measures: their objects, not what
  // they own).
  virtual size_t ApproxBytes() const = 0;
  // ApproxBytes, once the column has grown to n groups (n at least its
  // size), is ApproxBytes() + (n - size) * BytesPerGroup() for every n up
  // to StableBytesUpTo(): the group table checks its budget by that sum
  // instead of asking every column for every new group.
  virtual size_t StableBytesUpTo() const = 0;
  virtual size_t BytesPerGroup() const { return 0; }
};

// A column for config's measure. REQUIRES: config validated.
std::unique_ptr<MeasureColumn> NewMeasureColumn(const MeasureConfig& config);

}  // namespace fanfold
