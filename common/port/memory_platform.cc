#include "common/port/memory_platform.h"

#include <algorithm>
#include <cerrno>
#include <cstring>
#include <filesystem>

namespace fanfold {
namespace {

// One spelling per path: lexically normal, no trailing '/'.
std::string Normal(const std::string& path) {
  std::string p = std::filesystem::path(path).lexically_normal().string();
  while (p.size() > 1 && p.back() == '/') p.pop_back();
  return p;
}

std::string Parent(const std::string& path) {
  size_t slash = path.rfind('/');
  if (slash == std::string::npos) return ".";
  return slash == 0 ? "/" : path.substr(0, slash);
}

bool Under(const std::string& path, const std::string& dir) {
  return path.size() > dir.size() && path.compare(0, dir.size(), dir) == 0 &&
         (dir == "/" || path[dir.size()] == '/');
}

}  // namespace

class MemoryPlatform::File final : public WritableFile {
 public:
  File(MemoryPlatform* owner, std::string path, std::shared_ptr<Node> node)
      : owner_(owner), path_(std::move(path)), node_(std::move(node)) {}
  OsError Append(std::string_view data) override {
    if (!node_) return OsError::Of("write", EBADF);
    std::lock_guard<std::mutex> lock(owner_->mu_);
    if (int err = owner_->TakeFault(Op::kWrite, path_)) return OsError::Of("write", err);
    return owner_->AppendTo(*node_, data);
  }
  OsError Sync(SyncDepth depth) override {
    const char* call = depth == SyncDepth::kData ? "fdatasync" : "fsync";
    if (!node_) return OsError::Of(call, EBADF);
    std::lock_guard<std::mutex> lock(owner_->mu_);
    if (int err = owner_->TakeFault(Op::kSync, path_)) return OsError::Of(call, err);
    node_->synced = node_->data.size();
    return OsError::Ok();
  }
  OsError Close() override {
    if (!node_) return OsError::Of("close", EBADF);
    node_.reset();
    return OsError::Ok();
  }

 private:
  MemoryPlatform* owner_;
  std::string path_;
  std::shared_ptr<Node> node_;  // the open file outlives its name, as on POSIX
};

class MemoryPlatform::Reader final : public ReadableFile {
 public:
  Reader(MemoryPlatform* owner, std::string path, std::shared_ptr<Node> node)
      : owner_(owner), path_(std::move(path)), node_(std::move(node)) {}
  OsError Size(uint64_t* size) override {
    std::lock_guard<std::mutex> lock(owner_->mu_);
    if (owner_->crashed_) return OsError::Of("fstat", EIO);
    *size = node_->data.size();
    return OsError::Ok();
  }
  OsError ReadAt(uint64_t offset, size_t n, char* buf) override {
    std::lock_guard<std::mutex> lock(owner_->mu_);
    if (int err = owner_->TakeFault(Op::kRead, path_)) return OsError::Of("read", err);
    if (offset > node_->data.size() || node_->data.size() - offset < n) return OsError::Of("read", EIO);
    std::memcpy(buf, node_->data.data() + offset, n);
    return OsError::Ok();
  }

 private:
  MemoryPlatform* owner_;
  std::string path_;
  std::shared_ptr<Node> node_;
};

class MemoryPlatform::Lock final : public FileLock {
 public:
  Lock(MemoryPlatform* owner, std::string path, uint64_t generation)
      : owner_(owner), path_(std::move(path)), generation_(generation) {}
  ~Lock() override { owner_->Unlock(path_, generation_); }

 private:
  MemoryPlatform* owner_;
  std::string path_;
  uint64_t generation_;
};

MemoryPlatform::MemoryPlatform() { dirs_.insert("/"); }
MemoryPlatform::~MemoryPlatform() = default;

void MemoryPlatform::FailNext(Op op, std::string path_part, int err) {
  std::lock_guard<std::mutex> lock(mu_);
  faults_.push_back(Fault{op, std::move(path_part), err});
}

void MemoryPlatform::SetSpaceLeft(uint64_t bytes) {
  std::lock_guard<std::mutex> lock(mu_);
  space_left_ = bytes;
}

void MemoryPlatform::CrashAfter(uint64_t bytes) {
  std::lock_guard<std::mutex> lock(mu_);
  crash_after_ = bytes;
}

bool MemoryPlatform::crashed() const {
  std::lock_guard<std::mutex> lock(mu_);
  return crashed_;
}

void MemoryPlatform::Restart(Survival survival) {
  std::lock_guard<std::mutex> lock(mu_);
  if (survival == Survival::kPowerLoss) {
    files_ = durable_;
    for (auto& [path, node] : files_) node->data.resize(node->synced);
  }
  faults_.clear();
  locked_.clear();
  space_left_ = kUnlimited;
  crash_after_ = kUnlimited;
  crashed_ = false;
  ++generation_;
}

void MemoryPlatform::PutFile(const std::string& path, const std::string& data) {
  std::lock_guard<std::mutex> lock(mu_);
  auto node = std::make_shared<Node>();
  node->data = data;
  node->synced = data.size();
  node->mtime_ns = static_cast<int64_t>(wall_ns_);
  const std::string p = Normal(path);
  files_[p] = node;
  durable_[p] = node;
}

bool MemoryPlatform::HasFile(const std::string& path) const {
  std::lock_guard<std::mutex> lock(mu_);
  return files_.count(Normal(path)) != 0;
}

std::string MemoryPlatform::FileData(const std::string& path) const {
  std::lock_guard<std::mutex> lock(mu_);
  auto it = files_.find(Normal(path));
  return it == files_.end() ? std::string() : it->second->data;
}

std::vector<std::string> MemoryPlatform::Files() const {
  std::lock_guard<std::mutex> lock(mu_);
  std::vector<std::string> out;
  for (const auto& [path, node] : files_) out.push_back(path);
  return out;
}

void MemoryPlatform::AdvanceClock(uint64_t ns) {
  std::lock_guard<std::mutex> lock(mu_);
  wall_ns_ += ns;
  mono_ns_ += ns;
}

int MemoryPlatform::TakeFault(Op op, const std::string& path) {
  if (crashed_) return EIO;
  for (auto it = faults_.begin(); it != faults_.end(); ++it) {
    if (it->op == op && path.find(it->path_part) != std::string::npos) {
      int err = it->err;
      faults_.erase(it);
      if (err != kCrash) return err;
      crashed_ = true;
      return EIO;
    }
  }
  return 0;
}

OsError MemoryPlatform::AppendTo(Node& node, std::string_view data) {
  const uint64_t allowed = std::min<uint64_t>({data.size(), space_left_, crash_after_});
  node.data.append(data.data(), allowed);
  node.mtime_ns = static_cast<int64_t>(wall_ns_);
  if (space_left_ != kUnlimited) space_left_ -= allowed;
  if (crash_after_ != kUnlimited) crash_after_ -= allowed;
  if (allowed == data.size()) return OsError::Ok();
  if (crash_after_ == 0) {
    crashed_ = true;
    return OsError::Of("write", EIO);
  }
  return OsError::Of("write", ENOSPC);
}

bool MemoryPlatform::IsDir(const std::string& path) const { return dirs_.count(path) != 0; }

void MemoryPlatform::Unlock(const std::string& path, uint64_t generation) {
  std::lock_guard<std::mutex> lock(mu_);
  if (generation == generation_) locked_.erase(path);
}

OsError MemoryPlatform::ReadFile(const std::string& path, std::string* out) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kOpen, p)) return OsError::Of("open", err);
  auto it = files_.find(p);
  if (it == files_.end()) return OsError::Of("open", IsDir(p) ? EISDIR : ENOENT);
  if (int err = TakeFault(Op::kRead, p)) return OsError::Of("read", err);
  *out = it->second->data;
  return OsError::Ok();
}

OsError MemoryPlatform::OpenForRead(const std::string& path, std::unique_ptr<ReadableFile>* out) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kOpen, p)) return OsError::Of("open", err);
  auto it = files_.find(p);
  if (it == files_.end()) return OsError::Of("open", ENOENT);
  *out = std::make_unique<Reader>(this, p, it->second);
  return OsError::Ok();
}

OsError MemoryPlatform::OpenForWrite(const std::string& path, CreateMode mode, unsigned /*permissions*/,
                                     std::unique_ptr<WritableFile>* out) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kOpen, p)) return OsError::Of("open", err);
  if (!IsDir(Parent(p))) return OsError::Of("open", ENOENT);
  if (IsDir(p)) return OsError::Of("open", EISDIR);
  auto it = files_.find(p);
  if (it != files_.end() && mode == CreateMode::kExclusive) return OsError::Of("open", EEXIST);
  if (it == files_.end()) {
    it = files_.emplace(p, std::make_shared<Node>()).first;
    it->second->mtime_ns = static_cast<int64_t>(wall_ns_);
  } else if (mode == CreateMode::kTruncate) {
    it->second->data.clear();
    it->second->synced = 0;
  }
  *out = std::make_unique<File>(this, p, it->second);
  return OsError::Ok();
}

OsError MemoryPlatform::Rename(const std::string& from, const std::string& to) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string f = Normal(from), t = Normal(to);
  if (int err = TakeFault(Op::kRename, f)) return OsError::Of("rename", err);
  auto it = files_.find(f);
  if (it == files_.end()) return OsError::Of("rename", ENOENT);
  if (!IsDir(Parent(t))) return OsError::Of("rename", ENOENT);
  std::shared_ptr<Node> node = it->second;
  files_.erase(it);
  files_[t] = std::move(node);
  return OsError::Ok();
}

OsError MemoryPlatform::Remove(const std::string& path) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kRemove, p)) return OsError::Of("unlink", err);
  return files_.erase(p) != 0 ? OsError::Ok() : OsError::Of("unlink", ENOENT);
}

OsError MemoryPlatform::RemoveTree(const std::string& path) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kRemove, p)) return OsError::Of("remove", err);
  files_.erase(p);
  std::erase_if(files_, [&](const auto& kv) { return Under(kv.first, p); });
  if (p != "/") dirs_.erase(p);
  std::erase_if(dirs_, [&](const std::string& d) { return Under(d, p); });
  return OsError::Ok();
}

OsError MemoryPlatform::CreateDirectories(const std::string& path) {
  std::lock_guard<std::mutex> lock(mu_);
  if (crashed_) return OsError::Of("mkdir", EIO);
  for (std::string p = Normal(path); p != "/" && p != "."; p = Parent(p)) {
    if (files_.count(p) != 0) return OsError::Of("mkdir", EEXIST);
    dirs_.insert(p);
  }
  return OsError::Ok();
}

OsError MemoryPlatform::SyncDirectory(const std::string& dir) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string d = Normal(dir);
  if (!IsDir(d)) return OsError::Of("open", ENOENT);
  if (int err = TakeFault(Op::kSyncDir, d)) return OsError::Of("fsync", err);
  std::erase_if(durable_, [&](const auto& kv) { return Parent(kv.first) == d; });
  for (const auto& [path, node] : files_)
    if (Parent(path) == d) durable_[path] = node;
  return OsError::Ok();
}

OsError MemoryPlatform::ListDirectory(const std::string& dir, std::vector<std::string>* names) {
  std::lock_guard<std::mutex> lock(mu_);
  names->clear();
  const std::string d = Normal(dir);
  if (crashed_) return OsError::Of("opendir", EIO);
  if (!IsDir(d)) return OsError::Of("opendir", ENOENT);
  for (const auto& [path, node] : files_)
    if (Parent(path) == d) names->push_back(path.substr(d == "/" ? 1 : d.size() + 1));
  for (const std::string& sub : dirs_)
    if (sub != d && Parent(sub) == d) names->push_back(sub.substr(d == "/" ? 1 : d.size() + 1));
  return OsError::Ok();
}

bool MemoryPlatform::Exists(const std::string& path) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  return !crashed_ && (files_.count(p) != 0 || IsDir(p));
}

OsError MemoryPlatform::Identify(const std::string& path, FileIdentity* out) {
  std::lock_guard<std::mutex> lock(mu_);
  if (crashed_) return OsError::Of("stat", EIO);
  auto it = files_.find(Normal(path));
  if (it == files_.end()) return OsError::Of("stat", ENOENT);
  out->size = it->second->data.size();
  out->mtime_ns = it->second->mtime_ns;
  return OsError::Ok();
}

OsError MemoryPlatform::LockFile(const std::string& path, std::unique_ptr<FileLock>* out) {
  std::lock_guard<std::mutex> lock(mu_);
  const std::string p = Normal(path);
  if (int err = TakeFault(Op::kOpen, p)) return OsError::Of("open", err);
  if (!IsDir(Parent(p))) return OsError::Of("open", ENOENT);
  if (files_.count(p) == 0) files_[p] = std::make_shared<Node>();
  if (int err = TakeFault(Op::kLock, p)) return OsError::Of("flock", err);
  if (!locked_.insert(p).second) return OsError::Of("flock", EWOULDBLOCK);
  *out = std::make_unique<Lock>(this, p, generation_);
  return OsError::Ok();
}

uint64_t MemoryPlatform::WallNanos() {
  std::lock_guard<std::mutex> lock(mu_);
  return wall_ns_;
}

uint64_t MemoryPlatform::MonotonicNanos() {
  std::lock_guard<std::mutex> lock(mu_);
  return mono_ns_;
}

}  // namespace fanfold
