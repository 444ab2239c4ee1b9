// A small synthetic RunRecord for the report tests: ten shards on two
// workers, shard 9 ten times slower than the rest, shard 3 retried after a
// worker death, shard 4 with 7 malformed records; no summary.json.
#pragma once

#include "coordinator/rundir/run_record_reader.h"

namespace fanfold {

inline RunRecord SampleRecord() {
  RunRecord r;
  r.dir = "/runs/x";
  r.manifest.job_path = "/jobs/x.json";
  r.manifest.fingerprint = "00ff";
  for (uint32_t i = 0; i < 10; ++i) {
    Shard s;
    s.index = i;
    s.path = "/d/s" + std::to_string(i) + ".ndjson.zst";
    r.manifest.shards.shards.push_back(s);
  }
  RunSession session;
  session.workers = 2;
  session.start_ns = 1'000'000'000;
  r.sessions.push_back(session);
  uint64_t t[2] = {session.start_ns, session.start_ns};
  auto add = [&](uint32_t shard, int worker, uint64_t ns, const char* outcome, bool final, uint32_t attempt) {
    AttemptEntry a;
    a.shard = shard;
    a.attempt = attempt;
    a.worker = worker;
    a.start_ns = t[worker];
    a.end_ns = t[worker] + ns;
    t[worker] = a.end_ns;
    a.outcome = outcome;
    a.final = final;
    if (a.done()) {
      a.records = 1000;
      a.kept = 990;
      a.malformed = shard == 4 ? 7 : 0;
      a.bytes_raw = 1'000'000;
      a.read_ns = ns / 4, a.parse_ns = ns / 2, a.aggregate_ns = ns / 8, a.encode_ns = ns / 8;
    } else {
      a.message = "worker exited";
    }
    r.attempts.push_back(a);
  };
  add(9, 0, 1'000'000'000, "done", true, 1);
  for (uint32_t s = 0; s < 9; ++s) {
    if (s == 3) add(3, 1, 50'000'000, "died", false, 1);
    add(s, 1, 100'000'000, "done", true, s == 3 ? 2 : 1);
  }
  return r;
}

}  // namespace fanfold
