#include "coordinator/run_manifest.h"

#include <nlohmann/json.hpp>

#include "common/shard_list.h"

namespace fanfold {

using nlohmann::json;

std::string EncodeManifest(const RunManifest& m) {
  json shards = json::array();
  for (const Shard& s : m.shards.shards) {
    json j = {{"index", s.index},   {"path", s.path},     {"size", s.file_size},
              {"mtime_ns", s.mtime_ns}, {"compression", CompressionName(s.compression)}};
    if (s.length != UINT64_MAX) {
      j["offset"] = s.offset;
      j["length"] = s.length;
    }
    shards.push_back(j);
  }
  json doc = {{"fanfold_run", m.version}, {"job", m.job_path},       {"format", m.format},
              {"plan", m.fingerprint},    {"plan_text", m.plan_text}, {"created", m.created_utc},
              {"shards", shards}};
  return doc.dump(1) + "\n";
}

Result<RunManifest> DecodeManifest(const std::string& text, const std::string& where) {
  json doc = json::parse(text, nullptr, false);
  auto bad = [&](const std::string& what) {
    return Status::Corrupt(where + ": not a fanfold run manifest (" + what + ")");
  };
  if (doc.is_discarded() || !doc.is_object()) return bad("not a JSON object");
  try {
    RunManifest m;
    m.version = doc.at("fanfold_run").get<int>();
    if (m.version != kRunDirectoryVersion)
      return bad("version " + std::to_string(m.version) + ", expected " + std::to_string(kRunDirectoryVersion));
    m.job_path = doc.at("job").get<std::string>();
    m.format = doc.at("format").get<std::string>();
    m.fingerprint = doc.at("plan").get<std::string>();
    m.plan_text = doc.at("plan_text").get<std::string>();
    m.created_utc = doc.at("created").get<std::string>();
    if (!FormatFromText(m.format, &m.shards.format)) return bad("unknown format '" + m.format + "'");
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
      m.shards.shards.push_back(s);
    }
    return m;
  } catch (const json::exception& e) {
    return bad(e.what());
  }
}

}  // namespace fanfold
