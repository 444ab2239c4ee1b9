#include "coordinator/rundir/run_directory.h"

#include <xxhash.h>

#include <algorithm>
#include <charconv>
#include <cstdio>
#include <filesystem>

#include "common/base/byte_io.h"
#include "common/port/files/file_util.h"

namespace fs = std::filesystem;

namespace fanfold {
namespace {

constexpr size_t kCommitBatch = 256;
constexpr uint32_t kPackMagic = 0x4B504646;       // "FFPK" little-endian
constexpr uint64_t kCommitDelayNs = 200'000'000;  // 200 ms

// A pack: one writer (its name carries the batch number), fdatasync (its
// size is all the metadata that matters), and a directory sync that must
// succeed, since only the renamed name says the batch is committed.
DurableWritePolicy PackPolicy() {
  DurableWritePolicy p;
  p.temp_name = DurableWritePolicy::TempName::kSuffix;
  p.permissions = 0644;
  p.sync = SyncDepth::kData;
  p.dir_sync = DurableWritePolicy::DirSync::kRequired;
  return p;
}
const DurableWritePolicy kPackPolicy = PackPolicy();

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

}  // namespace

RunDirectory::RunDirectory(Platform& platform, std::string path, std::unique_ptr<FileLock> lock)
    : platform_(platform), path_(std::move(path)), lock_(std::move(lock)) {}

// pack_ (declared after lock_) goes first: an unfinished batch's temporary is
// removed while the directory is still locked.
RunDirectory::~RunDirectory() = default;

RunDirectory::State RunDirectory::Probe(const std::string& path, Platform& platform) {
  if (!platform.Exists((fs::path(path) / "run.json").string())) return State::kEmpty;
  return platform.Exists((fs::path(path) / "summary.json").string()) ? State::kFinished : State::kUnfinished;
}

Result<std::unique_ptr<FileLock>> RunDirectory::Lock(Platform& platform, const std::string& path) {
  const std::string lock = (fs::path(path) / "lock").string();
  std::unique_ptr<FileLock> held;
  OsError e = platform.LockFile(lock, &held);
  if (e.ok()) return held;
  if (std::string_view(e.call()) == "flock")
    return Status::IoError("run directory '" + path + "' is in use by another fanfold process");
  return e.ToStatus("create", lock);
}

Result<std::unique_ptr<RunDirectory>> RunDirectory::Create(const std::string& path, const RunManifest& manifest,
                                                           bool fresh, Platform& platform) {
  OsError e = platform.CreateDirectories(path);
  if (!e.ok()) return e.ToStatus("create run directory", path);
  Result<std::unique_ptr<FileLock>> lock = Lock(platform, path);
  if (!lock.ok()) return lock.status();
  std::unique_ptr<RunDirectory> dir(new RunDirectory(platform, path, std::move(*lock)));
  if (Probe(path, platform) != State::kEmpty) {
    if (!fresh) return Status::Internal("run directory is not empty");
    // Summary first: a crash half-way through leaves an unfinished run, never a finished-looking one.
    // Errors are ignored here as before: what cannot be removed shows up below or on resume.
    for (const char* name : {"summary.json", "run.json", "journal.ndjson"})
      (void)platform.Remove((fs::path(path) / name).string());
    (void)platform.RemoveTree((fs::path(path) / "partials").string());
    std::vector<std::string> names;
    (void)platform.ListDirectory(path, &names);
    for (const std::string& name : names)
      if (name.rfind("result.", 0) == 0) (void)platform.Remove((fs::path(path) / name).string());
  }
  const std::string partials = (fs::path(path) / "partials").string();
  e = platform.CreateDirectories(partials);
  if (!e.ok()) return e.ToStatus("create", partials);
  FF_RETURN_IF_ERROR(
      WriteFileDurably(platform, (fs::path(path) / "run.json").string(), EncodeManifest(manifest), AtomicFilePolicy()));
  dir->UseSlots(manifest);
  return dir;
}

Status RunDirectory::RewriteManifest(const RunManifest& manifest) {
  if (!staged_.empty()) return Status::Internal("run.json rewritten with partials staged");
  FF_RETURN_IF_ERROR(WriteFileDurably(platform_, (fs::path(path_) / "run.json").string(), EncodeManifest(manifest),
                                      AtomicFilePolicy()));
  UseSlots(manifest);
  return Status::Ok();
}

uint32_t RunDirectory::FirstUnusedSlot() const { return index_.empty() ? 0 : index_.rbegin()->first + 1; }

size_t RunDirectory::saved_shard_count() const {
  size_t n = 0;
  for (uint32_t slot : slots_) n += index_.count(slot);
  return n;
}

Result<std::unique_ptr<RunDirectory>> RunDirectory::Open(const std::string& path, RunManifest* manifest,
                                                         Platform& platform) {
  const std::string run_json = (fs::path(path) / "run.json").string();
  std::string text;
  OsError e = platform.ReadFile(run_json, &text);
  if (!e.ok())
    return Status::InvalidArgument("'" + path + "' is not a fanfold run directory (" + e.ToStatus(run_json).message() +
                                   ")");
  Result<RunManifest> m = DecodeManifest(text, run_json);
  if (!m.ok()) return m.status();
  Result<std::unique_ptr<FileLock>> lock = Lock(platform, path);
  if (!lock.ok()) return lock.status();
  *manifest = std::move(m.value());
  (void)platform.CreateDirectories((fs::path(path) / "partials").string());  // a missing one is just empty
  std::unique_ptr<RunDirectory> dir(new RunDirectory(platform, path, std::move(*lock)));
  dir->UseSlots(*manifest);
  dir->IndexPacks();
  return dir;
}

std::string RunDirectory::PackPath(uint64_t seq) const {
  char name[32];
  snprintf(name, sizeof name, "pack-%06llu.ffpk", static_cast<unsigned long long>(seq));
  return path_ + "/partials/" + name;  // plain concatenation: called once per early partial
}

std::vector<uint64_t> RunDirectory::CommittedPacks() const {
  std::vector<std::string> names;
  (void)platform_.ListDirectory((fs::path(path_) / "partials").string(), &names);
  std::vector<uint64_t> packs;
  for (const std::string& name : names)
    if (uint64_t seq = 0; ParsePackName(name, &seq)) packs.push_back(seq);
  std::sort(packs.begin(), packs.end());
  return packs;
}

void RunDirectory::IndexPacks() {
  const std::string partials = (fs::path(path_) / "partials").string();
  std::vector<std::string> names;
  (void)platform_.ListDirectory(partials, &names);  // unreadable: no packs
  std::vector<uint64_t> packs;
  for (const std::string& name : names) {
    uint64_t seq = 0;
    // The .tmp test comes first: "pack-000007.ffpk.tmp" also starts like a pack's name.
    if (name.size() > 4 && name.compare(name.size() - 4, 4, ".tmp") == 0)
      (void)platform_.Remove((fs::path(partials) / name).string());
    else if (ParsePackName(name, &seq))
      packs.push_back(seq);
  }
  std::sort(packs.begin(), packs.end());
  for (uint64_t seq : packs) {
    // Only the 24-byte frames are read, never the partials between them:
    // opening a run directory then costs the same memory whatever the size
    // of its packs (256 partials of a few MB each would be a GB).
    std::unique_ptr<ReadableFile> file;
    if (platform_.OpenForRead(PackPath(seq), &file).ok()) {
      uint64_t size = 0;
      if (!file->Size(&size).ok()) size = 0;
      uint64_t off = 0;
      char frame[kFrameBytes];
      while (size - off >= kFrameBytes && file->ReadAt(off, kFrameBytes, frame).ok()) {
        ByteReader r(std::string_view(frame, kFrameBytes));
        uint32_t magic = r.U32();
        uint32_t slot = r.U32();
        uint64_t length = r.U64();
        uint64_t check = r.U64();
        if (magic != kPackMagic || check != XXH3_64bits(frame, 16) || length > size - off - kFrameBytes)
          break;  // a torn or damaged frame: the rest of this pack is unreadable
        index_[slot] = Location{seq, off + kFrameBytes, length};
        off += kFrameBytes + length;
      }
    }
    next_pack_ = std::max(next_pack_, seq + 1);
  }
}

Status RunDirectory::StagePartial(uint32_t shard, std::string_view bytes) { return StageEntry(SlotOf(shard), bytes); }

Status RunDirectory::StageEntry(uint32_t slot, std::string_view bytes) {
  if (!pack_) {
    Result<std::unique_ptr<StagedFile>> pack =
        StagedFile::Begin(platform_, PackPath(next_pack_), kPackPolicy, (fs::path(path_) / "partials").string());
    if (!pack.ok()) return pack.status();
    pack_ = std::move(*pack);
    pack_size_ = 0;
    stage_buffer_.clear();
  }
  ByteWriter w(&stage_buffer_);
  const size_t frame_at = stage_buffer_.size();
  w.U32(kPackMagic);
  w.U32(slot);
  w.U64(bytes.size());
  w.U64(XXH3_64bits(stage_buffer_.data() + frame_at, 16));
  // A large partial is written straight from its own bytes, not copied.
  const bool direct = bytes.size() >= kStageBufferBytes;
  if (!direct) w.Bytes(bytes);
  if (staged_.empty() && journal_lines_.empty()) first_staged_ns_ = platform_.MonotonicNanos();
  staged_.push_back({slot, Location{next_pack_, pack_size_ + kFrameBytes, bytes.size()}});
  pack_size_ += kFrameBytes + bytes.size();
  if (direct) {
    FF_RETURN_IF_ERROR(FlushStaged());
    Status s = pack_->Append(bytes);
    if (!s.ok()) DropBatch();
    return s;
  }
  return stage_buffer_.size() >= kStageBufferBytes ? FlushStaged() : Status::Ok();
}

Status RunDirectory::FlushStaged() {
  if (!pack_ || stage_buffer_.empty()) return Status::Ok();
  Status s = pack_->Append(stage_buffer_);
  stage_buffer_.clear();
  if (!s.ok()) DropBatch();
  return s;
}

void RunDirectory::DropBatch() {
  pack_.reset();  // closes and removes the temporary
  stage_buffer_.clear();
  staged_.clear();
}

void RunDirectory::StageJournal(std::string line) {
  if (staged_.empty() && journal_lines_.empty()) first_staged_ns_ = platform_.MonotonicNanos();
  journal_lines_.push_back(std::move(line));
}

bool RunDirectory::commit_due() const {
  if (staged_.empty() && journal_lines_.empty()) return false;
  return staged_.size() >= kCommitBatch || platform_.MonotonicNanos() - first_staged_ns_ >= kCommitDelayNs;
}

Status RunDirectory::Commit() {
  FF_RETURN_IF_ERROR(FlushStaged());
  if (pack_) {
    std::unique_ptr<StagedFile> pack = std::move(pack_);
    Status s = pack->Publish();
    if (!s.ok()) {
      // Not renamed: the batch is gone. Renamed but the directory not
      // synced: the pack may or may not survive, so it is not indexed yet.
      if (!pack->renamed()) staged_.clear();
      return s;
    }
    for (const auto& [slot, loc] : staged_) index_[slot] = loc;
    staged_.clear();
    ++next_pack_;
  }
  if (!journal_lines_.empty()) {
    const std::string journal = (fs::path(path_) / "journal.ndjson").string();
    std::unique_ptr<WritableFile> file;
    OsError e = platform_.OpenForWrite(journal, CreateMode::kAppend, 0644, &file);
    if (!e.ok()) return e.ToStatus("open", journal);
    std::string text;
    // A crash mid-append leaves a line without its newline: start on a line
    // of our own, so the fragment stays one unreadable line (readers skip
    // it) and the first new event is not glued to it.
    if (!journal_checked_ && !JournalEndsLine(journal)) text = "\n";
    for (const auto& l : journal_lines_) text += l + "\n";
    e = file->Append(text);
    if (e.ok()) e = file->Sync(SyncDepth::kData);
    if (!e.ok()) return e.ToStatus(e.call() == std::string_view("write") ? "write" : "fsync", journal);
    if (!journal_checked_) {
      // The journal may have just been created: its name is durable only
      // once the run directory is synced.
      e = platform_.SyncDirectory(path_);
      if (!e.ok()) return e.ToStatus("fsync", path_);
      journal_checked_ = true;
    }
    journal_lines_.clear();
  }
  return Status::Ok();
}

bool RunDirectory::JournalEndsLine(const std::string& journal) const {
  std::unique_ptr<ReadableFile> file;
  uint64_t size = 0;
  if (!platform_.OpenForRead(journal, &file).ok() || !file->Size(&size).ok() || size == 0) return true;
  char last = '\n';
  return !file->ReadAt(size - 1, 1, &last).ok() || last == '\n';
}

Status RunDirectory::ReadRange(const std::string& path, uint64_t offset, uint64_t length, std::string* out) const {
  std::unique_ptr<ReadableFile> file;
  OsError e = platform_.OpenForRead(path, &file);
  if (!e.ok()) return e.ToStatus("open", path);
  out->resize(length);
  e = file->ReadAt(offset, length, out->data());
  if (!e.ok()) {
    out->clear();
    return e.ToStatus("read", path);
  }
  return Status::Ok();
}

Status RunDirectory::LoadPartial(uint32_t shard, std::string* out) const {
  out->clear();
  auto it = index_.find(SlotOf(shard));
  if (it == index_.end()) return Status::Ok();
  return ReadRange(PackPath(it->second.pack), it->second.offset, it->second.length, out);
}

std::string RunDirectory::PartialFile(uint32_t shard) const {
  auto it = index_.find(SlotOf(shard));
  return it == index_.end() ? std::string() : PackPath(it->second.pack);
}

Status RunDirectory::LoadStagedOrCommitted(uint32_t shard, std::string* out) const {
  const uint64_t written = pack_size_ - stage_buffer_.size();  // bytes of the batch already in its file
  const uint32_t slot = SlotOf(shard);
  for (const auto& [s, loc] : staged_) {
    if (s != slot) continue;
    if (loc.offset >= written) {
      out->assign(stage_buffer_, loc.offset - written, loc.length);
      return Status::Ok();
    }
    return ReadRange(PackPath(loc.pack) + ".tmp", loc.offset, loc.length, out);
  }
  return LoadPartial(shard, out);
}

Status RunDirectory::LocateStagedOrCommitted(uint32_t shard, StoredSpan* out) const {
  *out = StoredSpan();
  const uint64_t written = pack_size_ - stage_buffer_.size();
  const uint32_t slot = SlotOf(shard);
  for (const auto& [s, loc] : staged_) {
    if (s != slot) continue;
    if (loc.offset >= written) {
      out->bytes.assign(stage_buffer_, loc.offset - written, loc.length);
    } else {
      out->path = PackPath(loc.pack) + ".tmp";
      out->offset = loc.offset;
      out->length = loc.length;
    }
    return Status::Ok();
  }
  auto it = index_.find(slot);
  if (it == index_.end()) return Status::Ok();
  out->path = PackPath(it->second.pack);
  out->offset = it->second.offset;
  out->length = it->second.length;
  return Status::Ok();
}

void RunDirectory::DiscardPartial(uint32_t shard) { index_.erase(SlotOf(shard)); }

Status RunDirectory::WriteFile(const std::string& name, std::string_view data) const {
  return WriteFileDurably(platform_, (fs::path(path_) / name).string(), data, AtomicFilePolicy());
}

}  // namespace fanfold

namespace fanfold {

Status RunDirectory::RemoveFile(const std::string& name) const {
  const std::string file = (fs::path(path_) / name).string();
  if (!platform_.Exists(file)) return Status::Ok();
  OsError e = platform_.Remove(file);
  if (!e.ok()) return e.ToStatus("remove", file);
  e = platform_.SyncDirectory(path_);
  return e.ok() ? Status::Ok() : e.ToStatus("fsync", path_);
}

}  // namespace fanfold
