// RunCursor: walks a run — the merge's accumulated result, groups in
// strictly ascending key order (docs/streaming-merge.md) — group by group,
// whether the run is one GroupTable encoding (a partial's, or a table's
// Encode) or a chain of pieces: bodies framed like an encoding without the
// leading count, one per key range a fold wrote, in memory or in spill
// files. Keys must ascend across pieces too. Pieces in a mapped file have
// the pages behind the walk handed back (MappedFile::Release) every few
// MiB, so walking a spilled run costs bounded resident memory. The views
// it yields point into the pieces, which must outlive the cursor and them.
// Not thread-safe; a copy resumes independently from the same group.
#pragma once

#include <cstdint>
#include <string>
#include <string_view>
#include <vector>

#include "common/base/status.h"
#include "common/port/files/mapped_file.h"
#include "coordinator/merge/encoded_group_cursor.h"

namespace fanfold {

// One piece of a run: `groups` whole groups in `body`.
struct RunPiece {
  std::string_view body;
  uint64_t groups = 0;
  const MappedFile* file = nullptr;  // set iff body is that file's mapping
};

class RunCursor {
 public:
  // Over a whole GroupTable encoding.
  RunCursor(std::string_view encoded, size_t measure_count);
  // Over pieces, walked in order as one run.
  RunCursor(std::vector<RunPiece> pieces, size_t measure_count);

  // As EncodedGroupCursor's: true iff there is a next group; false at the
  // end (status() ok) or at the first framing error (status() Corrupt).
  bool Next();
  bool SeekAtLeast(std::string_view key);

  // REQUIRES: the last Next() or SeekAtLeast() returned true.
  std::string_view key() const { return cur_.key(); }
  std::string_view state(size_t j) const { return cur_.state(j); }
  // The current group's framing as it lies in the run (key and states
  // with their lengths): what a fold copies through untouched.
  std::string_view group_bytes() const { return cur_.group_bytes(); }

  const Status& status() const { return status_; }
  uint64_t group_count() const { return count_; }
  uint64_t groups_read() const { return before_ + cur_.groups_read(); }
  bool positioned() const { return cur_.positioned(); }

  // Bytes walked between page releases in a mapped piece.
  static constexpr uint64_t kReleaseStep = uint64_t{1} << 20;

 private:
  bool Fail(const Status& s);

  std::vector<RunPiece> pieces_;
  size_t m_;
  size_t piece_ = 0;          // the piece cur_ walks
  EncodedGroupCursor cur_;
  uint64_t count_ = 0;        // over every piece
  uint64_t before_ = 0;       // groups in the pieces before piece_
  uint64_t released_ = 0;     // piece_'s bytes handed back so far
  std::string_view last_key_; // the previous piece's last key
  Status status_;
};

}  // namespace fanfold
