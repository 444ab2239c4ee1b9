#include "coordinator/rundir/run_record_reader.h"

#include <filesystem>

#include <nlohmann/json.hpp>

#include "common/port/file_util.h"

namespace fanfold {
namespace {

namespace fs = std::filesystem;
using nlohmann::json;

template <typename T>
T Get(const json& j, const char* key, T fallback) {
  auto it = j.find(key);
  if (it == j.end() || it->is_null()) return fallback;
  try {
    return it->get<T>();
  } catch (const json::exception&) {
    return fallback;
  }
}

const json& Sub(const json& j, const char* key) {
  static const json kEmpty = json::object();
  auto it = j.find(key);
  return it != j.end() && it->is_object() ? *it : kEmpty;
}

}  // namespace

std::string RunRecord::ShardPath(uint32_t shard) const {
  if (shard < manifest.shards.shards.size()) return manifest.shards.shards[shard].path;
  return "shard " + std::to_string(shard);
}

void ParseJournal(const std::string& text, const std::string& where, RunRecord* r) {
  size_t pos = 0, line_no = 0;
  while (pos < text.size()) {
    size_t nl = text.find('\n', pos);
    const bool last = nl == std::string::npos;
    const std::string line = text.substr(pos, last ? std::string::npos : nl - pos);
    pos = last ? text.size() : nl + 1;
    ++line_no;
    if (line.empty()) continue;
    json j = json::parse(line, nullptr, false);
    if (j.is_discarded() || !j.is_object() || !j.contains("event")) {
      // A crash can cut the last line short; anything else is worth a word.
      r->warnings.push_back(where + " line " + std::to_string(line_no) +
                            (last ? ": cut short (an interrupted write); ignored" : ": not a journal event; skipped"));
      continue;
    }
    const std::string event = Get<std::string>(j, "event", "");
    if (event == "start") {
      RunSession s;
      s.mode = Get<std::string>(j, "mode", "run");
      s.workers = Get<int>(j, "workers", 0);
      s.pending = Get<uint64_t>(j, "pending", 0);
      s.reused = Get<uint64_t>(j, "reused", 0);
      s.start_ns = Get<uint64_t>(j, "time_ns", 0);
      r->sessions.push_back(s);
    } else if (event == "attempt") {
      if (r->sessions.empty()) r->sessions.push_back(RunSession{});  // a journal without its start line
      AttemptEntry a;
      a.shard = Get<uint32_t>(j, "shard", 0);
      a.attempt = Get<uint32_t>(j, "attempt", 1);
      a.worker = Get<int>(j, "worker", 0);
      a.start_ns = Get<uint64_t>(j, "start_ns", 0);
      a.end_ns = Get<uint64_t>(j, "end_ns", a.start_ns);
      a.outcome = Get<std::string>(j, "outcome", "?");
      a.final = Get<bool>(j, "final", true);
      a.session = r->sessions.size() - 1;
      a.records = Get<uint64_t>(j, "records", 0);
      a.kept = Get<uint64_t>(j, "kept", 0);
      a.malformed = Get<uint64_t>(j, "malformed", 0);
      a.bytes_in = Get<uint64_t>(j, "bytes_in", 0);
      a.bytes_raw = Get<uint64_t>(j, "bytes_raw", 0);
      a.read_ns = Get<uint64_t>(j, "read_ns", 0);
      a.parse_ns = Get<uint64_t>(j, "parse_ns", 0);
      a.aggregate_ns = Get<uint64_t>(j, "aggregate_ns", 0);
      a.encode_ns = Get<uint64_t>(j, "encode_ns", 0);
      a.message = Get<std::string>(j, "message", "");
      RunSession& s = r->sessions.back();
      if (s.start_ns == 0 || a.start_ns < s.start_ns) s.start_ns = a.start_ns;
      r->attempts.push_back(std::move(a));
    } else if (event == "finish" || event == "interrupted") {
      if (r->sessions.empty()) continue;
      RunSession& s = r->sessions.back();
      s.end_ns = Get<uint64_t>(j, "time_ns", 0);
      s.finished = event == "finish";
      s.interrupted = event == "interrupted";
    }
    // Unknown events: written by a newer fanfold; nothing to draw.
  }
}

Status ParseSummary(const std::string& text, const std::string& where, SummaryRecord* out) {
  json j = json::parse(text, nullptr, false);
  if (j.is_discarded() || !j.is_object()) return Status::Corrupt(where + ": not a JSON object");
  SummaryRecord s;
  s.present = true;
  s.job = Get<std::string>(j, "job", "");
  s.plan = Get<std::string>(j, "plan", "");
  s.output = Get<std::string>(j, "output", "");
  s.workers = Get<int>(j, "workers", 0);
  const json& shards = Sub(j, "shards");
  s.shards_total = Get<uint64_t>(shards, "total", 0);
  s.shards_done = Get<uint64_t>(shards, "done", 0);
  s.shards_failed = Get<uint64_t>(shards, "failed", 0);
  s.shards_reused = Get<uint64_t>(shards, "reused", 0);
  s.retries = Get<uint64_t>(shards, "retries", 0);
  const json& records = Sub(j, "records");
  s.records_read = Get<uint64_t>(records, "read", 0);
  s.records_kept = Get<uint64_t>(records, "kept", 0);
  s.records_malformed = Get<uint64_t>(records, "malformed", 0);
  const json& bytes = Sub(j, "bytes");
  s.bytes_compressed = Get<uint64_t>(bytes, "compressed", 0);
  s.bytes_decompressed = Get<uint64_t>(bytes, "decompressed", 0);
  s.wall_seconds = Get<double>(j, "wall_seconds", 0);
  if (auto it = j.find("failed"); it != j.end() && it->is_array()) {
    for (const json& f : *it) {
      if (!f.is_object()) continue;
      s.failed.push_back({Get<uint32_t>(f, "shard", 0), Get<std::string>(f, "path", ""),
                          Get<std::string>(f, "reason", ""), Get<uint32_t>(f, "attempts", 0)});
    }
  }
  if (auto it = j.find("malformed_samples"); it != j.end() && it->is_array()) {
    for (const json& m : *it) {
      if (!m.is_object()) continue;
      s.samples.push_back({Get<uint32_t>(m, "shard", 0), Get<std::string>(m, "path", ""),
                           Get<std::string>(m, "reason", ""), Get<uint64_t>(m, "line", 0)});
    }
  }
  if (auto it = j.find("skipped"); it != j.end() && it->is_object()) {
    for (auto kv = it->begin(); kv != it->end(); ++kv)
      if (kv->is_number_unsigned()) s.skipped[kv.key()] = kv->get<uint64_t>();
  }
  *out = std::move(s);
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
