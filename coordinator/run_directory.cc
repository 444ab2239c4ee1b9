#include "coordinator/run_directory.h"

#include <fcntl.h>
#include <sys/file.h>
#include <unistd.h>

#include <cerrno>
#include <cstdio>
#include <filesystem>

#include "common/file_util.h"
#include "common/os_error.h"

namespace fs = std::filesystem;

namespace fanfold {
namespace {

constexpr size_t kCommitBatch = 64;
constexpr auto kCommitDelay = std::chrono::milliseconds(200);

Status Io(const std::string& what, const std::string& path, int err) {
  return Status::IoError("cannot " + what + " '" + path + "': " + ErrnoText(err));
}

Status WriteAll(int fd, std::string_view data, const std::string& path) {
  size_t done = 0;
  while (done < data.size()) {
    ssize_t n = ::write(fd, data.data() + done, data.size() - done);
    if (n < 0) {
      if (errno == EINTR) continue;
      return Io("write", path, errno);
    }
    done += static_cast<size_t>(n);
  }
  return Status::Ok();
}

Status SyncDir(const std::string& dir) {
  int fd = ::open(dir.c_str(), O_RDONLY | O_DIRECTORY | O_CLOEXEC);
  if (fd < 0) return Io("open", dir, errno);
  int rc = ::fsync(fd);
  int err = errno;
  ::close(fd);
  if (rc != 0 && err != EINVAL) return Io("fsync", dir, err);
  return Status::Ok();
}

}  // namespace

RunDirectory::RunDirectory(std::string path, int lock_fd) : path_(std::move(path)), lock_fd_(lock_fd) {}

RunDirectory::~RunDirectory() {
  for (const Staged& s : staged_) ::unlink(s.temp.c_str());
  if (lock_fd_ >= 0) ::close(lock_fd_);  // releases the flock
}

RunDirectory::State RunDirectory::Probe(const std::string& path) {
  std::error_code ec;
  if (!fs::exists(fs::path(path) / "run.json", ec)) return State::kEmpty;
  return fs::exists(fs::path(path) / "summary.json", ec) ? State::kFinished : State::kUnfinished;
}

Result<int> RunDirectory::Lock(const std::string& path) {
  const std::string lock = (fs::path(path) / "lock").string();
  int fd = ::open(lock.c_str(), O_RDWR | O_CREAT | O_CLOEXEC, 0644);
  if (fd < 0) return Io("create", lock, errno);
  if (::flock(fd, LOCK_EX | LOCK_NB) != 0) {
    ::close(fd);
    return Status::IoError("run directory '" + path + "' is in use by another fanfold process");
  }
  return fd;
}

Result<std::unique_ptr<RunDirectory>> RunDirectory::Create(const std::string& path, const RunManifest& manifest,
                                                           bool fresh) {
  std::error_code ec;
  fs::create_directories(path, ec);
  if (ec) return Status::IoError("cannot create run directory '" + path + "': " + ec.message());
  Result<int> lock = Lock(path);
  if (!lock.ok()) return lock.status();
  std::unique_ptr<RunDirectory> dir(new RunDirectory(path, *lock));
  if (Probe(path) != State::kEmpty) {
    if (!fresh) return Status::Internal("run directory is not empty");
    // Summary first: a crash half-way through leaves an unfinished run, never a finished-looking one.
    for (const char* name : {"summary.json", "run.json", "journal.ndjson"}) fs::remove(fs::path(path) / name, ec);
    fs::remove_all(fs::path(path) / "partials", ec);
    for (const auto& e : fs::directory_iterator(path, ec))
      if (e.path().filename().string().rfind("result.", 0) == 0) fs::remove(e.path(), ec);
  }
  fs::create_directories(fs::path(path) / "partials", ec);
  if (ec) return Status::IoError("cannot create '" + (fs::path(path) / "partials").string() + "': " + ec.message());
  FF_RETURN_IF_ERROR(WriteFileAtomic((fs::path(path) / "run.json").string(), EncodeManifest(manifest)));
  return dir;
}

Result<std::unique_ptr<RunDirectory>> RunDirectory::Open(const std::string& path, RunManifest* manifest) {
  const std::string run_json = (fs::path(path) / "run.json").string();
  std::string text;
  Status s = ReadWholeFile(run_json, &text);
  if (!s.ok()) return Status::InvalidArgument("'" + path + "' is not a fanfold run directory (" + s.message() + ")");
  Result<RunManifest> m = DecodeManifest(text, run_json);
  if (!m.ok()) return m.status();
  Result<int> lock = Lock(path);
  if (!lock.ok()) return lock.status();
  *manifest = std::move(m.value());
  std::error_code ec;
  fs::create_directories(fs::path(path) / "partials", ec);
  return std::unique_ptr<RunDirectory>(new RunDirectory(path, *lock));
}

std::string RunDirectory::PartialPath(uint32_t shard) const {
  char name[32];
  snprintf(name, sizeof name, "shard-%06u.ffp", shard);
  return (fs::path(path_) / "partials" / name).string();
}

Status RunDirectory::StagePartial(uint32_t shard, std::string_view bytes) {
  const std::string temp = PartialPath(shard) + ".tmp";
  int fd = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
  if (fd < 0) return Io("create", temp, errno);
  Status s = WriteAll(fd, bytes, temp);
  if (s.ok() && ::fdatasync(fd) != 0) s = Io("fsync", temp, errno);
  ::close(fd);
  if (!s.ok()) {
    ::unlink(temp.c_str());
    return s;
  }
  if (staged_.empty() && journal_lines_.empty()) first_staged_ = std::chrono::steady_clock::now();
  staged_.push_back({shard, temp});
  return Status::Ok();
}

void RunDirectory::StageJournal(std::string line) {
  if (staged_.empty() && journal_lines_.empty()) first_staged_ = std::chrono::steady_clock::now();
  journal_lines_.push_back(std::move(line));
}

bool RunDirectory::commit_due() const {
  if (staged_.empty() && journal_lines_.empty()) return false;
  return staged_.size() >= kCommitBatch || std::chrono::steady_clock::now() - first_staged_ >= kCommitDelay;
}

Status RunDirectory::Commit() {
  for (const Staged& s : staged_) {
    const std::string final_path = PartialPath(s.shard);
    if (::rename(s.temp.c_str(), final_path.c_str()) != 0) return Io("rename into", final_path, errno);
  }
  if (!staged_.empty()) FF_RETURN_IF_ERROR(SyncDir((fs::path(path_) / "partials").string()));
  staged_.clear();
  if (!journal_lines_.empty()) {
    const std::string journal = (fs::path(path_) / "journal.ndjson").string();
    int fd = ::open(journal.c_str(), O_WRONLY | O_CREAT | O_APPEND | O_CLOEXEC, 0644);
    if (fd < 0) return Io("open", journal, errno);
    std::string text;
    for (const auto& l : journal_lines_) text += l + "\n";
    Status s = WriteAll(fd, text, journal);
    if (s.ok() && ::fdatasync(fd) != 0) s = Io("fsync", journal, errno);
    ::close(fd);
    FF_RETURN_IF_ERROR(s);
    journal_lines_.clear();
  }
  return Status::Ok();
}

Status RunDirectory::LoadPartial(uint32_t shard, std::string* out) const {
  out->clear();
  std::error_code ec;
  const std::string p = PartialPath(shard);
  if (!fs::exists(p, ec)) return Status::Ok();
  return ReadWholeFile(p, out);
}

void RunDirectory::DiscardPartial(uint32_t shard) const { ::unlink(PartialPath(shard).c_str()); }

Status RunDirectory::WriteFile(const std::string& name, std::string_view data) const {
  return WriteFileAtomic((fs::path(path_) / name).string(), data);
}

}  // namespace fanfold
