// LoadLookupTable and LookupTable: tables read from CSV (RFC 4180), TSV and
// NDJSON (RFC 8259), plain or compressed (zstd, RFC 8878; gzip, RFC 1952);
// keys matched by the expression language's == (docs/expressions.md); exact
// tables only: duplicate keys, bad rows, rows without a key and tables past
// their limits are errors naming the file and line.
#include "common/lookup/table_loader.h"

#include <doctest/doctest.h>
#include <stdlib.h>
#include <xxhash.h>
#include <zlib.h>
#include <zstd.h>

#include <cstring>
#include <filesystem>
#include <fstream>
#include <string>

#include "common/base/value_compare.h"

#include "tests/port/scratch_dir_test_util.h"

namespace fanfold {
namespace {

struct TableDir : ScratchFiles {
  TableDir() : ScratchFiles("fanfold-table") {}
  // A gzip file made by zlib's own writer.
  std::string WriteGzip(const std::string& name, const std::string& bytes) const {
    const std::string p = path() + "/" + name;
    gzFile f = gzopen(p.c_str(), "wb");
    gzwrite(f, bytes.data(), static_cast<unsigned>(bytes.size()));
    gzclose(f);
    return p;
  }
  std::string WriteZstd(const std::string& name, const std::string& bytes) const {
    std::string z(ZSTD_compressBound(bytes.size()), '\0');
    z.resize(ZSTD_compress(z.data(), z.size(), bytes.data(), bytes.size(), 3));
    return Write(name, z);
  }
};

TableSource Source(const std::string& path, RecordFormat format, const std::string& key,
                   std::vector<std::pair<std::string, std::string>> fields) {
  TableSource s;
  s.job_path = "job.json";
  s.pointer = "/tables/0";
  s.name = "lamps";
  s.path = path;
  s.format = format;
  s.compression = CompressionFromName(path);
  s.key = TableExpr{key, "/tables/0/key"};
  for (size_t i = 0; i < fields.size(); ++i) {
    s.field_names.push_back(fields[i].first);
    s.field_exprs.push_back(TableExpr{fields[i].second, "/tables/0/fields/" + std::to_string(i)});
  }
  return s;
}

std::string Text(const Value* row, size_t f) { return row == nullptr ? "(none)" : std::string(row[f].str); }

constexpr const char* kLampsCsv =
    "lamp_id,model,installed\n"
    "1,Aster,2011\n"
    "2,\"Birch, tall\",2015\n"   // RFC 4180 section 2.6: a quoted comma is data
    "17,Cedar,2019\n";

// Intent: a CSV table answers by key; the key column's text "17" is the number
// 17 under ==, so an integer, a double and numeric text all find the row.
TEST_CASE("lookup: a CSV table found by numeric keys of any spelling") {
  TableDir dir;
  auto t = LoadLookupTable(Source(dir.Write("lamps.csv", kLampsCsv), RecordFormat::kCsv, "{lamp_id}",
                                  {{"model", "{model}"}, {"since", "num({installed})"}}));
  REQUIRE(t.ok());
  const LookupTable& table = **t;
  CHECK(table.row_count() == 3);
  CHECK(table.field_count() == 2);
  std::string key;
  CHECK(Text(table.Find(Value::Int(17), &key), 0) == "Cedar");
  CHECK(Text(table.Find(Value::Number(17.0), &key), 0) == "Cedar");
  CHECK(Text(table.Find(Value::String("17"), &key), 0) == "Cedar");
  CHECK(Text(table.Find(Value::Int(2), &key), 0) == "Birch, tall");
  const Value* row = table.Find(Value::Int(1), &key);
  REQUIRE(row != nullptr);
  CHECK(row[1].kind == ValueKind::kNumber);
  CHECK(row[1].number == 2011);
  CHECK(table.Find(Value::Int(3), &key) == nullptr);
  CHECK(table.Find(Value::Missing(), &key) == nullptr);
  CHECK(table.Find(Value::Null(), &key) == nullptr);
  CHECK(table.Find(Value::String("Aster"), &key) == nullptr);
}

// Intent: LookupTable::MakeKey agrees with the language's == (CompareValues,
// the rule docs/expressions.md states) on every pair of a sample of values.
TEST_CASE("lookup: equal keys iff == holds") {
  const Value sample[] = {Value::Int(7),         Value::Number(7.0),  Value::String("7"),   Value::String("7.0"),
                          Value::String("007"),  Value::Int(8),       Value::String("a"),   Value::String("A"),
                          Value::Bool(true),     Value::Bool(false),  Value::Uint(UINT64_MAX),
                          Value::Number(18446744073709551615.0),      Value::String("18446744073709551614"),
                          Value::Number(-0.0),   Value::Int(0),       Value::String("")};
  for (const Value& a : sample) {
    for (const Value& b : sample) {
      std::string ka, kb;
      const bool both = LookupTable::MakeKey(a, &ka) && LookupTable::MakeKey(b, &kb);
      INFO("a=" << a.str << "/" << a.number << " b=" << b.str << "/" << b.number);
      if (both) CHECK((ka == kb) == CompareValues(CompareOp::kEq, a, b));
    }
  }
  std::string k;
  CHECK_FALSE(LookupTable::MakeKey(Value::Number(std::nan("")), &k));
  CHECK_FALSE(LookupTable::MakeKey(Value::Missing(), &k));
}

// Intent: TSV and NDJSON tables; NDJSON keys keep 64-bit integers exact
// (2^64-1 and 2^64-2 are two rows, though one double), and a field may be
// any expression over the row, here a nested member (RFC 6901 pointer).
TEST_CASE("lookup: TSV and NDJSON tables") {
  TableDir dir;
  auto tsv = LoadLookupTable(Source(dir.Write("d.tsv", "code\tname\nN\tNorth\nS\tSouth quay\n"), RecordFormat::kTsv,
                                    "lower({code})", {{"district", "{name}"}}));
  REQUIRE(tsv.ok());
  std::string key;
  CHECK(Text((*tsv)->Find(Value::String("s"), &key), 0) == "South quay");
  CHECK((*tsv)->Find(Value::String("S"), &key) == nullptr);

  auto nd = LoadLookupTable(Source(dir.Write("m.ndjson",
                                             "{\"id\": 18446744073709551615, \"spec\": {\"watts\": 40}}\n"
                                             "\n"
                                             "{\"id\": 18446744073709551614, \"spec\": {\"watts\": 60}}\n"),
                                   RecordFormat::kNdjson, "{/id}", {{"watts", "{/spec/watts}"}}));
  REQUIRE(nd.ok());
  CHECK((*nd)->row_count() == 2);
  const Value* a = (*nd)->Find(Value::Uint(UINT64_MAX), &key);
  const Value* b = (*nd)->Find(Value::Uint(UINT64_MAX - 1), &key);
  REQUIRE(a != nullptr);
  REQUIRE(b != nullptr);
  CHECK(a[0].number == 40);
  CHECK(b[0].number == 60);
}

// Intent: a .zst and a .gz table read as the plain one; the content hash is
// XXH3-64 of the decompressed bytes (xxHash's one-shot function), the size
// that of the file as stored.
TEST_CASE("lookup: compressed tables and their identity") {
  TableDir dir;
  const auto fields = std::vector<std::pair<std::string, std::string>>{{"model", "{model}"}};
  auto plain = LoadLookupTable(Source(dir.Write("a.csv", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields));
  auto zst = LoadLookupTable(Source(dir.WriteZstd("b.csv.zst", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields));
  auto gz = LoadLookupTable(Source(dir.WriteGzip("c.csv.gz", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields));
  REQUIRE(plain.ok());
  REQUIRE(zst.ok());
  REQUIRE(gz.ok());
  const uint64_t hash = XXH3_64bits(kLampsCsv, std::strlen(kLampsCsv));
  for (const LookupTable* t : {plain->get(), zst->get(), gz->get()}) {
    std::string key;
    CHECK(Text(t->Find(Value::Int(2), &key), 0) == "Birch, tall");
    CHECK(t->identity().content_hash == hash);
    CHECK(t->identity().bytes == std::strlen(kLampsCsv));
    CHECK(t->identity().size == std::filesystem::file_size(t->identity().path));
  }
  CHECK((*plain)->identity().size == std::strlen(kLampsCsv));
  CHECK((*zst)->identity().size != (*plain)->identity().size);
}

// Intent: a key seen twice is an error naming both lines; "7" and 7.0 are
// one key (== holds), so they clash too.
TEST_CASE("lookup: duplicate keys name both lines") {
  TableDir dir;
  auto csv = LoadLookupTable(Source(dir.Write("d.csv", "lamp_id,model\n1,A\n\n2,B\n1,C\n"), RecordFormat::kCsv,
                                    "{lamp_id}", {{"model", "{model}"}}));
  REQUIRE_FALSE(csv.ok());
  CHECK(csv.status().message().find("d.csv' line 5: key \"1\" again (first on line 2)") != std::string::npos);
  auto nd = LoadLookupTable(Source(dir.Write("d.ndjson", "{\"id\": \"7\"}\n{\"id\": 8}\n{\"id\": 7.0}\n"),
                                   RecordFormat::kNdjson, "{/id}", {{"id", "{/id}"}}));
  REQUIRE_FALSE(nd.ok());
  CHECK(nd.status().message().find("line 3: key 7 again (first on line 1)") != std::string::npos);
}

// Intent: nothing in a table is skipped: a malformed row, a row without a
// key and a column the header lacks are errors naming the file and line.
TEST_CASE("lookup: bad rows are errors with their line") {
  TableDir dir;
  const auto fields = std::vector<std::pair<std::string, std::string>>{{"model", "{model}"}};
  auto short_row = LoadLookupTable(
      Source(dir.Write("s.csv", "lamp_id,model\n1,A\n2\n"), RecordFormat::kCsv, "{lamp_id}", fields));
  REQUIRE_FALSE(short_row.ok());
  CHECK(short_row.status().message().find("s.csv' line 3: expected 2 fields, found 1") != std::string::npos);
  auto no_key = LoadLookupTable(
      Source(dir.Write("k.csv", "lamp_id,model\n1,A\n,B\n"), RecordFormat::kCsv, "{lamp_id}", fields));
  REQUIRE_FALSE(no_key.ok());
  CHECK(no_key.status().message().find("k.csv' line 3: its key {lamp_id} has no value") != std::string::npos);
  auto bad_json = LoadLookupTable(Source(dir.Write("j.ndjson", "{\"id\": 1}\n{\"id\": 2,}\n"), RecordFormat::kNdjson,
                                         "{/id}", {{"id", "{/id}"}}));
  REQUIRE_FALSE(bad_json.ok());
  CHECK(bad_json.status().message().find("j.ndjson' line 2, column") != std::string::npos);
  auto null_key = LoadLookupTable(Source(dir.Write("n.ndjson", "{\"id\": null}\n"), RecordFormat::kNdjson, "{/id}",
                                         {{"id", "{/id}"}}));
  REQUIRE_FALSE(null_key.ok());
  CHECK(null_key.status().message().find("line 1: its key {/id} is null") != std::string::npos);
  auto no_column = LoadLookupTable(
      Source(dir.Write("c.csv", "lamp_id,model\n1,A\n"), RecordFormat::kCsv, "{lamp_id}", {{"year", "{year}"}}));
  REQUIRE_FALSE(no_column.ok());
  CHECK(no_column.status().message().find("year") != std::string::npos);
  auto missing = LoadLookupTable(Source(dir.Write("x/../gone.csv", ""), RecordFormat::kCsv, "{lamp_id}", fields));
  CHECK_FALSE(missing.ok());
}

// Intent: the documented limits hold: past max_bytes (plain: by its size
// before reading; compressed: while decompressing) or max_rows is an error.
TEST_CASE("lookup: tables past their limits") {
  TableDir dir;
  const auto fields = std::vector<std::pair<std::string, std::string>>{{"model", "{model}"}};
  TableLimits small;
  small.max_bytes = 20;
  auto plain = LoadLookupTable(Source(dir.Write("a.csv", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields), small);
  REQUIRE_FALSE(plain.ok());
  CHECK(plain.status().message().find("within the limit of 20 bytes") != std::string::npos);
  auto zst = LoadLookupTable(Source(dir.WriteZstd("a.csv.zst", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields),
                             small);
  REQUIRE_FALSE(zst.ok());
  CHECK(zst.status().message().find("within the limit of 20 bytes") != std::string::npos);
  TableLimits rows;
  rows.max_rows = 2;
  auto many = LoadLookupTable(Source(dir.Write("b.csv", kLampsCsv), RecordFormat::kCsv, "{lamp_id}", fields), rows);
  REQUIRE_FALSE(many.ok());
  CHECK(many.status().message().find("line 4: more than 2 rows") != std::string::npos);
  CHECK(TableLimits{}.max_bytes == uint64_t{64} << 20);  // docs/job-file.md states these two
  CHECK(TableLimits{}.max_rows == 1'000'000);
}

// Intent: expression errors name the job file and the pointer of the key or field.
TEST_CASE("lookup: expression errors name the job pointer") {
  TableDir dir;
  auto t = LoadLookupTable(Source(dir.Write("a.csv", kLampsCsv), RecordFormat::kCsv, "{lamp_id}",
                                  {{"model", "lower({model}"}}));
  REQUIRE_FALSE(t.ok());
  CHECK(t.status().message().rfind("job.json: /tables/0/fields/0: column", 0) == 0);
  auto nd = LoadLookupTable(Source(dir.Write("a.ndjson", "{}\n"), RecordFormat::kNdjson, "{id}", {{"id", "{/id}"}}));
  REQUIRE_FALSE(nd.ok());
  CHECK(nd.status().message().rfind("job.json: /tables/0/key: field {id}", 0) == 0);
}

}  // namespace
}  // namespace fanfold
