// ProcessControl: which program this process runs, and whether a file may be
// run — the questions the coordinator asks to find its worker program.
#include "common/port/process_control.h"

#include <doctest/doctest.h>
#include <stdlib.h>

#include <filesystem>
#include <fstream>

namespace fanfold {
namespace {

namespace fs = std::filesystem;

}  // namespace

// Intent: the program path is the one std::filesystem resolves from /proc/self/exe (proc(5)).
TEST_CASE("process control: the program's own path") {
  std::string self;
  REQUIRE(SelfExecutablePath(&self));
  CHECK(self == fs::read_symlink("/proc/self/exe").string());
  CHECK(IsExecutable(self));
}

// Intent: a file without execute permission is not executable, and becomes so once std::filesystem grants it.
TEST_CASE("process control: IsExecutable follows the permission bits") {
  std::string dir = (fs::temp_directory_path() / "fanfold-exec-XXXXXX").string();
  REQUIRE(::mkdtemp(dir.data()) != nullptr);
  const std::string file = dir + "/prog";
  { std::ofstream(file) << "#!/bin/sh\n"; }
  fs::permissions(file, fs::perms::owner_read | fs::perms::owner_write);
  CHECK_FALSE(IsExecutable(file));
  fs::permissions(file, fs::perms::owner_exec, fs::perm_options::add);
  CHECK(IsExecutable(file));
  CHECK_FALSE(IsExecutable(dir + "/missing"));
  fs::remove_all(dir);
}

}  // namespace fanfold
