#include "coordinator/output/row_pipe.h"

namespace fanfold {

RowPipe::RowPipe() {
  for (Batch& b : batches_) b.rows.resize(kBatchRows);
}

bool RowPipe::Put(std::vector<Cell>* row) {
  Batch& b = batches_[write_ % kBatches];
  if (b.n == kBatchRows) return false;  // a Put after one returned false (closed): nothing more is taken
  b.rows[b.n++].swap(*row);
  if (b.n < kBatchRows) return true;
  std::unique_lock<std::mutex> lock(mu_);
  if (closed_) return false;
  ++ready_;
  ++write_;
  changed_.notify_all();
  // The next batch to fill must not be one the consumer has yet to read.
  changed_.wait(lock, [&] { return ready_ < kBatches || closed_; });
  batches_[write_ % kBatches].n = 0;
  return !closed_;
}

void RowPipe::Finish() {
  std::lock_guard<std::mutex> lock(mu_);
  if (!closed_ && batches_[write_ % kBatches].n > 0) {  // after a close, no batch is handed over
    ++ready_;
    ++write_;
  }
  finished_ = true;
  changed_.notify_all();
}

size_t RowPipe::Next(std::vector<Cell>** rows) {
  std::unique_lock<std::mutex> lock(mu_);
  if (holding_) {
    holding_ = false;
    --ready_;
    ++read_;
    changed_.notify_all();
  }
  changed_.wait(lock, [&] { return ready_ > 0 || finished_; });
  if (ready_ == 0) return 0;
  holding_ = true;
  Batch& b = batches_[read_ % kBatches];
  *rows = b.rows.data();
  return b.n;
}

void RowPipe::Close() {
  std::lock_guard<std::mutex> lock(mu_);
  closed_ = true;
  changed_.notify_all();
}

}  // namespace fanfold
