// Spill files: atomic write, read-and-remove, size and name checks.
#include "common/transport/spill_file.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <fstream>

namespace fanfold {
namespace {

struct TempDir {
  std::string path;
  TempDir() {
    path = (std::filesystem::temp_directory_path() / "fanfold-spilltest-XXXXXX").string();
    REQUIRE(::mkdtemp(path.data()) != nullptr);
  }
  ~TempDir() { std::filesystem::remove_all(path); }
};

// Intent: what is written comes back byte for byte, and the file (and no temp file) remains.
TEST_CASE("spill file round trip leaves nothing behind") {
  TempDir dir;
  std::string bytes(300000, '\0');
  for (size_t i = 0; i < bytes.size(); ++i) bytes[i] = static_cast<char>(i * 13);
  const std::string name = SpillFileName("fanfold-1-00", 2, 7);
  CHECK(name == "fanfold-1-00-w2-7.partial");
  REQUIRE(WriteSpillFile(dir.path, name, bytes).ok());
  std::string got;
  REQUIRE(TakeSpillFile(dir.path, name, bytes.size(), &got).ok());
  CHECK(got == bytes);
  CHECK(std::filesystem::is_empty(dir.path));
}

// Intent: a file whose size differs from the reported length is refused (and still removed).
TEST_CASE("TakeSpillFile rejects a size mismatch") {
  TempDir dir;
  REQUIRE(WriteSpillFile(dir.path, "x.partial", "12345").ok());
  std::string got;
  Status st = TakeSpillFile(dir.path, "x.partial", 6, &got);
  CHECK(st.code() == Status::Code::kCorrupt);
  CHECK(std::filesystem::is_empty(dir.path));
}

// Intent: names that could leave the directory are refused on both sides.
TEST_CASE("spill file names must be plain") {
  CHECK(IsPlainFileName("a.partial"));
  CHECK_FALSE(IsPlainFileName(""));
  CHECK_FALSE(IsPlainFileName(".."));
  CHECK_FALSE(IsPlainFileName("../etc/passwd"));
  CHECK_FALSE(IsPlainFileName(std::string("a\0b", 3)));
  std::string got;
  CHECK_FALSE(TakeSpillFile("/tmp", "../tmp/x", 1, &got).ok());
  CHECK_FALSE(WriteSpillFile("/tmp", "a/b", "x").ok());
}

// Intent: a missing directory is an I/O error naming the path.
TEST_CASE("WriteSpillFile reports an unwritable directory") {
  Status st = WriteSpillFile("/nonexistent-dir", "a.partial", "x");
  CHECK(st.code() == Status::Code::kIoError);
  CHECK(st.message().find("/nonexistent-dir/a.partial.tmp") != std::string::npos);
}

}  // namespace
}  // namespace fanfold
