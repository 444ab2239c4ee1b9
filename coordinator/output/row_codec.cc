#include "coordinator/output/row_codec.h"

#include "common/base/byte_io.h"

namespace fanfold {
namespace {

constexpr int kMaxDepth = 16;  // lists of records of scalars need 3

void EncodeCell(const Cell& c, ByteWriter& w) {
  w.U8(static_cast<uint8_t>(c.kind));
  switch (c.kind) {
    case Cell::Kind::kNull: break;
    case Cell::Kind::kBool: w.U8(c.boolean ? 1 : 0); break;
    case Cell::Kind::kInt: {
      const auto u = static_cast<unsigned __int128>(c.integer);
      w.U64(static_cast<uint64_t>(u));
      w.U64(static_cast<uint64_t>(u >> 64));
      break;
    }
    case Cell::Kind::kFloat: w.F64(c.number); break;
    case Cell::Kind::kString: w.Str(c.str); break;
    case Cell::Kind::kList:
      w.Varint(c.items.size());
      for (const Cell& item : c.items) EncodeCell(item, w);
      break;
    case Cell::Kind::kRecord:
      w.Varint(c.items.size());
      for (size_t i = 0; i < c.items.size(); ++i) {
        w.Str(i < c.names.size() ? c.names[i] : std::string());
        EncodeCell(c.items[i], w);
      }
      break;
  }
}

bool DecodeCell(ByteReader& r, int depth, Cell* c) {
  if (depth > kMaxDepth) return false;
  const uint8_t kind = r.U8();
  if (!r.ok() || kind > static_cast<uint8_t>(Cell::Kind::kRecord)) return false;
  // Reset in place: a row decoded into the same cells again keeps their buffers.
  c->kind = static_cast<Cell::Kind>(kind);
  c->boolean = false;
  c->integer = 0;
  c->number = 0;
  c->str.clear();
  if (!c->items.empty()) c->items.clear();
  if (!c->names.empty()) c->names.clear();
  switch (c->kind) {
    case Cell::Kind::kNull: break;
    case Cell::Kind::kBool: c->boolean = r.U8() != 0; break;
    case Cell::Kind::kInt: {
      const uint64_t lo = r.U64();
      const uint64_t hi = r.U64();
      c->integer = static_cast<__int128>((static_cast<unsigned __int128>(hi) << 64) | lo);
      break;
    }
    case Cell::Kind::kFloat: c->number = r.F64(); break;
    case Cell::Kind::kString: {
      const std::string_view v = r.Str();
      c->str.assign(v.data(), v.size());
      break;
    }
    case Cell::Kind::kList:
    case Cell::Kind::kRecord: {
      const uint64_t n = r.Count(1);
      c->items.resize(n);
      if (c->kind == Cell::Kind::kRecord) c->names.resize(n);
      for (uint64_t i = 0; i < n && r.ok(); ++i) {
        if (c->kind == Cell::Kind::kRecord) c->names[i] = std::string(r.Str());
        if (!DecodeCell(r, depth + 1, &c->items[i])) return false;
      }
      break;
    }
  }
  return r.ok();
}

}  // namespace

void EncodeRow(const std::vector<Cell>& row, std::string* out) {
  ByteWriter w(out);
  w.Varint(row.size());
  for (const Cell& c : row) EncodeCell(c, w);
}

Status DecodeRow(std::string_view bytes, std::vector<Cell>* row) {
  ByteReader r(bytes);
  const uint64_t n = r.Count(1);
  row->resize(n);
  for (uint64_t i = 0; i < n; ++i)
    if (!DecodeCell(r, 0, &(*row)[i]))
      return Status::Corrupt("a sorted result row is damaged (cell " + std::to_string(i) + ")");
  if (!r.ok() || !r.at_end()) return Status::Corrupt("a sorted result row is damaged");
  return Status::Ok();
}

}  // namespace fanfold
