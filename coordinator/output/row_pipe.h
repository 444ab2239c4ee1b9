// RowPipe: result rows handed from one thread (the merge's walk, which
// decodes and finalizes them) to another (which orders and writes them) in
// batches, so the two halves of the output stage run at once on two cores.
// At most kBatches batches of kBatchRows rows exist, whatever the number
// of rows: memory is bounded. Rows move by swap, so each side reuses the
// other's spent cells' buffers. One producer thread, one consumer thread.
#pragma once

#include <array>
#include <condition_variable>
#include <cstddef>
#include <mutex>
#include <vector>

#include "common/base/cell.h"

namespace fanfold {

class RowPipe {
 public:
  static constexpr size_t kBatchRows = 512;
  static constexpr size_t kBatches = 4;

  RowPipe();

  // Producer: takes *row (leaving it a spent row to reuse). Returns false
  // once the consumer closed the pipe: the producer should stop.
  bool Put(std::vector<Cell>* row);
  // Producer: no more rows (hands over the last, partial batch).
  void Finish();

  // Consumer: hands back the batch it held and waits for the next; returns
  // its row count (rows in (*rows)[0, n)), or 0 once the producer finished
  // and every batch was read. Rows stay valid until the next call.
  size_t Next(std::vector<Cell>** rows);
  // Consumer: no more rows wanted; Put returns false from now on, and a
  // producer waiting for room wakes. May be called more than once.
  void Close();

 private:
  struct Batch {
    std::vector<std::vector<Cell>> rows;
    size_t n = 0;
  };
  std::array<Batch, kBatches> batches_;
  std::mutex mu_;
  std::condition_variable changed_;
  size_t write_ = 0;     // batch the producer fills (index mod kBatches); producer only
  size_t read_ = 0;      // batch the consumer reads next or holds; consumer only
  size_t ready_ = 0;     // batches filled and not yet handed back (one may be held)
  bool holding_ = false; // the consumer holds batch read_; consumer only
  bool finished_ = false;
  bool closed_ = false;
};

}  // namespace fanfold
