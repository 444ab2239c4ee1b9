#include "coordinator/rundir/run_journal.h"

#include <charconv>

#include "common/base/cell_text.h"
#include "common/base/json_document.h"

namespace fanfold {
namespace {

using nlohmann::json;

const char* OutcomeName(AttemptRecord::Outcome o) {
  switch (o) {
    case AttemptRecord::Outcome::kDone: return "done";
    case AttemptRecord::Outcome::kFailed: return "failed";
    case AttemptRecord::Outcome::kDied: return "died";
    case AttemptRecord::Outcome::kTimedOut: return "timed-out";
    case AttemptRecord::Outcome::kRejected: return "rejected";
  }
  return "?";
}

}  // namespace

// The start, interrupted and finish lines go through a json object, whose
// dump orders keys alphabetically; the attempt line, written by hand, keeps
// the order below. Both orders are what journals on disk already hold.
std::string StartEventLine(const std::string& mode, int64_t pid, int workers, uint64_t pending, uint64_t reused,
                           uint64_t time_ns) {
  return json{{"event", "start"},   {"mode", mode},     {"pid", pid},        {"workers", workers},
              {"pending", pending}, {"reused", reused}, {"time_ns", time_ns}}
      .dump();
}

std::string GenerationEventLine(const GenerationEntry& g) {
  return json{{"event", "generation"},
              {"generation", g.generation},
              {"time_ns", g.time_ns},
              {"reused", g.reused},
              {"computed", g.computed},
              {"dropped", g.dropped},
              {"computed_paths", g.computed_paths},
              {"dropped_paths", g.dropped_paths}}
      .dump();
}

std::string CompactEventLine(uint64_t time_ns, uint64_t packs_removed, uint64_t packs_rewritten,
                             uint64_t partials_copied, uint64_t bytes_freed) {
  return json{{"event", "compact"},
              {"time_ns", time_ns},
              {"packs_removed", packs_removed},
              {"packs_rewritten", packs_rewritten},
              {"partials_copied", partials_copied},
              {"bytes_freed", bytes_freed}}
      .dump();
}

std::string InterruptedEventLine(uint64_t time_ns) {
  return json{{"event", "interrupted"}, {"time_ns", time_ns}}.dump();
}

std::string FinishEventLine(uint64_t time_ns, uint64_t failed) {
  return json{{"event", "finish"}, {"time_ns", time_ns}, {"failed", failed}}.dump();
}

std::string AttemptEventLine(const AttemptRecord& r) {
  std::string line;
  line.reserve(320);
  // Digits straight into the line (to_chars): one line per shard, and
  // thousands of tiny shards a second.
  auto digits = [&line](auto v) {
    char buf[24];
    const auto [end, ec] = std::to_chars(buf, buf + sizeof buf, v);
    line.append(buf, static_cast<size_t>(end - buf));
  };
  auto number = [&line, &digits](const char* key, uint64_t v) {
    line += ",\"";
    line += key;
    line += "\":";
    digits(v);
  };
  line += "{\"event\":\"attempt\"";
  number("shard", r.shard);
  number("attempt", r.attempt);
  line += ",\"worker\":";
  digits(r.worker);
  if (!r.node.empty()) {
    line += ",\"node\":";
    AppendJsonString(r.node, &line);
  }
  number("start_ns", r.start_ns);
  number("end_ns", r.end_ns);
  line += ",\"outcome\":";
  AppendJsonString(OutcomeName(r.outcome), &line);
  line += r.final ? ",\"final\":true" : ",\"final\":false";
  if (r.outcome == AttemptRecord::Outcome::kDone) {
    const PartialHeader& h = r.header;
    number("records", h.records);
    number("kept", h.kept);
    number("malformed", h.malformed);
    number("bytes_in", h.compressed_bytes);
    number("bytes_raw", h.raw_bytes);
    number("read_ns", h.read_ns);
    number("parse_ns", h.parse_ns);
    number("aggregate_ns", h.aggregate_ns);
    number("encode_ns", h.encode_ns);
    // Since fanfold measures all four phases; journals without the key hold
    // the earlier estimates (parsing was the remainder of a sampled guess).
    line += ",\"phases\":\"measured\"";
  } else {
    line += ",\"message\":";
    AppendJsonString(r.message, &line);
  }
  line += '}';
  return line;
}

void ParseJournal(const std::string& text, const std::string& where, std::vector<RunSession>* sessions,
                  std::vector<AttemptEntry>* attempts, std::vector<std::string>* warnings) {
  size_t pos = 0, line_no = 0;
  uint32_t generation = 1;  // the run's, until a "generation" event
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
      warnings->push_back(where + " line " + std::to_string(line_no) +
                          (last ? ": cut short (an interrupted write); ignored" : ": not a journal event; skipped"));
      continue;
    }
    const std::string event = JsonValueOr<std::string>(j, "event", "");
    if (event == "generation") {
      generation = JsonValueOr<uint32_t>(j, "generation", generation + 1);
    } else if (event == "start") {
      RunSession s;
      s.generation = generation;
      s.mode = JsonValueOr<std::string>(j, "mode", "run");
      s.workers = JsonValueOr<int>(j, "workers", 0);
      s.pending = JsonValueOr<uint64_t>(j, "pending", 0);
      s.reused = JsonValueOr<uint64_t>(j, "reused", 0);
      s.start_ns = JsonValueOr<uint64_t>(j, "time_ns", 0);
      sessions->push_back(s);
    } else if (event == "attempt") {
      if (sessions->empty()) sessions->push_back(RunSession{});  // a journal without its start line
      AttemptEntry a;
      a.shard = JsonValueOr<uint32_t>(j, "shard", 0);
      a.attempt = JsonValueOr<uint32_t>(j, "attempt", 1);
      a.worker = JsonValueOr<int>(j, "worker", 0);
      a.node = JsonValueOr<std::string>(j, "node", "");
      a.start_ns = JsonValueOr<uint64_t>(j, "start_ns", 0);
      a.end_ns = JsonValueOr<uint64_t>(j, "end_ns", a.start_ns);
      a.outcome = JsonValueOr<std::string>(j, "outcome", "?");
      a.final = JsonValueOr<bool>(j, "final", true);
      a.session = sessions->size() - 1;
      a.records = JsonValueOr<uint64_t>(j, "records", 0);
      a.kept = JsonValueOr<uint64_t>(j, "kept", 0);
      a.malformed = JsonValueOr<uint64_t>(j, "malformed", 0);
      a.bytes_in = JsonValueOr<uint64_t>(j, "bytes_in", 0);
      a.bytes_raw = JsonValueOr<uint64_t>(j, "bytes_raw", 0);
      a.read_ns = JsonValueOr<uint64_t>(j, "read_ns", 0);
      a.parse_ns = JsonValueOr<uint64_t>(j, "parse_ns", 0);
      a.aggregate_ns = JsonValueOr<uint64_t>(j, "aggregate_ns", 0);
      a.encode_ns = JsonValueOr<uint64_t>(j, "encode_ns", 0);
      a.phases_measured = JsonValueOr<std::string>(j, "phases", "") == "measured";
      a.message = JsonValueOr<std::string>(j, "message", "");
      RunSession& s = sessions->back();
      if (s.start_ns == 0 || a.start_ns < s.start_ns) s.start_ns = a.start_ns;
      attempts->push_back(std::move(a));
    } else if (event == "finish" || event == "interrupted") {
      if (sessions->empty()) continue;
      RunSession& s = sessions->back();
      s.end_ns = JsonValueOr<uint64_t>(j, "time_ns", 0);
      s.finished = event == "finish";
      s.interrupted = event == "interrupted";
    }
    // Unknown events: written by a newer fanfold; nothing to draw.
  }
}

std::vector<GenerationEntry> ParseGenerations(const std::string& text) {
  std::vector<GenerationEntry> out;
  bool open = false;  // the last generation has not seen its finish
  size_t pos = 0;
  while (pos < text.size()) {
    size_t nl = text.find('\n', pos);
    const std::string line = text.substr(pos, nl == std::string::npos ? std::string::npos : nl - pos);
    pos = nl == std::string::npos ? text.size() : nl + 1;
    json j = json::parse(line, nullptr, false);
    if (j.is_discarded() || !j.is_object()) continue;  // ParseJournal warns about these
    const std::string event = JsonValueOr<std::string>(j, "event", "");
    if (event == "start" && out.empty() && JsonValueOr<std::string>(j, "mode", "") == "run") {
      GenerationEntry g;
      g.time_ns = JsonValueOr<uint64_t>(j, "time_ns", 0);
      g.computed = JsonValueOr<uint64_t>(j, "pending", 0);
      out.push_back(std::move(g));
      open = true;
    } else if (event == "generation") {
      GenerationEntry g;
      g.generation = JsonValueOr<uint32_t>(j, "generation", static_cast<uint32_t>(out.size() + 1));
      g.time_ns = JsonValueOr<uint64_t>(j, "time_ns", 0);
      g.reused = JsonValueOr<uint64_t>(j, "reused", 0);
      g.computed = JsonValueOr<uint64_t>(j, "computed", 0);
      g.dropped = JsonValueOr<uint64_t>(j, "dropped", 0);
      g.computed_paths = JsonValueOr<std::vector<std::string>>(j, "computed_paths", {});
      g.dropped_paths = JsonValueOr<std::vector<std::string>>(j, "dropped_paths", {});
      out.push_back(std::move(g));
      open = true;
    } else if (event == "finish" && open) {
      out.back().end_ns = JsonValueOr<uint64_t>(j, "time_ns", 0);
      open = false;
    }
  }
  return out;
}

json AttemptEntryJson(const AttemptEntry& a) {
  json j = {{"shard", a.shard},
            {"attempt", a.attempt},
            {"worker", a.worker},
            {"outcome", a.outcome},
            {"final", a.final},
            {"start_ns", a.start_ns},
            {"end_ns", a.end_ns},
            {"read_ns", a.read_ns},
            {"parse_ns", a.parse_ns},
            {"aggregate_ns", a.aggregate_ns},
            {"encode_ns", a.encode_ns},
            {"bytes_in", a.bytes_in},
            {"bytes_raw", a.bytes_raw},
            {"records", a.records},
            {"kept", a.kept},
            {"malformed", a.malformed}};
  if (!a.node.empty()) j["node"] = a.node;
  if (a.done()) j["phases"] = a.phases_measured ? "measured" : "estimated";
  if (!a.done()) j["message"] = a.message;
  return j;
}

}  // namespace fanfold
