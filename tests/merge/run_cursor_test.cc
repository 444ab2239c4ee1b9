// RunCursor: a run cut into pieces (in memory or in mapped files) walks as
// the one encoding it stands for; keys must ascend across pieces too.
#include "coordinator/merge/run_cursor.h"

#include <doctest/doctest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>
#include <string>
#include <vector>

#include "common/partial/group_key.h"
#include "common/partial/group_table.h"

namespace fanfold {
namespace {

std::string KeyOf(double g) {
  std::string key;
  AppendKeyValue(Value::Number(g), &key);
  return key;
}

// A count and a sum per group, keys 0 .. n-1 (encoded in ascending order).
std::string Encoded(int n) {
  static std::vector<MeasureConfig> configs = [] {
    std::vector<MeasureConfig> c(2);
    c[0].kind = MeasureKind::kCount;
    c[1].kind = MeasureKind::kSum;
    return c;
  }();
  GroupTable t(&configs);
  for (int k = 0; k < n; ++k) {
    const Value v = Value::Number(k * 2.5);
    MeasureState* const* s = t.FindOrAdd(KeyOf(k));
    for (size_t m = 0; m < configs.size(); ++m) s[m]->Add(&v);
  }
  std::string out;
  ByteWriter w(&out);
  t.Encode(w);
  return out;
}

// The groups of an encoding cut into pieces of `per` groups (the last
// shorter): bodies without the count, as a fold writes them.
std::vector<std::pair<std::string, uint64_t>> Cut(const std::string& encoded, uint64_t per) {
  std::vector<std::pair<std::string, uint64_t>> pieces;
  EncodedGroupCursor c(encoded, 2);
  std::string body;
  uint64_t in = 0;
  while (c.Next()) {
    ByteWriter w(&body);
    w.Str(c.key());
    w.Str(c.state(0));
    w.Str(c.state(1));
    if (++in == per) {
      pieces.emplace_back(std::move(body), in);
      body.clear();
      in = 0;
    }
  }
  pieces.emplace_back(std::move(body), in);
  return pieces;
}

std::string Walk(RunCursor c) {
  std::string out;
  while (c.Next()) out += std::string(c.key()) + "|" + std::string(c.state(0)) + "|" + std::string(c.state(1)) + ";";
  REQUIRE(c.status().ok());
  return out;
}

// Intent: pieces of any size (empty ones too) walk as the whole encoding,
// and SeekAtLeast lands on the same group.
TEST_CASE("run cursor: pieces in memory walk as the one encoding") {
  const std::string whole = Encoded(1000);
  const std::string expected = Walk(RunCursor(whole, 2));
  for (uint64_t per : {1, 7, 333, 1000, 5000}) {
    CAPTURE(per);
    auto cut = Cut(whole, per);
    std::vector<RunPiece> pieces;
    for (auto& [body, groups] : cut) pieces.push_back({body, groups, nullptr});
    pieces.insert(pieces.begin() + 1, RunPiece{});  // an empty piece
    CHECK(Walk(RunCursor(pieces, 2)) == expected);
    RunCursor c(pieces, 2);
    CHECK(c.group_count() == 1000);
    REQUIRE(c.SeekAtLeast(KeyOf(500)));
    CHECK(c.key() == KeyOf(500));
    EncodedGroupCursor plain(whole, 2);  // keys ascend in byte order, not numeric order
    REQUIRE(plain.SeekAtLeast(KeyOf(500)));
    CHECK(c.groups_read() == plain.groups_read());
  }
}

// Intent: pieces whose keys do not ascend across the cut are refused.
TEST_CASE("run cursor: keys out of order across pieces are an error") {
  auto cut = Cut(Encoded(100), 50);
  std::vector<RunPiece> swapped = {{cut[1].first, cut[1].second, nullptr}, {cut[0].first, cut[0].second, nullptr}};
  RunCursor c(swapped, 2);
  while (c.Next()) {
  }
  CHECK(c.status().code() == Status::Code::kCorrupt);
  CHECK(c.status().message().find("piece 1") != std::string::npos);
  // A count larger than the piece can hold.
  RunCursor big(std::vector<RunPiece>{{cut[0].first, 1'000'000, nullptr}}, 2);
  CHECK_FALSE(big.Next());
  CHECK(big.status().code() == Status::Code::kCorrupt);
}

// Intent: pieces in mapped files (a spilled run) walk the same, pages
// released behind the walk included (several MiB, past kReleaseStep).
TEST_CASE("run cursor: pieces in mapped files walk as the one encoding") {
  const std::string whole = Encoded(300000);
  const std::string expected = Walk(RunCursor(whole, 2));
  const std::string dir = std::filesystem::temp_directory_path() / ("ff-run-cursor-" + std::to_string(getpid()));
  std::filesystem::create_directories(dir);
  auto cut = Cut(whole, 120000);
  std::vector<std::unique_ptr<MappedFile>> maps;
  std::vector<RunPiece> pieces;
  uint64_t bytes = 0;
  for (size_t i = 0; i < cut.size(); ++i) {
    const std::string path = dir + "/piece-" + std::to_string(i);
    std::ofstream(path, std::ios::binary) << cut[i].first;
    Result<std::unique_ptr<MappedFile>> m = MappedFile::Open(path);
    REQUIRE(m.ok());
    CHECK((*m)->bytes() == cut[i].first);
    bytes += cut[i].first.size();
    pieces.push_back({(*m)->bytes(), cut[i].second, m->get()});
    maps.push_back(std::move(*m));
  }
  REQUIRE(bytes > 2 * RunCursor::kReleaseStep);
  CHECK(Walk(RunCursor(pieces, 2)) == expected);
  CHECK(Walk(RunCursor(pieces, 2)) == expected);  // released pages read back the same
  maps.clear();
  std::filesystem::remove_all(dir);
  CHECK_FALSE(MappedFile::Open(dir + "/piece-0").ok());
}

}  // namespace
}  // namespace fanfold
