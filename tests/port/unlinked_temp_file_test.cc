// UnlinkedTempFile: what is written comes back in order through Read and
// View (views longer than the buffer grow it), a clean end is false without
// an error, a truncated read is an error, and the directory never lists the
// file (POSIX: an unlinked or O_TMPFILE file has no directory entry).
#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <string>

#include "common/port/files/unlinked_temp_file.h"

using namespace fanfold;

TEST_CASE("unlinked temp file: round trip through a small buffer, nothing in the directory") {
  char tmpl[] = "/tmp/fanfold-unlinked-test-XXXXXX";
  const std::string dir = mkdtemp(tmpl);
  {
    Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("t", 64, dir);
    REQUIRE(f.ok());
    std::string all;
    for (int i = 0; i < 500; ++i) {
      const std::string piece = std::to_string(i) + std::string(static_cast<size_t>(i % 150), 'x') + ";";
      f->Write(piece);
      all += piece;
    }
    CHECK(f->bytes_written() == all.size());
    CHECK(std::filesystem::is_empty(dir));
    REQUIRE(f->Rewind().ok());
    Status error;
    std::string_view v;
    REQUIRE(f->View(10, &v, &error));
    CHECK(v == all.substr(0, 10));
    REQUIRE(f->View(300, &v, &error));  // longer than the 64-byte buffer
    CHECK(v == all.substr(10, 300));
    std::string rest(all.size() - 310, '\0');
    REQUIRE(f->Read(rest.data(), rest.size(), &error));
    CHECK(rest == all.substr(310));
    char c;
    CHECK_FALSE(f->Read(&c, 1, &error));  // a clean end
    CHECK(error.ok());
    REQUIRE(f->Rewind().ok());
    std::string too_long(all.size() + 1, '\0');
    CHECK_FALSE(f->Read(too_long.data(), too_long.size(), &error));  // ends early
    CHECK(error.code() == Status::Code::kIoError);
  }
  CHECK(std::filesystem::is_empty(dir));
  std::filesystem::remove_all(dir);
}

TEST_CASE("unlinked temp file: a directory that does not exist is an I/O error naming it") {
  Result<UnlinkedTempFile> f = UnlinkedTempFile::Create("t", 64, "/nonexistent-fanfold-dir");
  REQUIRE_FALSE(f.ok());
  CHECK(f.status().code() == Status::Code::kIoError);
  CHECK(f.status().message().find("/nonexistent-fanfold-dir") != std::string::npos);
}
