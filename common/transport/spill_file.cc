#include "common/transport/spill_file.h"

#include <memory>

#include "common/port/files/durable_write.h"
#include "common/port/platform.h"

namespace fanfold {
namespace {

// No directory sync: a spill file lives only until the coordinator takes it,
// and a crash of either side abandons the attempt anyway.
DurableWritePolicy SpillPolicy() {
  DurableWritePolicy p;
  p.temp_name = DurableWritePolicy::TempName::kSuffix;
  p.permissions = 0600;
  p.sync = SyncDepth::kFull;
  p.dir_sync = DurableWritePolicy::DirSync::kNone;
  p.create_verb = "create spill file";
  p.write_verb = "write spill file";
  p.sync_verb = "sync spill file";
  p.rename_verb = "rename spill file to";
  return p;
}

}  // namespace

std::string SpillFileName(std::string_view segment, uint32_t slot, uint64_t seq) {
  return std::string(segment) + "-w" + std::to_string(slot) + "-" + std::to_string(seq) + ".partial";
}

bool IsPlainFileName(std::string_view name) {
  return !name.empty() && name != "." && name != ".." &&
         name.find_first_of(std::string_view("/\0", 2)) == std::string_view::npos;
}

Status WriteSpillFile(const std::string& dir, const std::string& name, std::string_view bytes) {
  if (!IsPlainFileName(name)) return Status::InvalidArgument("bad spill file name '" + name + "'");
  static const DurableWritePolicy kPolicy = SpillPolicy();
  return WriteFileDurably(Platform::Posix(), dir + "/" + name, bytes, kPolicy);
}

Status TakeSpillFile(const std::string& dir, const std::string& name, uint64_t expected_length,
                     std::string* out) {
  if (!IsPlainFileName(name)) return Status::Corrupt("bad spill file name '" + name + "'");
  Platform& platform = Platform::Posix();
  const std::string path = dir + "/" + name;
  std::unique_ptr<ReadableFile> file;
  OsError e = platform.OpenForRead(path, &file);
  if (!e.ok()) return e.ToStatus("open spill file", path);
  (void)platform.Remove(path);  // the open file keeps the bytes readable
  uint64_t size = 0;
  e = file->Size(&size);
  if (!e.ok()) return e.ToStatus("stat spill file", path);
  if (size != expected_length) {
    return Status::Corrupt("spill file '" + path + "' has " + std::to_string(size) +
                           " bytes, the worker reported " + std::to_string(expected_length));
  }
  out->resize(expected_length);
  e = file->ReadAt(0, expected_length, out->data());
  if (!e.ok()) {
    out->clear();
    return e.ToStatus("read spill file", path);
  }
  return Status::Ok();
}

}  // namespace fanfold
