// BlockStudy: work on a block of decompressed bytes done by the thread that
// filled it, before the block is handed to the reader. With decode ahead
// threaded (decode_ahead.h) that is the helper thread, so a reader can move
// a pass over its bytes (the NDJSON reader's structural indexing,
// ndjson_block_index.h) off the parsing thread. The result, a BlockNote,
// travels with the block and is reused with it (blocks are kept between
// shards), so its storage lives as long as the block's. A reader names its
// study to the lending source before its first block
// (BlockLender::SetStudy) and takes from a block only a note its own study
// made: a block filled without a study keeps a note with no maker.
// A study is called from one thread at a time, never concurrently.
#pragma once

#include <cstddef>
#include <memory>

namespace fanfold {

class BlockStudy;

// What a study left on a block; each study derives its own.
class BlockNote {
 public:
  virtual ~BlockNote() = default;
  // The study that made the note for the block's present bytes, or null.
  const BlockStudy* maker = nullptr;
};

class BlockStudy {
 public:
  virtual ~BlockStudy() = default;
  // Studies data[0, size), readable up to data + size + readable_after,
  // and leaves the result in *note, reusing the note there if it is of its
  // own kind (any kind, or none, may be there). The caller then sets
  // (*note)->maker. REQUIRES: size > 0; leaves *note non-null.
  virtual void Study(const char* data, size_t size, size_t readable_after, std::unique_ptr<BlockNote>* note) = 0;
};

}  // namespace fanfold
