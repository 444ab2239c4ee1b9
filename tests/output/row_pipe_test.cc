// Tests for coordinator/output/row_pipe: every row put arrives once, in the
// order put, whatever the count against the batch size; a consumer that
// closes the pipe early stops the producer instead of leaving it waiting.
#include "coordinator/output/row_pipe.h"

#include <cstdint>
#include <thread>
#include <vector>

#include <doctest/doctest.h>

using namespace fanfold;

namespace {

std::vector<Cell> Row(int64_t i) { return {Cell::Int(i), Cell::String("k" + std::to_string(i))}; }

bool IsRow(const std::vector<Cell>& row, int64_t i) {
  return row.size() == 2 && row[0].kind == Cell::Kind::kInt && row[0].integer == i &&
         row[1].kind == Cell::Kind::kString && row[1].str == "k" + std::to_string(i);
}

}  // namespace

// Intent: rows come out in order, each once, for counts around the batch
// size (0, 1, a batch less one, a batch, a batch and one, many batches).
TEST_CASE("row_pipe: every row arrives once and in order") {
  const int64_t b = static_cast<int64_t>(RowPipe::kBatchRows);
  for (int64_t count : {int64_t{0}, int64_t{1}, b - 1, b, b + 1, 37 * b + 5}) {
    CAPTURE(count);
    RowPipe pipe;
    bool all_put = true;
    std::thread producer([&] {
      std::vector<Cell> row;
      for (int64_t i = 0; i < count; ++i) {
        row = Row(i);
        all_put = pipe.Put(&row) && all_put;
      }
      pipe.Finish();
    });
    int64_t next = 0;
    bool same = true;
    std::vector<Cell>* rows = nullptr;
    for (size_t n; (n = pipe.Next(&rows)) > 0;)
      for (size_t i = 0; i < n; ++i, ++next) same = same && IsRow(rows[i], next);
    producer.join();
    CHECK(all_put);
    CHECK(same);
    CHECK(next == count);
  }
}

// Intent: after Close the producer's Put says stop within a batch, so a
// walk feeding a consumer that gave up ends (this test would hang if not).
TEST_CASE("row_pipe: closing stops the producer") {
  RowPipe pipe;
  int64_t put = 0;
  std::thread producer([&] {
    std::vector<Cell> row;
    for (int64_t i = 0; i < 1000000; ++i) {
      row = Row(i);
      ++put;
      if (!pipe.Put(&row)) break;
    }
    pipe.Finish();
  });
  std::vector<Cell>* rows = nullptr;
  REQUIRE(pipe.Next(&rows) == RowPipe::kBatchRows);
  CHECK(IsRow(rows[0], 0));
  pipe.Close();
  producer.join();
  CHECK(put <= static_cast<int64_t>((RowPipe::kBatches + 2) * RowPipe::kBatchRows));
}

// Intent: a producer that goes on after Put said stop is refused again (no
// row written past its batch) and its Finish hands nothing over: the
// consumer that closed sees no more rows.
TEST_CASE("row_pipe: Put and Finish after a close take nothing") {
  RowPipe pipe;
  pipe.Close();
  std::vector<Cell> row;
  int refused = 0;
  for (int64_t i = 0; i < static_cast<int64_t>(3 * RowPipe::kBatchRows); ++i) {
    row = Row(i);
    refused += pipe.Put(&row) ? 0 : 1;
  }
  CHECK(refused == 2 * static_cast<int>(RowPipe::kBatchRows) + 1);
  pipe.Finish();
  std::vector<Cell>* rows = nullptr;
  CHECK(pipe.Next(&rows) == 0);
}
