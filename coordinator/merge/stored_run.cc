#include "coordinator/merge/stored_run.h"

#include "common/base/byte_io.h"

namespace fanfold {

std::unique_ptr<StoredRun> StoredRun::FromEncoding(std::string encoding) {
  std::unique_ptr<StoredRun> run(new StoredRun());
  ByteReader r(encoding);
  const uint64_t count = r.Varint();
  run->skip_ = encoding.size() - r.remaining();
  run->groups_.push_back(count);
  run->groups_total_ = count;
  run->bytes_ = encoding.size();
  run->bodies_.push_back(std::move(encoding));
  return run;
}

std::unique_ptr<StoredRun> StoredRun::InMemory(std::vector<std::string> bodies, std::vector<uint64_t> groups) {
  std::unique_ptr<StoredRun> run(new StoredRun());
  for (const std::string& b : bodies) run->bytes_ += b.size();
  for (uint64_t g : groups) run->groups_total_ += g;
  run->bodies_ = std::move(bodies);
  run->groups_ = std::move(groups);
  return run;
}

Result<std::unique_ptr<StoredRun>> StoredRun::Spilled(SpillFolder* folder, std::vector<std::string> names,
                                                      std::vector<uint64_t> groups) {
  std::unique_ptr<StoredRun> run(new StoredRun());
  run->folder_ = folder;
  run->names_ = std::move(names);
  run->groups_ = std::move(groups);
  for (uint64_t g : run->groups_) run->groups_total_ += g;
  for (const std::string& name : run->names_) {
    Result<std::unique_ptr<MappedFile>> m = MappedFile::Open(folder->PathOf(name));
    if (!m.ok()) return m.status();
    run->bytes_ += (*m)->bytes().size();
    run->maps_.push_back(std::move(*m));
  }
  return run;
}

StoredRun::~StoredRun() {
  maps_.clear();  // unmapped before their files go
  if (folder_ != nullptr)
    for (const std::string& name : names_) folder_->RemoveFile(name);
}

std::vector<RunPiece> StoredRun::pieces() const {
  std::vector<RunPiece> out;
  for (size_t i = 0; i < bodies_.size(); ++i)
    out.push_back({std::string_view(bodies_[i]).substr(i == 0 ? skip_ : 0), groups_[i], nullptr});
  for (size_t i = 0; i < maps_.size(); ++i) out.push_back({maps_[i]->bytes(), groups_[i], maps_[i].get()});
  return out;
}

}  // namespace fanfold
