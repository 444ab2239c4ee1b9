#include "coordinator/merge/run_cursor.h"

#include <utility>

namespace fanfold {

RunCursor::RunCursor(std::string_view encoded, size_t measure_count)
    : m_(measure_count), cur_(encoded, measure_count) {
  count_ = cur_.group_count();
  if (!cur_.status().ok()) status_ = cur_.status();
}

RunCursor::RunCursor(std::vector<RunPiece> pieces, size_t measure_count)
    : pieces_(std::move(pieces)),
      m_(measure_count),
      cur_(pieces_.empty() ? std::string_view() : pieces_[0].body, measure_count,
           pieces_.empty() ? 0 : pieces_[0].groups) {
  for (const RunPiece& p : pieces_) count_ += p.groups;
  if (!cur_.status().ok()) status_ = cur_.status().WithContext("piece 0 of the run");
}

bool RunCursor::Fail(const Status& s) {
  status_ = s;
  return false;
}

bool RunCursor::Next() {
  if (!status_.ok()) return false;
  const uint64_t before = cur_.consumed();
  while (!cur_.Next()) {
    if (!cur_.status().ok())
      return Fail(pieces_.empty() ? cur_.status()
                                  : cur_.status().WithContext("piece " + std::to_string(piece_) + " of the run"));
    if (piece_ + 1 >= pieces_.size()) return false;
    // The piece is walked: hand all of it back, then start the next.
    if (const MappedFile* f = pieces_[piece_].file) f->Release(0, pieces_[piece_].body.size());
    if (cur_.groups_read() > 0) last_key_ = cur_.last_key();
    before_ += cur_.groups_read();
    ++piece_;
    released_ = 0;
    cur_ = EncodedGroupCursor(pieces_[piece_].body, m_, pieces_[piece_].groups);
    if (cur_.Next()) {
      if (before_ > 0 && !EncodedGroupCursor::KeyLess(last_key_, cur_.key()))
        return Fail(Status::Corrupt("piece " + std::to_string(piece_) +
                                    " of the run: its first key is not above the previous piece's last"));
      return true;
    }
  }
  if (const MappedFile* f = pieces_.empty() ? nullptr : pieces_[piece_].file) {
    if (before - released_ >= kReleaseStep) {
      f->Release(released_, before);
      released_ = before;
    }
  }
  return true;
}

bool RunCursor::SeekAtLeast(std::string_view key) { return SeekCursorAtLeast(*this, key); }

}  // namespace fanfold
