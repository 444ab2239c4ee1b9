// ExpandShards: globs, explicit names, symlinks and duplicates.
#include "common/job/shard_list.h"
#include "common/port/files/directory_listing.h"

#include <doctest/doctest.h>
#include <unistd.h>

#include <filesystem>
#include <fstream>

namespace fanfold {
namespace {

namespace fs = std::filesystem;

// A scratch directory removed at the end of the test.
struct ScratchDir {
  fs::path path;
  ScratchDir() {
    char tmpl[] = "/tmp/fanfold-shard-list-XXXXXX";
    path = mkdtemp(tmpl);
  }
  ~ScratchDir() {
    std::error_code ec;
    fs::remove_all(path, ec);
  }
};

void Touch(const fs::path& p, const std::string& text = "{}\n") { std::ofstream(p) << text; }

// Intent: one file reached through a glob, by name, through a symlinked
// file and through a symlinked directory is one shard, named by its real
// path; hidden files need an explicit pattern; shards are sorted by path.
TEST_CASE("shard_list: symlinks and repeats give one shard per real file") {
  ScratchDir d;
  fs::create_directory(d.path / "logs");
  Touch(d.path / "logs" / "b.ndjson");
  Touch(d.path / "logs" / "a.ndjson");
  Touch(d.path / "logs" / ".hidden.ndjson");
  fs::create_symlink(d.path / "logs" / "a.ndjson", d.path / "logs" / "z-link.ndjson");
  fs::create_directory_symlink(d.path / "logs", d.path / "mirror");
  JobSpec job;
  job.job_path = (d.path / "job.json").string();
  job.base_dir = d.path.string();
  job.files = {"logs/*.ndjson", "logs/a.ndjson", "mirror/b.ndjson", (d.path / "mirror" / "*.ndjson").string()};
  Result<ShardList> list = ExpandShards(job);
  REQUIRE(list.ok());
  const fs::path real = fs::canonical(d.path / "logs");
  REQUIRE(list->shards.size() == 2);
  CHECK(list->shards[0].path == (real / "a.ndjson").string());
  CHECK(list->shards[1].path == (real / "b.ndjson").string());
  CHECK(list->shards[1].index == 1);
  CHECK(list->format == RecordFormat::kNdjson);
  CHECK(list->shards[0].file_size == 3);
}

// Intent: shards are in path order, component by component (as
// std::filesystem::path compares): "2026/a" before "2026-b", although '-'
// sorts before '/' as a byte.
TEST_CASE("shard_list: path order is by component") {
  ScratchDir d;
  fs::create_directory(d.path / "2026");
  Touch(d.path / "2026" / "a.ndjson");
  Touch(d.path / "2026-b.ndjson");
  JobSpec job;
  job.job_path = "job.json";
  job.base_dir = d.path.string();
  job.files = {"2026-b.ndjson", "2026/a.ndjson"};
  Result<ShardList> list = ExpandShards(job);
  REQUIRE(list.ok());
  REQUIRE(list->shards.size() == 2);
  CHECK(fs::path(list->shards[0].path).filename() == "a.ndjson");
  CHECK(fs::path(list->shards[0].path) < fs::path(list->shards[1].path));
}

// Intent: a pattern that matches nothing and a named file that is missing
// are errors that name the job file's JSON location and the path.
TEST_CASE("shard_list: nothing matched is an error naming where") {
  ScratchDir d;
  JobSpec job;
  job.job_path = "job.json";
  job.base_dir = d.path.string();
  job.files = {"none/*.ndjson"};
  Result<ShardList> list = ExpandShards(job);
  REQUIRE(!list.ok());
  CHECK(list.status().message().find("job.json: /inputs/files/0: pattern 'none/*.ndjson'") == 0);
  job.files = {"absent.ndjson"};
  list = ExpandShards(job);
  REQUIRE(!list.ok());
  CHECK(list.status().message().find("does not exist") != std::string::npos);
}

}  // namespace
}  // namespace fanfold

namespace fanfold {

// Intent: "**" matches any number of directories, zero included, but not
// hidden ones; a relative base directory works; a directory that matches a
// file pattern is no shard. The reference: Python 3.11's
// glob.glob("y/**/*.ndjson", recursive=True) over this tree, kept to regular
// files (os.path.isfile), gives the same three (run by hand).
TEST_CASE("shard_list: ** descends through directories, not hidden ones") {
  ScratchDir d;
  fs::create_directories(d.path / "y" / "2026" / "03");
  fs::create_directories(d.path / "y" / ".cache");
  fs::create_directories(d.path / "y" / "dir.ndjson");
  Touch(d.path / "y" / "top.ndjson");
  Touch(d.path / "y" / "2026" / "mid.ndjson");
  Touch(d.path / "y" / "2026" / "03" / "deep.ndjson");
  Touch(d.path / "y" / ".cache" / "skip.ndjson");
  JobSpec job;
  job.job_path = (d.path / "job.json").string();
  job.base_dir = d.path.string();
  job.files = {"y/**/*.ndjson"};
  Result<ShardList> list = ExpandShards(job);
  REQUIRE(list.ok());
  const fs::path real = fs::canonical(d.path / "y");
  std::vector<std::string> got;
  for (const Shard& s : list->shards) got.push_back(s.path);
  CHECK(got == std::vector<std::string>{(real / "2026" / "03" / "deep.ndjson").string(),
                                        (real / "2026" / "mid.ndjson").string(), (real / "top.ndjson").string()});
  std::vector<DirectoryEntry> entries;
  REQUIRE(ListDirectoryEntries((d.path / "y").string(), &entries).ok());
  CHECK(entries.size() == 4);  // top.ndjson, 2026, .cache, dir.ndjson: no "." or ".."
  CHECK_FALSE(ListDirectoryEntries((d.path / "nope").string(), &entries).ok());
}

}  // namespace fanfold
