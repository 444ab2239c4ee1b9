#include "coordinator/rundir/run_directory.h"

#include <fcntl.h>
#include <sys/file.h>
#include <sys/stat.h>
#include <unistd.h>

#include <algorithm>
#include <cerrno>
#include <charconv>
#include <cstdio>
#include <filesystem>

#include "common/port/file_util.h"
#include "common/base/byte_io.h"
#include "common/port/os_error.h"

#include <xxhash.h>

namespace fs = std::filesystem;

namespace fanfold {
namespace {

constexpr size_t kCommitBatch = 256;
constexpr uint32_t kPackMagic = 0x4B504646;  // "FFPK" little-endian
constexpr size_t kFrameBytes = 24;
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

// True iff name is exactly "pack-<decimal digits>.ffpk"; *seq gets the number.
bool ParsePackName(std::string_view name, uint64_t* seq) {
  constexpr std::string_view kPrefix = "pack-", kSuffix = ".ffpk";
  if (name.size() <= kPrefix.size() + kSuffix.size() || name.substr(0, kPrefix.size()) != kPrefix ||
      name.substr(name.size() - kSuffix.size()) != kSuffix)
    return false;
  const char* first = name.data() + kPrefix.size();
  const char* last = name.data() + name.size() - kSuffix.size();
  auto [end, err] = std::from_chars(first, last, *seq);
  return err == std::errc() && end == last;
}

// Reads exactly n bytes at offset; false on an error or end of file.
bool ReadExactly(int fd, uint64_t offset, unsigned char* buf, size_t n) {
  size_t done = 0;
  while (done < n) {
    ssize_t got = ::pread(fd, buf + done, n - done, static_cast<off_t>(offset + done));
    if (got < 0 && errno == EINTR) continue;
    if (got <= 0) return false;
    done += static_cast<size_t>(got);
  }
  return true;
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
  if (pack_fd_ >= 0) {
    ::close(pack_fd_);
    ::unlink((PackPath(next_pack_) + ".tmp").c_str());
  }
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
  std::unique_ptr<RunDirectory> dir(new RunDirectory(path, *lock));
  dir->IndexPacks();
  return dir;
}

std::string RunDirectory::PackPath(uint64_t seq) const {
  char name[32];
  snprintf(name, sizeof name, "pack-%06llu.ffpk", static_cast<unsigned long long>(seq));
  return path_ + "/partials/" + name;  // plain concatenation: called once per early partial
}

void RunDirectory::IndexPacks() {
  std::error_code ec;
  std::vector<uint64_t> packs;
  for (const auto& e : fs::directory_iterator(fs::path(path_) / "partials", ec)) {
    const std::string name = e.path().filename().string();
    uint64_t seq = 0;
    // The .tmp test comes first: "pack-000007.ffpk.tmp" also starts like a pack's name.
    if (name.size() > 4 && name.compare(name.size() - 4, 4, ".tmp") == 0) fs::remove(e.path(), ec);
    else if (ParsePackName(name, &seq)) packs.push_back(seq);
  }
  std::sort(packs.begin(), packs.end());
  for (uint64_t seq : packs) {
    // Only the 24-byte frames are read, never the partials between them:
    // opening a run directory then costs the same memory whatever the size
    // of its packs (256 partials of a few MB each would be a GB).
    const std::string path = PackPath(seq);
    int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
    if (fd >= 0) {
      struct stat st;
      const uint64_t size = ::fstat(fd, &st) == 0 ? static_cast<uint64_t>(st.st_size) : 0;
      uint64_t off = 0;
      unsigned char frame[kFrameBytes];
      while (size - off >= kFrameBytes && ReadExactly(fd, off, frame, kFrameBytes)) {
        ByteReader r(std::string_view(reinterpret_cast<const char*>(frame), kFrameBytes));
        uint32_t magic = r.U32();
        uint32_t shard = r.U32();
        uint64_t length = r.U64();
        uint64_t check = r.U64();
        if (magic != kPackMagic || check != XXH3_64bits(frame, 16) || length > size - off - kFrameBytes)
          break;  // a torn or damaged frame: the rest of this pack is unreadable
        index_[shard] = Location{seq, off + kFrameBytes, length};
        off += kFrameBytes + length;
      }
      ::close(fd);
    }
    next_pack_ = std::max(next_pack_, seq + 1);
  }
}

Status RunDirectory::StagePartial(uint32_t shard, std::string_view bytes) {
  if (pack_fd_ < 0) {
    const std::string temp = PackPath(next_pack_) + ".tmp";
    pack_fd_ = ::open(temp.c_str(), O_WRONLY | O_CREAT | O_TRUNC | O_CLOEXEC, 0644);
    if (pack_fd_ < 0) return Io("create", temp, errno);
    pack_size_ = 0;
    stage_buffer_.clear();
  }
  ByteWriter w(&stage_buffer_);
  const size_t frame_at = stage_buffer_.size();
  w.U32(kPackMagic);
  w.U32(shard);
  w.U64(bytes.size());
  w.U64(XXH3_64bits(stage_buffer_.data() + frame_at, 16));
  // A large partial is written straight from its own bytes, not copied.
  const bool direct = bytes.size() >= kStageBufferBytes;
  if (!direct) w.Bytes(bytes);
  if (staged_.empty() && journal_lines_.empty()) first_staged_ = std::chrono::steady_clock::now();
  staged_.push_back({shard, Location{next_pack_, pack_size_ + kFrameBytes, bytes.size()}});
  pack_size_ += kFrameBytes + bytes.size();
  if (direct) {
    FF_RETURN_IF_ERROR(FlushStaged());
    Status s = WriteAll(pack_fd_, bytes, PackPath(next_pack_) + ".tmp");
    if (!s.ok()) DropBatch();
    return s;
  }
  return stage_buffer_.size() >= kStageBufferBytes ? FlushStaged() : Status::Ok();
}

Status RunDirectory::FlushStaged() {
  if (pack_fd_ < 0 || stage_buffer_.empty()) return Status::Ok();
  Status s = WriteAll(pack_fd_, stage_buffer_, PackPath(next_pack_) + ".tmp");
  stage_buffer_.clear();
  if (!s.ok()) DropBatch();
  return s;
}

void RunDirectory::DropBatch() {
  if (pack_fd_ >= 0) {
    ::close(pack_fd_);
    pack_fd_ = -1;
    ::unlink((PackPath(next_pack_) + ".tmp").c_str());
  }
  stage_buffer_.clear();
  staged_.clear();
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
  FF_RETURN_IF_ERROR(FlushStaged());
  if (pack_fd_ >= 0) {
    const std::string final_path = PackPath(next_pack_);
    const std::string temp = final_path + ".tmp";
    int rc = ::fdatasync(pack_fd_);
    int err = errno;
    ::close(pack_fd_);
    pack_fd_ = -1;
    if (rc != 0) {
      ::unlink(temp.c_str());
      staged_.clear();
      return Io("fsync", temp, err);
    }
    if (::rename(temp.c_str(), final_path.c_str()) != 0) {
      err = errno;
      ::unlink(temp.c_str());
      staged_.clear();
      return Io("rename into", final_path, err);
    }
    FF_RETURN_IF_ERROR(SyncDir((fs::path(path_) / "partials").string()));
    for (const auto& [shard, loc] : staged_) index_[shard] = loc;
    staged_.clear();
    ++next_pack_;
  }
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

Status RunDirectory::ReadRange(const std::string& path, uint64_t offset, uint64_t length, std::string* out) {
  int fd = ::open(path.c_str(), O_RDONLY | O_CLOEXEC);
  if (fd < 0) return Io("open", path, errno);
  out->resize(length);
  size_t done = 0;
  while (done < out->size()) {
    ssize_t n = ::pread(fd, out->data() + done, out->size() - done, static_cast<off_t>(offset + done));
    if (n < 0 && errno == EINTR) continue;
    if (n <= 0) {
      int err = n < 0 ? errno : EIO;
      ::close(fd);
      out->clear();
      return Io("read", path, err);
    }
    done += static_cast<size_t>(n);
  }
  ::close(fd);
  return Status::Ok();
}

Status RunDirectory::LoadPartial(uint32_t shard, std::string* out) const {
  out->clear();
  auto it = index_.find(shard);
  if (it == index_.end()) return Status::Ok();
  return ReadRange(PackPath(it->second.pack), it->second.offset, it->second.length, out);
}

Status RunDirectory::LoadStagedOrCommitted(uint32_t shard, std::string* out) const {
  const uint64_t written = pack_size_ - stage_buffer_.size();  // bytes of the batch already in its file
  for (const auto& [s, loc] : staged_) {
    if (s != shard) continue;
    if (loc.offset >= written) {
      out->assign(stage_buffer_, loc.offset - written, loc.length);
      return Status::Ok();
    }
    return ReadRange(PackPath(loc.pack) + ".tmp", loc.offset, loc.length, out);
  }
  return LoadPartial(shard, out);
}

void RunDirectory::DiscardPartial(uint32_t shard) { index_.erase(shard); }

Status RunDirectory::WriteFile(const std::string& name, std::string_view data) const {
  return WriteFileAtomic((fs::path(path_) / name).string(), data);
}

}  // namespace fanfold
