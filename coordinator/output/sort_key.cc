#include "coordinator/output/sort_key.h"

#include <algorithm>
#include <bit>
#include <cmath>

#include "common/base/cell_text.h"
#include "common/base/value_compare.h"

namespace fanfold {
namespace {

void AppendBigEndian(uint64_t v, std::string* out) {
  char bytes[8];
  for (int i = 0; i < 8; ++i) bytes[i] = static_cast<char>(static_cast<uint8_t>(v >> (56 - 8 * i)));
  out->append(bytes, sizeof bytes);
}

// F as 8 bytes whose unsigned order is F's numeric order (-0 already +0).
void AppendOrderedDouble(double f, std::string* out) {
  uint64_t bits = std::bit_cast<uint64_t>(f);
  bits = (bits >> 63) != 0 ? ~bits : bits | (uint64_t{1} << 63);
  AppendBigEndian(bits, out);
}

// A number as 0x01, F (the largest double <= it) and the rest (value - F).
void AppendFiniteOrInfinite(double f, unsigned __int128 rest, std::string* out) {
  out->push_back(0x01);
  AppendOrderedDouble(f == 0 ? 0.0 : f, out);
  AppendBigEndian(static_cast<uint64_t>(rest >> 64), out);
  AppendBigEndian(static_cast<uint64_t>(rest), out);
}

void AppendInteger(__int128 v, std::string* out) {
  double f = static_cast<double>(v);  // nearest; step down when above v
  if (CompareWideToDouble(v, f) < 0) f = std::nextafter(f, -INFINITY);
  // f is integral (|v| < 2^53 gives f == v; beyond, every double is an
  // integer) and within [-2^127, 2^127), so the cast is exact.
  const __int128 rest = v - static_cast<__int128>(f);
  AppendFiniteOrInfinite(f, static_cast<unsigned __int128>(rest), out);
}

void AppendEscaped(const std::string& s, std::string* out) {
  // Copied in stretches between NULs (most texts have none).
  size_t at = 0;
  for (size_t nul; (nul = s.find('\0', at)) != std::string::npos; at = nul + 1) {
    out->append(s, at, nul + 1 - at);
    out->push_back(static_cast<char>(0xFF));
  }
  out->append(s, at, std::string::npos);
  out->append(2, '\0');
}

}  // namespace

std::vector<SortColumn> SortColumnsFor(const std::vector<std::string>& columns, size_t key_columns,
                                       const std::vector<OrderSpec>& order) {
  std::vector<SortColumn> out;
  for (const OrderSpec& o : order) {
    auto it = std::find(columns.begin(), columns.end(), o.by);
    if (it != columns.end()) out.push_back({static_cast<size_t>(it - columns.begin()), o.descending});
  }
  for (size_t c = 0; c < key_columns; ++c) out.push_back({c, false});
  return out;
}

void AppendCellSortKey(const Cell& c, bool descending, std::string* out) {
  const size_t start = out->size();
  switch (c.kind) {
    case Cell::Kind::kNull: out->push_back(0x00); break;
    case Cell::Kind::kBool:
      out->push_back(0x01);
      out->push_back(c.boolean ? 0x01 : 0x00);
      break;
    case Cell::Kind::kInt:
      out->push_back(0x02);
      AppendInteger(c.integer, out);
      break;
    case Cell::Kind::kFloat:
      out->push_back(0x02);
      if (std::isnan(c.number))
        out->push_back(0x02);
      else
        AppendFiniteOrInfinite(c.number, 0, out);
      break;
    case Cell::Kind::kString:
      out->push_back(0x03);
      AppendEscaped(c.str, out);
      break;
    case Cell::Kind::kList:
    case Cell::Kind::kRecord:
      out->push_back(0x04);
      AppendEscaped(CellJson(c), out);
      break;
  }
  if (descending)
    for (size_t i = start; i < out->size(); ++i) (*out)[i] = static_cast<char>(~static_cast<uint8_t>((*out)[i]));
}

void AppendSortKey(const std::vector<Cell>& row, const std::vector<SortColumn>& columns, uint64_t arrival,
                   std::string* out) {
  for (const SortColumn& s : columns) AppendCellSortKey(row[s.column], s.descending, out);
  AppendBigEndian(arrival, out);
}

}  // namespace fanfold
