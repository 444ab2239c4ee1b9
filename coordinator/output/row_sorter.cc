#include "coordinator/output/row_sorter.h"

#include <algorithm>
#include <cerrno>
#include <queue>

#include "common/base/byte_io.h"

namespace fanfold {
namespace {

constexpr std::string_view kMagic = "FFROWS1\n";
constexpr std::string_view kPrefix = "sort-";
constexpr std::string_view kSuffix = ".rows";
constexpr size_t kWriteBuffer = size_t{1} << 20;

std::string JoinPath(const std::string& dir, const std::string& name) {
  return dir.empty() || dir.back() == '/' ? dir + name : dir + "/" + name;
}

// Sorted rows on their way to one file, in pieces of kWriteBuffer.
class SortFileWriter {
 public:
  SortFileWriter(Platform& platform, std::string path) : platform_(platform), path_(std::move(path)) {}
  Status Open() {
    OsError e = platform_.OpenForWrite(path_, CreateMode::kTruncate, 0600, &file_);
    if (!e.ok()) return e.ToStatus("create", path_);
    buf_ = kMagic;
    return Status::Ok();
  }
  Status Put(std::string_view key, std::string_view row) {
    ByteWriter w(&buf_);
    w.Varint(key.size());
    w.Varint(row.size());
    w.Bytes(key);
    w.Bytes(row);
    return buf_.size() >= kWriteBuffer ? Flush() : Status::Ok();
  }
  Status Close() {
    FF_RETURN_IF_ERROR(Flush());
    OsError e = file_->Close();
    return e.ok() ? Status::Ok() : e.ToStatus("close", path_);
  }

 private:
  Status Flush() {
    OsError e = file_->Append(buf_);
    buf_.clear();
    return e.ok() ? Status::Ok() : e.ToStatus("write", path_);
  }
  Platform& platform_;
  std::string path_;
  std::unique_ptr<WritableFile> file_;
  std::string buf_;
};

}  // namespace

// Reads one sort file row by row through a buffer of about buffer_bytes.
class RowSorter::FileReader {
 public:
  FileReader(Platform& platform, std::string path, size_t buffer_bytes)
      : platform_(platform), path_(std::move(path)), chunk_(buffer_bytes) {}

  Status Open() {
    OsError e = platform_.OpenForRead(path_, &file_);
    if (e.ok()) e = file_->Size(&size_);
    if (!e.ok()) return e.ToStatus("open", path_);
    FF_RETURN_IF_ERROR(Ensure(kMagic.size()));
    if (std::string_view(buf_).substr(0, kMagic.size()) != kMagic) return Damaged();
    cur_ = kMagic.size();
    return Status::Ok();
  }
  // Moves to the next row; false at the end of the file (or on an error,
  // in *status).
  bool Next(Status* status) {
    if (Left() == 0) return false;
    *status = Ensure(std::min<uint64_t>(20, Left()));
    if (!status->ok()) return false;
    ByteReader r(std::string_view(buf_).substr(cur_));
    const uint64_t key_len = r.Varint();
    const uint64_t row_len = r.Varint();
    if (!r.ok() || key_len > Left() || row_len > Left()) {
      *status = Damaged();
      return false;
    }
    const size_t head = buf_.size() - cur_ - r.remaining();
    *status = Ensure(head + key_len + row_len);
    if (!status->ok()) return false;
    key_ = std::string_view(buf_).substr(cur_ + head, key_len);
    row_ = std::string_view(buf_).substr(cur_ + head + key_len, row_len);
    cur_ += head + key_len + row_len;
    return true;
  }
  std::string_view key() const { return key_; }
  std::string_view row() const { return row_; }

 private:
  uint64_t Left() const { return size_ - offset_ - cur_; }  // bytes not yet consumed, buffered or not
  Status Damaged() const { return Status::Corrupt("sort file '" + path_ + "' is damaged"); }
  // Makes buf_[cur_, cur_ + n) hold the next n bytes of the file.
  Status Ensure(uint64_t n) {
    if (buf_.size() - cur_ >= n) return Status::Ok();
    if (n > Left()) return Damaged();
    buf_.erase(0, cur_);
    offset_ += cur_;
    cur_ = 0;
    const uint64_t at = offset_ + buf_.size();
    const uint64_t want = std::min<uint64_t>(std::max<uint64_t>(n - buf_.size(), chunk_), size_ - at);
    const size_t old = buf_.size();
    buf_.resize(old + want);
    OsError e = file_->ReadAt(at, want, buf_.data() + old);
    return e.ok() ? Status::Ok() : e.ToStatus("read", path_);
  }

  Platform& platform_;
  std::string path_;
  size_t chunk_;
  std::unique_ptr<ReadableFile> file_;
  uint64_t size_ = 0;
  uint64_t offset_ = 0;  // file offset of buf_[0]
  std::string buf_;
  size_t cur_ = 0;
  std::string_view key_, row_;
};

Status RemoveStaleSortFiles(Platform& platform, const std::string& dir) {
  if (!platform.Exists(dir)) return Status::Ok();
  std::vector<std::string> names;
  OsError e = platform.ListDirectory(dir, &names);
  if (!e.ok()) return e.ToStatus("list", dir);
  for (const std::string& n : names) {
    if (n.size() <= kPrefix.size() + kSuffix.size() || n.compare(0, kPrefix.size(), kPrefix) != 0 ||
        n.compare(n.size() - kSuffix.size(), kSuffix.size(), kSuffix) != 0)
      continue;
    const std::string path = JoinPath(dir, n);
    e = platform.Remove(path);
    if (!e.ok() && e.code() != ENOENT) return e.ToStatus("remove", path);
  }
  return Status::Ok();
}

RowSorter::RowSorter(Platform& platform, std::string dir, uint64_t budget, size_t fan_in)
    : platform_(platform), dir_(std::move(dir)), budget_(budget), fan_in_(std::max<size_t>(fan_in, 2)) {}

RowSorter::~RowSorter() {
  for (const std::string& f : files_) (void)platform_.Remove(f);
}

std::string RowSorter::NewPath() {
  return JoinPath(dir_, std::string(kPrefix) + std::to_string(platform_.CurrentPid()) + "-" +
                            std::to_string(files_written_++) + std::string(kSuffix));
}

Status RowSorter::Add(std::string_view key, std::string_view row) {
  const uint64_t need = key.size() + row.size() + sizeof(Entry);
  if (!entries_.empty() && arena_.size() + entries_.size() * sizeof(Entry) + need > budget_)
    FF_RETURN_IF_ERROR(Spill());
  // Grown by hand, at most to the budget (doubling could take twice it).
  if (arena_.size() + key.size() + row.size() > arena_.capacity())
    arena_.reserve(std::max<uint64_t>(arena_.size() + key.size() + row.size(),
                                      std::min<uint64_t>(budget_, std::max<uint64_t>(2 * arena_.capacity(), 4096))));
  entries_.push_back({arena_.size(), static_cast<uint32_t>(key.size()), static_cast<uint32_t>(row.size())});
  arena_.append(key);
  arena_.append(row);
  ++rows_;
  return Status::Ok();
}

void RowSorter::SortEntries() {
  const auto less = [&](const Entry& a, const Entry& b) { return KeyOf(a) < KeyOf(b); };
  // Rows often arrive in the result's order already (the merge walks keys
  // in key-byte order, which is the result's for fixed-width text keys):
  // one pass says so, and the sort is skipped.
  if (std::is_sorted(entries_.begin(), entries_.end(), less)) return;
  std::sort(entries_.begin(), entries_.end(), less);
}

Status RowSorter::Spill() {
  if (!dir_made_) {
    OsError e = platform_.CreateDirectories(dir_);
    if (!e.ok()) return e.ToStatus("create", dir_);
    dir_made_ = true;
  }
  SortEntries();
  const std::string path = NewPath();
  files_.push_back(path);  // removed by the destructor even if writing fails
  SortFileWriter w(platform_, path);
  FF_RETURN_IF_ERROR(w.Open());
  for (const Entry& e : entries_)
    FF_RETURN_IF_ERROR(w.Put(KeyOf(e), std::string_view(arena_.data() + e.offset + e.key_len, e.row_len)));
  FF_RETURN_IF_ERROR(w.Close());
  entries_.clear();
  arena_.clear();
  if (files_.size() >= fan_in_) {
    const std::string merged = NewPath();
    std::vector<std::string> inputs;
    inputs.swap(files_);
    files_.push_back(merged);
    Status s = MergeInto(inputs, merged);
    for (const std::string& f : inputs) (void)platform_.Remove(f);
    FF_RETURN_IF_ERROR(s);
  }
  return Status::Ok();
}

Status RowSorter::Finish() {
  finished_ = true;
  if (files_.empty()) {
    SortEntries();
    return Status::Ok();
  }
  if (!entries_.empty()) FF_RETURN_IF_ERROR(Spill());
  std::vector<Entry>().swap(entries_);
  std::string().swap(arena_);
  return Status::Ok();
}

Status RowSorter::Walk(const std::vector<std::string>& files, const KeyedVisitor& visit) const {
  std::vector<std::unique_ptr<FileReader>> readers;
  const size_t buffer = std::clamp<uint64_t>(budget_ / (files.size() + 1), 4096, uint64_t{1} << 20);
  for (const std::string& f : files) {
    readers.push_back(std::make_unique<FileReader>(platform_, f, buffer));
    FF_RETURN_IF_ERROR(readers.back()->Open());
  }
  // Keys are distinct, so the smallest is always one reader's alone.
  auto later = [&](size_t a, size_t b) { return readers[a]->key() > readers[b]->key(); };
  std::priority_queue<size_t, std::vector<size_t>, decltype(later)> heap(later);
  Status s;
  for (size_t i = 0; i < readers.size(); ++i)
    if (readers[i]->Next(&s))
      heap.push(i);
    else
      FF_RETURN_IF_ERROR(s);
  bool stop = false;
  while (!heap.empty() && !stop) {
    const size_t i = heap.top();
    heap.pop();
    FF_RETURN_IF_ERROR(visit(readers[i]->key(), readers[i]->row(), &stop));
    if (readers[i]->Next(&s))
      heap.push(i);
    else
      FF_RETURN_IF_ERROR(s);
  }
  return Status::Ok();
}

Status RowSorter::MergeInto(const std::vector<std::string>& inputs, const std::string& out) const {
  SortFileWriter w(platform_, out);
  FF_RETURN_IF_ERROR(w.Open());
  FF_RETURN_IF_ERROR(Walk(inputs, [&](std::string_view key, std::string_view row, bool*) { return w.Put(key, row); }));
  return w.Close();
}

Status RowSorter::Replay(const Visitor& visit) const {
  if (!finished_) return Status::Internal("RowSorter::Replay before Finish");
  if (!files_.empty())
    return Walk(files_, [&](std::string_view, std::string_view row, bool* stop) { return visit(row, stop); });
  bool stop = false;
  for (const Entry& e : entries_) {
    FF_RETURN_IF_ERROR(visit(std::string_view(arena_.data() + e.offset + e.key_len, e.row_len), &stop));
    if (stop) break;
  }
  return Status::Ok();
}

}  // namespace fanfold
