// MappedFile: a whole file mapped read-only into memory, so a cursor can
// walk it as a string_view while the kernel reads it in, and pages already
// walked can be handed back (Release) so the process's resident memory does
// not grow with the file. Used by the coordinator for the merge's spilled
// runs. Move-only; unmaps on destruction. Release may be called from
// several threads on disjoint or overlapping ranges: it only drops the
// mapping's resident pages, which fault in again if read.
#pragma once

#include <cstdint>
#include <memory>
#include <string>
#include <string_view>

#include "common/base/status.h"

namespace fanfold {

class MappedFile {
 public:
  // Maps the file at path (an empty file gives an empty view).
  static Result<std::unique_ptr<MappedFile>> Open(const std::string& path);
  ~MappedFile();
  MappedFile(const MappedFile&) = delete;
  MappedFile& operator=(const MappedFile&) = delete;

  std::string_view bytes() const { return {data_, size_}; }
  // Drops the resident pages that lie wholly inside [from, to) (byte
  // offsets): the walk passed them. Reading them again is still correct.
  void Release(uint64_t from, uint64_t to) const;

 private:
  MappedFile(const char* data, size_t size) : data_(data), size_(size) {}
  const char* data_;
  size_t size_;
};

}  // namespace fanfold
