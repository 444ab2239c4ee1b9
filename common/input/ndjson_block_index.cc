#include "common/input/ndjson_block_index.h"

#include <cstring>

namespace fanfold {

void NdjsonBlockStudy::Study(const char* data, size_t size, size_t readable_after,
                             std::unique_ptr<BlockNote>* note) {
  auto* index = dynamic_cast<NdjsonBlockIndex*>(note->get());
  if (index == nullptr) {
    index = new NdjsonBlockIndex;
    note->reset(index);
  }
  index->groups.clear();
  index->indexes.clear();
  // The whole lines: after the first line break, up to the last one.
  const void* first_nl = std::memchr(data, '\n', size);
  if (first_nl == nullptr) return;
  const size_t begin = static_cast<size_t>(static_cast<const char*>(first_nl) - data) + 1;
  const void* last_nl = begin < size ? memrchr(data + begin, '\n', size - begin) : nullptr;
  if (last_nl == nullptr) return;
  const size_t end = static_cast<size_t>(static_cast<const char*>(last_nl) - data);
  for (size_t at = begin; at <= end;) {
    // Up to the first line break kNdjsonGroupBytes on, else the last one.
    size_t stop = end;
    if (end - at > kNdjsonGroupBytes)
      stop = static_cast<size_t>(
          static_cast<const char*>(std::memchr(data + at + kNdjsonGroupBytes, '\n', end + 1 - at - kNdjsonGroupBytes)) -
          data);
    NdjsonBlockIndex::Group g{static_cast<uint32_t>(at), static_cast<uint32_t>(stop), false,
                              static_cast<uint32_t>(index->indexes.size()), 0};
    if (parser_.IndexGroup(data + at, stop - at, size + readable_after - at)) {
      const uint32_t* idx = nullptr;
      size_t n = 0;
      parser_.GroupIndexes(&idx, &n);
      g.indexed = true;
      g.count = static_cast<uint32_t>(n);
      index->indexes.insert(index->indexes.end(), idx, idx + n + 1);
    }
    index->groups.push_back(g);
    at = stop + 1;
  }
}

}  // namespace fanfold
