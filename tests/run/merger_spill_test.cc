// Merger under a memory share: tables while their estimate fits, then runs,
// spilled to files past the share — the in-memory tables' bytes in every
// case; spill files gone once the merger is, the folder once it is.
#include <doctest/doctest.h>
#include <unistd.h>

#include <algorithm>
#include <filesystem>
#include <fstream>
#include <map>
#include <string>
#include <vector>

#include "common/job/job_spec.h"
#include "common/partial/group_key.h"
#include "common/port/memory_platform.h"
#include "coordinator/merge/spill_folder.h"
#include "coordinator/run/merger.h"
#include "tests/run/merger_test_util.h"

namespace fanfold {
namespace {

// Shard s: 1,500 groups, keys s*700 .. s*700+1499 (overlapping the next
// shard's by 800), values
// whose float sum depends on the merge order.
std::string BigPartial(const Plan& plan, uint32_t shard) {
  return MadePartial(
      plan, shard, 1500, [&](int g) { return static_cast<double>(shard * 700 + g); },
      [&](int g) { return Value::Number(shard % 2 == 0 ? 1e16 : 1.0 + shard * 0.1 + g); });
}

// A file that counts how many of its kind are open at once.
struct OpenCount {
  int now = 0;
  int most = 0;
  int opened = 0;
};
class CountedFile : public ReadableFile {
 public:
  CountedFile(std::unique_ptr<ReadableFile> f, OpenCount* c) : f_(std::move(f)), c_(c) {
    c_->most = std::max(c_->most, ++c_->now);
    ++c_->opened;
  }
  ~CountedFile() override { --c_->now; }
  OsError Size(uint64_t* size) override { return f_->Size(size); }
  OsError ReadAt(uint64_t offset, size_t n, char* buf) override { return f_->ReadAt(offset, n, buf); }

 private:
  std::unique_ptr<ReadableFile> f_;
  OpenCount* c_;
};

size_t FilesIn(const std::string& dir) {
  std::error_code ec;
  size_t n = 0;
  for (auto it = std::filesystem::directory_iterator(dir, ec); !ec && it != std::filesystem::directory_iterator(); ++it)
    ++n;
  return n;
}

// Intent: a small merge share moves the results to runs and then to spill
// files, at 1-3 key ranges and in any arrival order, with the bytes of the
// in-memory tables; a large one keeps the tables. The runs' files go with
// the merger, the folder (and a stale file a killed run left) with the
// SpillFolder.
TEST_CASE("merger: spilled runs give the in-memory tables' bytes and leave no file") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 10;
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) disk[s] = BigPartial(*plan, s);
  Merger tables(plan.get(), n);
  tables.SetRunThreshold(0, 1);
  for (uint32_t s = 0; s < n; ++s) REQUIRE(tables.Add(s, disk[s]).ok());
  const std::string expected = MergerText(tables);

  const std::string dir = std::filesystem::temp_directory_path() / ("ff-spill-test-" + std::to_string(getpid()));
  std::filesystem::create_directories(dir);
  { std::ofstream(dir + "/stale.grp") << "left by a killed run"; }
  for (uint64_t share : {uint64_t{64} << 10, uint64_t{1} << 30})
    for (size_t threads : {1, 2, 3}) {
      CAPTURE(share);
      CAPTURE(threads);
      Result<std::unique_ptr<SpillFolder>> folder = SpillFolder::Open(dir);
      REQUIRE(folder.ok());
      CHECK_FALSE(std::filesystem::exists(dir));  // the stale one is gone at the start
      {
        Merger m(plan.get(), n, /*waiting_budget=*/0);
        m.SetRunThreshold(Merger::kRunsByBudget, threads);
        m.SetMemory(MergeMemory{share, folder->get()});
        m.SetReloader([&](uint32_t s, std::string* out) {
          *out = disk[s];
          return Status::Ok();
        });
        for (uint32_t s : {1u, 0u, 2u, 5u, 3u, 4u, 9u, 6u, 7u, 8u}) REQUIRE(m.Add(s, disk[s]).ok());
        REQUIRE(m.complete());
        const bool small = share < (uint64_t{1} << 20);
        CHECK(m.in_runs() == small);
        CHECK(((*folder)->bytes_written() > 0) == small);
        if (small) {
          CHECK(m.runs()->spilled());
          CHECK(FilesIn(dir) == threads);  // one file per key range of the last fold
        }
        CHECK(MergerText(m) == expected);
      }
      CHECK(FilesIn(dir) == 0);  // the runs took their files with them
      folder->reset();
      CHECK_FALSE(std::filesystem::exists(dir));
    }
  { std::ofstream(dir + "/stale.grp") << "x"; }
  std::filesystem::remove_all(dir);
}

// Intent: with an opener (the run directory's packs), a batch reads its
// partials as streams from one pack file: the tables' bytes at 1-3 key
// ranges and under a share that spills; never more partials open at once
// than RunResults::kMaxBatchPartials, and batches do grow to that rule (the
// runs are not rewritten once per shard); a tiny share folds one at a time.
TEST_CASE("merger: batches streamed from a pack keep the bytes and the open-file rule") {
  const auto plan = CountSumSketchPlan();
  const uint32_t n = 200;
  std::string pack;
  std::vector<std::pair<uint64_t, uint64_t>> where(n);  // offset, length
  std::map<uint32_t, std::string> disk;
  for (uint32_t s = 0; s < n; ++s) {
    disk[s] = DisjointPartial(*plan, s, 40);
    where[s] = {pack.size() + 10, disk[s].size()};
    pack += "frame-hdr " + disk[s];
  }
  const std::string path =
      std::filesystem::temp_directory_path() / ("ff-spill-pack-" + std::to_string(getpid()) + ".pack");
  { std::ofstream(path, std::ios::binary) << pack; }
  Merger tables(plan.get(), n);
  tables.SetRunThreshold(0, 1);
  for (uint32_t s = 0; s < n; ++s) REQUIRE(tables.Add(s, disk[s]).ok());
  const std::string expected = MergerText(tables);

  const std::string dir = std::filesystem::temp_directory_path() / ("ff-spill-stream-" + std::to_string(getpid()));
  for (uint64_t share : {uint64_t{64} << 10, uint64_t{1} << 30})
    for (size_t threads : {1, 3}) {
      CAPTURE(share);
      CAPTURE(threads);
      Result<std::unique_ptr<SpillFolder>> folder = SpillFolder::Open(dir);
      REQUIRE(folder.ok());
      OpenCount count;
      Merger m(plan.get(), n, /*waiting_budget=*/0);
      m.SetRunThreshold(1, threads);
      m.SetMemory(MergeMemory{share, folder->get()});
      m.SetReloader([&](uint32_t s, std::string* out) {
        *out = disk[s];
        return Status::Ok();
      });
      m.SetOpener([&](uint32_t s) -> Result<std::unique_ptr<StoredPartialBytes>> {
        std::unique_ptr<ReadableFile> f;
        if (OsError e = Platform::Posix().OpenForRead(path, &f); !e.ok()) return e.ToStatus("open", path);
        return StoredPartialBytes::InFile(std::make_unique<CountedFile>(std::move(f), &count), path, where[s].first,
                                          where[s].second);
      });
      for (uint32_t s = 0; s < n; ++s) REQUIRE(m.Add(s == 0 ? 1 : s == 1 ? 0 : s, disk[s == 0 ? 1 : s == 1 ? 0 : s]).ok());
      REQUIRE(m.complete());
      REQUIRE(m.in_runs());
      CHECK(m.late_failures().empty());
      CHECK(MergerText(m) == expected);
      CHECK(count.now == 0);
      CHECK(count.most <= static_cast<int>(RunResults::kMaxBatchPartials));
      if (share > (uint64_t{1} << 20)) {
        CHECK(count.most > static_cast<int>(RunResults::kMaxBatchPartials) / 2);
        CHECK(m.runs()->folds() < 12);
      } else {
        CHECK(count.most == 1);
        CHECK(m.runs()->spilled());
      }
    }
  std::filesystem::remove(path);
  std::filesystem::remove_all(dir);
}

// Intent: the estimate that decides between tables and runs grows with
// groups and measures (it is what the share is compared with).
TEST_CASE("merger: the tables' estimated bytes follow groups and measures") {
  const auto plan = CountSumSketchPlan();
  Merger m(plan.get(), 2);
  m.SetRunThreshold(0, 1);
  CHECK(m.EstimatedTableBytes() == 0);
  REQUIRE(m.Add(0, BigPartial(*plan, 0)).ok());
  CHECK(m.EstimatedTableBytes() == 1500 * (Merger::kTableBytesPerGroup + 3 * Merger::kTableBytesPerState));
  REQUIRE(m.Add(1, BigPartial(*plan, 1)).ok());
  CHECK(m.EstimatedTableBytes() == 2200 * (Merger::kTableBytesPerGroup + 3 * Merger::kTableBytesPerState));
}

// Intent: a spill file that cannot be written (the disk is full) fails the
// merge with a message naming the file, and Finish reports it instead of a
// result; no crash, no partial result.
TEST_CASE("merger: a spill file that cannot be written is an error, not a crash") {
  const auto plan = CountSumSketchPlan();
  MemoryPlatform disk;
  disk.SetSpaceLeft(1000);
  Result<std::unique_ptr<SpillFolder>> folder = SpillFolder::Open("/run/merge", disk);
  REQUIRE(folder.ok());
  Merger m(plan.get(), 4);
  m.SetMemory(MergeMemory{uint64_t{64} << 10, folder->get()});
  for (uint32_t s = 0; s < 4; ++s) REQUIRE(m.Add(s, BigPartial(*plan, s)).ok());
  REQUIRE(m.complete());
  Result<OutputTable> t = m.Finish(0);
  REQUIRE_FALSE(t.ok());
  CHECK(t.status().message().find("/run/merge/run-0-") != std::string::npos);
  CHECK(t.status().message().find("space") != std::string::npos);
}

}  // namespace
}  // namespace fanfold
