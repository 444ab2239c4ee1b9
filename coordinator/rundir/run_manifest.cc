#include "coordinator/rundir/run_manifest.h"

#include <algorithm>

#include <nlohmann/json.hpp>

#include "common/base/cell_text.h"
#include "common/base/json_document.h"
#include "common/job/shard_list.h"

namespace fanfold {

using nlohmann::json;

// Written by hand, one shard a line: a json document of 10,000 shard
// objects cost more to build than the rest of a run of tiny shards.
std::string EncodeManifest(const RunManifest& m) {
  std::string out;
  out.reserve(256 + m.shards.shards.size() * 160);
  auto field = [&out](const char* key, const std::string& value, bool last = false) {
    out += " \"";
    out += key;
    out += "\": ";
    AppendJsonString(value, &out);
    out += last ? "\n" : ",\n";
  };
  out += "{\n \"fanfold_run\": " + std::to_string(m.version) + ",\n";
  field("job", m.job_path);
  field("format", m.format);
  field("plan", m.fingerprint);
  field("plan_text", m.plan_text);
  field("created", m.created_utc);
  out += " \"generation\": " + std::to_string(m.generation) + ",\n";
  if (m.part.number != 0) {
    out += " \"part\": {\"number\": " + std::to_string(m.part.number) + ", \"of\": " + std::to_string(m.part.count) +
           ", \"first_shard\": " + std::to_string(m.part.first_shard) +
           ", \"total_shards\": " + std::to_string(m.part.total_shards) + ", \"shard_list\": ";
    AppendJsonString(m.part.list_digest, &out);
    out += "},\n";
  }
  out += " \"attempts\": " + std::to_string(m.attempts) + ",\n \"shard_time_limit_ms\": " +
         std::to_string(m.shard_time_limit_ms) + ",\n";
  out += " \"shards\": [";
  bool first = true;
  for (size_t i = 0; i < m.shards.shards.size(); ++i) {
    const Shard& s = m.shards.shards[i];
    out += first ? "\n  {\"index\": " : ",\n  {\"index\": ";
    first = false;
    out += std::to_string(s.index) + ", \"slot\": " + std::to_string(m.SlotOf(i)) + ", \"path\": ";
    AppendJsonString(s.path, &out);
    out += ", \"size\": " + std::to_string(s.file_size) + ", \"mtime_ns\": " + std::to_string(s.mtime_ns) +
           ", \"compression\": ";
    AppendJsonString(CompressionName(s.compression), &out);
    if (s.length != UINT64_MAX)
      out += ", \"offset\": " + std::to_string(s.offset) + ", \"length\": " + std::to_string(s.length);
    out += '}';
  }
  out += first ? "]\n}\n" : "\n ]\n}\n";
  return out;
}

Result<RunManifest> DecodeManifest(const std::string& text, const std::string& where) {
  auto bad = [&](const std::string& what) {
    return Status::Corrupt(where + ": not a fanfold run manifest (" + what + ")");
  };
  return DecodeJsonObject<RunManifest>(text, bad, [&](const json& doc) -> Result<RunManifest> {
    RunManifest m;
    m.version = doc.at("fanfold_run").get<int>();
    if (m.version != kRunDirectoryVersion)
      return bad("version " + std::to_string(m.version) + ", expected " + std::to_string(kRunDirectoryVersion));
    m.job_path = doc.at("job").get<std::string>();
    m.format = doc.at("format").get<std::string>();
    m.fingerprint = doc.at("plan").get<std::string>();
    m.plan_text = doc.at("plan_text").get<std::string>();
    m.created_utc = doc.at("created").get<std::string>();
    // Absent from run directories written before `resume` took these flags.
    if (doc.contains("attempts")) m.attempts = doc.at("attempts").get<uint32_t>();
    if (doc.contains("shard_time_limit_ms")) m.shard_time_limit_ms = doc.at("shard_time_limit_ms").get<uint64_t>();
    if (!FormatFromText(m.format, &m.shards.format)) return bad("unknown format '" + m.format + "'");
    if (doc.contains("generation")) m.generation = doc.at("generation").get<uint32_t>();
    if (doc.contains("part")) {
      const json& p = doc.at("part");
      m.part.number = p.at("number").get<uint32_t>();
      m.part.count = p.at("of").get<uint32_t>();
      m.part.first_shard = p.at("first_shard").get<uint32_t>();
      m.part.total_shards = p.at("total_shards").get<uint32_t>();
      m.part.list_digest = p.at("shard_list").get<std::string>();
      if (m.part.number < 1 || m.part.number > m.part.count) return bad("part number outside 1..of");
    }
    bool any_slot = false;
    for (const json& j : doc.at("shards")) {
      Shard s;
      s.index = j.at("index").get<uint32_t>();
      s.path = j.at("path").get<std::string>();
      s.file_size = j.at("size").get<uint64_t>();
      s.mtime_ns = j.at("mtime_ns").get<int64_t>();
      std::string c = j.at("compression").get<std::string>();
      s.compression = c == "zstd" ? Compression::kZstd : c == "gzip" ? Compression::kGzip : Compression::kNone;
      if (j.contains("offset")) {
        s.offset = j.at("offset").get<uint64_t>();
        s.length = j.at("length").get<uint64_t>();
      }
      if (s.index != m.shards.shards.size()) return bad("shard indices out of order");
      // Absent from run directories written before `refresh`: slot = index.
      const bool has_slot = j.contains("slot");
      if (has_slot != any_slot && !m.shards.shards.empty()) return bad("some shards have a slot and some do not");
      any_slot = has_slot;
      if (has_slot) m.slots.push_back(j.at("slot").get<uint32_t>());
      m.shards.shards.push_back(s);
    }
    std::vector<uint32_t> sorted = m.slots;
    std::sort(sorted.begin(), sorted.end());
    if (std::adjacent_find(sorted.begin(), sorted.end()) != sorted.end()) return bad("two shards share a slot");
    return m;
  });
}

std::vector<uint32_t> RunManifest::AllSlots() const {
  std::vector<uint32_t> out(shards.shards.size());
  for (size_t i = 0; i < out.size(); ++i) out[i] = SlotOf(i);
  return out;
}

}  // namespace fanfold
