// Tests for the streaming output stage: sort keys order cells as
// CompareCells does (the order SortRows uses), and OrderedRows (bounded
// heap, in-memory sort, spilled sorted files merged k-way) with RowWriter
// give, for random tables with ties, nulls, NaN/inf, text and lists, the
// very bytes of SortRows + limit + RenderTable over the whole table — the
// in-memory renderer the output stage replaced, kept as the reference.
#include "coordinator/output/ordered_rows.h"

#include <cmath>
#include <cstring>
#include <limits>
#include <random>
#include <string>
#include <vector>

#include <doctest/doctest.h>

#include "common/base/cell_text.h"
#include "common/partial/group_key.h"
#include "common/port/memory_platform.h"
#include "coordinator/output/output_table.h"
#include "coordinator/output/row_codec.h"
#include "coordinator/output/row_sorter.h"
#include "coordinator/output/row_writer.h"
#include "coordinator/output/sort_key.h"

using namespace fanfold;

namespace {

int Sign(int v) { return (v > 0) - (v < 0); }

std::string KeyOf(const Cell& c, bool desc) {
  std::string k;
  AppendCellSortKey(c, desc, &k);
  return k;
}

// Cells covering every rank of CompareCells and the hard numbers: integers
// beyond 2^53 against nearby doubles, -0 against 0, infinities, NaN.
std::vector<Cell> TrickyCells() {
  const __int128 two53 = __int128{1} << 53;
  const __int128 max128 = static_cast<__int128>((~static_cast<unsigned __int128>(0)) >> 1);
  std::vector<Cell> v = {Cell::Null(), Cell::Bool(false), Cell::Bool(true)};
  for (__int128 i : {-max128 - 1, static_cast<__int128>(INT64_MIN) - 1, __int128{-1}, __int128{0}, __int128{1},
                     two53 - 1, two53, two53 + 1, two53 + 2, static_cast<__int128>(UINT64_MAX), max128})
    v.push_back(Cell::Int(i));
  const double inf = std::numeric_limits<double>::infinity();
  for (double d :
       {-inf, -1e308, -9007199254740992.0, -0.5, -0.0, 0.0, 5e-324, 0.5, 1.0, 9007199254740992.0, 9007199254740994.0,
        1.8446744073709552e19, 1.7014118346046923e38, 1e300, inf, std::numeric_limits<double>::quiet_NaN()})
    v.push_back(Cell::Float(d));
  for (const char* s : {"", "a", "ab", "b", "\xc3\xa9", "zz"}) v.push_back(Cell::String(s));
  v.push_back(Cell::String(std::string("a\0", 2)));
  v.push_back(Cell::String(std::string("a\0\0", 3)));
  v.push_back(Cell::String(std::string("a\0b", 3)));
  v.push_back(Cell::List({Cell::Int(1)}));
  v.push_back(Cell::List({Cell::Record({"value", "count"}, {Cell::String("x"), Cell::Int(3)})}));
  return v;
}

// Intent: every pair of cells compares by its sort keys' bytes exactly as
// CompareCells compares the cells, ascending and (reversed) descending.
TEST_CASE("sort keys order cells as CompareCells does") {
  const std::vector<Cell> cells = TrickyCells();
  for (size_t i = 0; i < cells.size(); ++i)
    for (size_t j = 0; j < cells.size(); ++j) {
      const int want = Sign(CompareCells(cells[i], cells[j]));
      CAPTURE(i);
      CAPTURE(j);
      CHECK(Sign(KeyOf(cells[i], false).compare(KeyOf(cells[j], false))) == want);
      CHECK(Sign(KeyOf(cells[i], true).compare(KeyOf(cells[j], true))) == -want);
    }
}

// Intent: rows round-trip through the codec, lists, records and wide integers included.
TEST_CASE("the row codec gives back the cells it was given") {
  std::vector<Cell> row = TrickyCells();
  std::string bytes;
  EncodeRow(row, &bytes);
  std::vector<Cell> back;
  REQUIRE(DecodeRow(bytes, &back).ok());
  REQUIRE(back.size() == row.size());
  for (size_t i = 0; i < row.size(); ++i) {
    CHECK(back[i].kind == row[i].kind);
    CHECK(CellJson(back[i]) == CellJson(row[i]));
    CHECK(std::memcmp(&back[i].number, &row[i].number, sizeof(double)) == 0);
  }
  CHECK(!DecodeRow(bytes.substr(0, bytes.size() - 1), &back).ok());
  CHECK(!DecodeRow(bytes + "x", &back).ok());
}

Cell RandomCell(std::mt19937_64& rng, int kind_pick) {
  static const std::vector<Cell> tricky = TrickyCells();
  switch (kind_pick) {
    case 0: return tricky[rng() % tricky.size()];
    case 1: return rng() % 9 == 0 ? Cell::Null() : Cell::Int(static_cast<int64_t>(rng() % 7) - 3);  // many ties
    case 2: {
      const double choices[] = {0.1, 0.2, 1.0 / 3, -2.5, 1e21, 123456.789};
      return rng() % 11 == 0 ? Cell::Float(NAN) : Cell::Float(choices[rng() % 6]);
    }
    case 3: {
      std::string s;
      for (size_t n = rng() % 6; n > 0; --n) s.push_back("ab,\"\n\xc3\xa9 "[rng() % 8]);
      return Cell::String(s);
    }
    default:
      return Cell::List({Cell::Record({"value", "count"}, {Cell::String(std::string(1, 'a' + rng() % 3)),
                                                           Cell::Int(static_cast<int64_t>(rng() % 4))})});
  }
}

OutputTable RandomTable(uint64_t seed, size_t rows) {
  std::mt19937_64 rng(seed);
  OutputTable t;
  t.columns = {"k1", "k2", "ints", "floats", "text", "top"};
  t.key_columns = 2;
  for (size_t r = 0; r < rows; ++r)
    t.rows.push_back({RandomCell(rng, 0), RandomCell(rng, 1), RandomCell(rng, 1), RandomCell(rng, 2),
                      RandomCell(rng, 3), RandomCell(rng, 4)});
  return t;
}

// The stream's bytes for t's rows handed over in their order.
std::string Streamed(const OutputTable& t, const std::vector<OrderSpec>& order, std::optional<uint64_t> limit,
                     uint64_t budget, size_t fan_in, OutputFormat format, const RenderOptions& options,
                     MemoryPlatform& fs, uint64_t* sort_files) {
  OrderedRows rows(SortColumnsFor(t.columns, t.key_columns, order), limit, budget, fs, "/run/merge", fan_in);
  for (const auto& row : t.rows) REQUIRE(rows.Add(row).ok());
  REQUIRE(rows.Finish().ok());
  *sort_files = rows.sort_files();
  TableWidths widths(t.columns, options);
  REQUIRE(rows.Replay([&](const std::vector<Cell>& row) {
                widths.Add(row);
                return Status::Ok();
              })
              .ok());
  std::string out;
  RowWriter w(format, t.columns, options, widths.widths(), [&](std::string_view b) {
    out.append(b);
    return Status::Ok();
  });
  REQUIRE(w.Begin().ok());
  REQUIRE(rows.Replay([&](const std::vector<Cell>& row) { return w.Row(row); }).ok());
  REQUIRE(w.End().ok());
  return out;
}

std::string Reference(OutputTable t, const std::vector<OrderSpec>& order, std::optional<uint64_t> limit,
                      OutputFormat format, const RenderOptions& options) {
  SortRows(&t, order);
  if (limit && t.rows.size() > *limit) t.rows.resize(*limit);
  return RenderTable(t, format, options);
}

}  // namespace

// Intent: for random tables (ties in every column, nulls, NaN, inf, text with
// quotes and newlines, top-k lists), every order, limit, budget (in memory,
// one row per file, cascaded merges of 3 files) and format gives
// SortRows + RenderTable's bytes, and no sort file is left behind.
TEST_CASE("ordered rows streamed through the writers equal SortRows + RenderTable") {
  const std::vector<std::vector<OrderSpec>> orders = {{},
                                                      {{"ints", true}},
                                                      {{"text", false}, {"floats", true}},
                                                      {{"k2", true}},
                                                      {{"top", false}},
                                                      {{"no_such_column", false}, {"floats", false}}};
  const std::vector<std::optional<uint64_t>> limits = {std::nullopt, 0, 1, 7, 150, 1000};
  struct Budget {
    uint64_t bytes;
    size_t fan_in;
  };
  const Budget budgets[] = {{uint64_t{1} << 30, RowSorter::kFanIn}, {1, RowSorter::kFanIn}, {2000, 3}};
  const OutputFormat formats[] = {OutputFormat::kCsv, OutputFormat::kJson, OutputFormat::kNdjson, OutputFormat::kTable};
  RenderOptions rounded;
  rounded.digits = 3;
  rounded.column_digits = {0, 0, 0, 5};
  for (uint64_t seed : {1u, 2u, 3u}) {
    const OutputTable t = RandomTable(seed, seed == 1 ? 0 : 300);
    for (const auto& order : orders)
      for (const auto& limit : limits)
        for (const Budget& b : budgets)
          for (OutputFormat f : formats)
            for (const RenderOptions& o : {RenderOptions{}, rounded}) {
              MemoryPlatform fs;
              uint64_t files = 0;
              const std::string got = Streamed(t, order, limit, b.bytes, b.fan_in, f, o, fs, &files);
              CAPTURE(seed);
              CAPTURE(order.size());
              CAPTURE(limit.value_or(999999));
              CAPTURE(b.bytes);
              CAPTURE(static_cast<int>(f));
              CHECK(got == Reference(t, order, limit, f, o));
              if (b.bytes == 1 && !t.rows.empty() && !(limit && *limit < 100)) CHECK(files > 0);
              CHECK(fs.Files().empty());  // every sort file removed
            }
  }
}

// Intent: a limit keeps only the first `limit` rows in memory (no files),
// even when later rows come first in the order.
TEST_CASE("a small limit orders in a heap without sort files") {
  const OutputTable t = RandomTable(9, 2000);
  MemoryPlatform fs;
  uint64_t files = 1;
  const std::string got =
      Streamed(t, {{"floats", true}}, 5, 1 << 20, RowSorter::kFanIn, OutputFormat::kCsv, {}, fs, &files);
  CHECK(files == 0);
  CHECK(got == Reference(t, {{"floats", true}}, 5, OutputFormat::kCsv, {}));
}

// Intent: a failing write of a sort file is an error naming it, and leaves no file.
TEST_CASE("a sort file that cannot be written fails the sort and is removed") {
  MemoryPlatform fs;
  {
    RowSorter sorter(fs, "/run/merge", 100);
    fs.FailNext(MemoryPlatform::Op::kWrite, "sort-", ENOSPC);
    Status s;
    for (int i = 0; i < 50 && s.ok(); ++i) {
      std::string key = "k" + std::to_string(1000 + i), row(40, 'x');
      s = sorter.Add(key, row);
    }
    if (s.ok()) s = sorter.Finish();
    CHECK(!s.ok());
    CHECK(s.message().find("sort-") != std::string::npos);
  }
  CHECK(fs.Files().empty());
}

// Intent: leftovers of a killed process are removed, other files in the folder are not.
TEST_CASE("stale sort files are removed, nothing else") {
  MemoryPlatform fs;
  REQUIRE(fs.CreateDirectories("/run/merge").ok());
  fs.PutFile("/run/merge/sort-77-0.rows", "FFROWS1\n");
  fs.PutFile("/run/merge/sort-77-12.rows", "FFROWS1\n");
  fs.PutFile("/run/merge/run-0-8.grp", "x");
  fs.PutFile("/run/merge/sort-notes.txt", "x");
  REQUIRE(RemoveStaleSortFiles(fs, "/run/merge").ok());
  CHECK(fs.Files() == std::vector<std::string>{"/run/merge/run-0-8.grp", "/run/merge/sort-notes.txt"});
  CHECK(RemoveStaleSortFiles(fs, "/no/such/dir").ok());
}
