#include "coordinator/rundir/run_record_reader.h"

#include <algorithm>
#include <cstdint>
#include <filesystem>

#include <nlohmann/json.hpp>

#include "common/base/json_document.h"
#include "common/port/files/file_util.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

// summary.json's fields, each optional (a summary from another version
// still shows what it has).
Result<SummaryRecord> SummaryFrom(const json& j) {
  SummaryRecord s;
  s.present = true;
  s.job = JsonValueOr<std::string>(j, "job", "");
  s.plan = JsonValueOr<std::string>(j, "plan", "");
  s.output = JsonValueOr<std::string>(j, "output", "");
  s.workers = JsonValueOr<int>(j, "workers", 0);
  const json& shards = JsonObjectOrEmpty(j, "shards");
  s.shards_total = JsonValueOr<uint64_t>(shards, "total", 0);
  s.shards_done = JsonValueOr<uint64_t>(shards, "done", 0);
  s.shards_failed = JsonValueOr<uint64_t>(shards, "failed", 0);
  s.shards_reused = JsonValueOr<uint64_t>(shards, "reused", 0);
  s.retries = JsonValueOr<uint64_t>(shards, "retries", 0);
  const json& records = JsonObjectOrEmpty(j, "records");
  s.records_read = JsonValueOr<uint64_t>(records, "read", 0);
  s.records_kept = JsonValueOr<uint64_t>(records, "kept", 0);
  s.records_malformed = JsonValueOr<uint64_t>(records, "malformed", 0);
  const json& bytes = JsonObjectOrEmpty(j, "bytes");
  s.bytes_compressed = JsonValueOr<uint64_t>(bytes, "compressed", 0);
  s.bytes_decompressed = JsonValueOr<uint64_t>(bytes, "decompressed", 0);
  s.wall_seconds = JsonValueOr<double>(j, "wall_seconds", 0);
  const json& peak = JsonObjectOrEmpty(j, "peak_rss_bytes");
  s.peak_rss = JsonValueOr<uint64_t>(peak, "coordinator", 0);
  s.peak_worker_rss = JsonValueOr<uint64_t>(peak, "largest_worker", 0);
  if (j.contains("processed")) {
    const json& processed = JsonObjectOrEmpty(j, "processed");
    s.has_processed = true;
    s.processed_shards = JsonValueOr<uint64_t>(shards, "processed", 0);
    s.processed_records = JsonValueOr<uint64_t>(processed, "records", 0);
    s.processed_bytes_decompressed = JsonValueOr<uint64_t>(JsonObjectOrEmpty(processed, "bytes"), "decompressed", 0);
  }
  if (auto it = j.find("failed"); it != j.end() && it->is_array()) {
    for (const json& f : *it) {
      if (!f.is_object()) continue;
      s.failed.push_back({JsonValueOr<uint32_t>(f, "shard", 0), JsonValueOr<std::string>(f, "path", ""),
                          JsonValueOr<std::string>(f, "reason", ""), JsonValueOr<uint32_t>(f, "attempts", 0)});
    }
  }
  if (auto it = j.find("malformed_samples"); it != j.end() && it->is_array()) {
    for (const json& m : *it) {
      if (!m.is_object()) continue;
      s.samples.push_back({JsonValueOr<uint32_t>(m, "shard", 0), JsonValueOr<std::string>(m, "path", ""),
                           JsonValueOr<std::string>(m, "reason", ""), JsonValueOr<uint64_t>(m, "line", 0)});
    }
  }
  const auto read_skipped = [](const json& obj, std::map<std::string, uint64_t>* out) {
    if (auto it = obj.find("skipped"); it != obj.end() && it->is_object()) {
      for (auto kv = it->begin(); kv != it->end(); ++kv)
        if (kv->is_number_unsigned()) (*out)[kv.key()] = kv->get<uint64_t>();
    }
  };
  read_skipped(j, &s.skipped);
  if (auto it = j.find("reductions"); it != j.end() && it->is_array()) {
    for (const json& r : *it) {
      if (!r.is_object()) continue;
      SummaryRecord::Reduction red;
      red.name = JsonValueOr<std::string>(r, "name", "");
      red.result = JsonValueOr<std::string>(r, "result", "");
      red.output = JsonValueOr<std::string>(r, "output", "");
      red.kept = JsonValueOr<uint64_t>(r, "kept", 0);
      read_skipped(r, &red.skipped);
      s.reductions.push_back(std::move(red));
    }
  }
  return s;
}

}  // namespace

std::string RunRecord::ShardPath(uint32_t shard) const {
  if (shard < manifest.shards.shards.size()) return manifest.shards.shards[shard].path;
  return "shard " + std::to_string(shard);
}

void ParseJournal(const std::string& text, const std::string& where, RunRecord* r) {
  std::vector<RunSession> sessions;
  std::vector<AttemptEntry> attempts;
  ParseJournal(text, where, &sessions, &attempts, &r->warnings);
  r->generations = ParseGenerations(text);
  uint32_t last = 1;
  for (const RunSession& s : sessions) last = std::max(last, s.generation);
  std::vector<size_t> kept(sessions.size(), SIZE_MAX);  // old session index -> new one
  for (size_t i = 0; i < sessions.size(); ++i) {
    if (sessions[i].generation != last) {
      ++r->earlier_sessions;
      continue;
    }
    kept[i] = r->sessions.size();
    r->sessions.push_back(sessions[i]);
  }
  for (AttemptEntry& a : attempts) {
    if (kept[a.session] == SIZE_MAX) continue;
    a.session = kept[a.session];
    r->attempts.push_back(std::move(a));
  }
}

Status ParseSummary(const std::string& text, const std::string& where, SummaryRecord* out) {
  auto bad = [&](const std::string& what) { return Status::Corrupt(where + ": " + what); };
  Result<SummaryRecord> decoded = DecodeJsonObject<SummaryRecord>(text, bad, SummaryFrom);
  if (!decoded.ok()) return decoded.status();
  *out = std::move(*decoded);
  return Status::Ok();
}

Result<RunRecord> ReadRunRecord(const std::string& dir) {
  RunRecord r;
  std::error_code ec;
  fs::path abs = fs::absolute(dir, ec).lexically_normal();
  r.dir = abs.string();
  if (!r.dir.empty() && r.dir.size() > 1 && r.dir.back() == '/') r.dir.pop_back();
  std::string text;
  const std::string manifest_path = (abs / "run.json").string();
  if (!fs::exists(abs / "run.json", ec))
    return Status::InvalidArgument("'" + dir + "' is not a run directory (it has no run.json)");
  FF_RETURN_IF_ERROR(ReadWholeFile(manifest_path, &text));
  Result<RunManifest> m = DecodeManifest(text, manifest_path);
  if (!m.ok()) return m.status();
  r.manifest = std::move(*m);

  const fs::path journal = abs / "journal.ndjson";
  if (fs::exists(journal, ec)) {
    text.clear();
    FF_RETURN_IF_ERROR(ReadWholeFile(journal.string(), &text));
    ParseJournal(text, journal.string(), &r);
  } else {
    r.warnings.push_back(journal.string() + " is missing: no attempts to show");
  }

  const fs::path summary = abs / "summary.json";
  if (fs::exists(summary, ec)) {
    text.clear();
    FF_RETURN_IF_ERROR(ReadWholeFile(summary.string(), &text));
    Status s = ParseSummary(text, summary.string(), &r.summary);
    if (!s.ok()) r.warnings.push_back(s.message() + "; the summary is left out");
  }
  return r;
}

}  // namespace fanfold
