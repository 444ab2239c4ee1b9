// Test helper: a fresh directory under /tmp (mkdtemp), removed with
// everything in it when the object dies, and files written into it.
#pragma once

#include <stdlib.h>

#include <filesystem>
#include <fstream>
#include <string>

namespace fanfold {
namespace {

class ScratchFiles {
 public:
  // prefix names the directory: /tmp/<prefix>-XXXXXX.
  explicit ScratchFiles(const std::string& prefix) {
    std::string tmpl = "/tmp/" + prefix + "-XXXXXX";
    path_ = ::mkdtemp(tmpl.data());
  }
  ~ScratchFiles() {
    std::error_code ec;
    std::filesystem::remove_all(path_, ec);
  }
  ScratchFiles(const ScratchFiles&) = delete;
  ScratchFiles& operator=(const ScratchFiles&) = delete;

  // Writes bytes to the file `name` in the directory; returns its path.
  std::string Write(const std::string& name, const std::string& bytes) const {
    const std::string p = path_ + "/" + name;
    std::ofstream(p, std::ios::binary) << bytes;
    return p;
  }
  const std::string& path() const { return path_; }

 private:
  std::string path_;
};

}  // namespace
}  // namespace fanfold
