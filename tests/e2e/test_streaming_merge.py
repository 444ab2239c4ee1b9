"""The merge as sorted runs gives the in-memory merge's bytes (issue 14, items 1-2).

Eight NDJSON shards of 30,000 lamp readings each (invented: lamp ids drawn
from 200,000, so about 140,000 groups, every shard bringing new ones and
meeting old ones) grouped by lamp with count, integer sum, min, max, mean,
exact distinct and DDSketch. Checked:

* the result with the coordinator's in-memory tables (kept whatever their
  size with the test-only switch FANFOLD_TEST_ONLY_MERGE_RUNS=0) equals, byte
  for byte, the result folded as sorted runs (docs/streaming-merge.md):
  forced with FANFOLD_TEST_ONLY_MERGE_RUNS=GROUPS:THREADS from the first
  group, past 20,000 and 50,000 groups, over 1, 2 and 3 key ranges, at -j 1,
  2 and 3; and under memory caps small enough (--memory-cap 6MiB, or the
  job's "memory_cap") that the runs go to spill files in the run directory
  (FANFOLD_TEST_ONLY_MERGE_RUNS=cap:THREADS keeps the cap's rule over 1-3
  key ranges) — the debug log says whether runs and spill files were used,
  and no spill file is left after the run; under the default cap (a quarter
  of the machine's memory) these 140,000 groups pass the tables' 64 MiB
  ceiling (estimated) and are folded as runs in memory;
* the in-memory tables merged on 1, 2, 3 and 7 threads, one key range each
  (the test-only switch FANFOLD_TEST_ONLY_MERGE_THREADS=N;
  coordinator/merge/range_tables.h), give the same bytes;
* every group against sqlite3 (Python's stdlib module): GROUP BY lamp with
  COUNT(*), SUM(power) (integers: exact in both), MIN/MAX(latency),
  COUNT(DISTINCT power), and AVG(power) within 1e-12 relative (sqlite3 sums
  then divides; fanfold's mean is Welford's, docs/measures.md).
"""

import json
import os
import random
import sqlite3

import e2e_lib as lib

SHARDS = 8
PER_SHARD = 30000
LAMP_IDS = 200000


def write_shards(env):
    rnd = random.Random(20261214)
    rows = []
    for s in range(SHARDS):
        path = env.path("lamps", "readings-%02d.ndjson" % s)
        with open(path, "w") as f:
            for _ in range(PER_SHARD):
                lamp = "NL-%06d" % rnd.randrange(LAMP_IDS)
                power = rnd.randrange(0, 240)
                latency = rnd.randrange(1, 4000) / 10
                rows.append((lamp, power, latency))
                f.write(json.dumps({"lamp": lamp, "power_w": power, "latency_ms": latency}) + "\n")
    return rows


JOB_MEASURES = [
    {"name": "n", "fn": "count"},
    {"name": "energy", "fn": "sum", "of": "{/power_w}"},
    {"name": "lat_lo", "fn": "min", "of": "{/latency_ms}"},
    {"name": "lat_hi", "fn": "max", "of": "{/latency_ms}"},
    {"name": "power_mean", "fn": "mean", "of": "{/power_w}"},
    {"name": "levels", "fn": "distinct", "of": "{/power_w}"},
    {"name": "lat", "fn": "ddsketch", "of": "{/latency_ms}", "at": [0.5]},
]


def sqlite_expected(rows):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (lamp TEXT, power INTEGER, latency REAL)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?)", rows)
    out = {}
    for lamp, n, energy, lo, hi, levels, mean in db.execute(
            "SELECT lamp, COUNT(*), SUM(power), MIN(latency), MAX(latency), COUNT(DISTINCT power), AVG(power) "
            "FROM r GROUP BY lamp"):
        out[lamp] = (n, energy, lo, hi, levels, mean)
    db.close()
    return out


def run(env, c, job, workers, switch, label, cap=None, spill=False, threads=None):
    out = env.path("out-%s.json" % label)
    run_dir = env.path("runs", label)
    extra = ["--memory-cap", cap] if cap else []
    saved = {k: os.environ.get(k) for k in ("FANFOLD_TEST_ONLY_MERGE_RUNS", "FANFOLD_TEST_ONLY_MERGE_THREADS")}
    if switch is not None:
        os.environ["FANFOLD_TEST_ONLY_MERGE_RUNS"] = switch
    if threads is not None:
        os.environ["FANFOLD_TEST_ONLY_MERGE_THREADS"] = str(threads)
    try:
        rc, _, err = env.fanfold_run("run", job, "-j", workers, "-o", out, "--log-level", "debug",
                                     "--progress", "off", "--run-dir", run_dir, *extra)
    finally:
        for k, v in saved.items():
            if v is None:
                os.environ.pop(k, None)
            else:
                os.environ[k] = v
    if not c.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
        return None
    used_runs = "folded as sorted runs" in err
    want_runs = switch != "0"
    c.check(used_runs == want_runs, "%s: sorted runs used: %s" % (label, used_runs))
    spilled = "written to spill files" in err
    c.check(spilled == spill, "%s: spill files used: %s" % (label, spilled))
    c.check(not os.path.exists(os.path.join(run_dir, "merge")), "%s: the spill folder is left behind" % label)
    with open(os.path.join(run_dir, "summary.json")) as f:
        memory = json.load(f)["memory"]
    held = "spilled runs" if spill else "runs in memory" if want_runs else "tables"
    c.check(memory["merge"] == held and (memory["spilled_bytes"] > 0) == spill,
            "%s: summary.json says %r" % (label, memory))
    if cap:
        c.check(memory["cap_bytes"] == int(cap[:-3]) << 20 and memory["cap_from"] == "--memory-cap",
                "%s: summary.json's cap %r" % (label, memory))
    with open(out, "rb") as f:
        return f.read()


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_streaming_merge")
    with lib.Env(args) as env:
        rows = write_shards(env)
        job = lib.write_job(env.path("by_lamp.json"), {
            "inputs": {"files": [env.path("lamps", "*.ndjson")]},
            "group": ["{/lamp}"], "measures": JOB_MEASURES, "emit": {"format": "json"}})
        expected = sqlite_expected(rows)
        c.check(len(expected) > 100000, "only %d groups; the test wants 100k+" % len(expected))

        base = run(env, c, job, 2, "0", "in-memory", threads=1)
        if base is None:
            c.exit()
        for threads in (2, 3, 7):
            label = "in-memory-%d-threads" % threads
            got = run(env, c, job, 2, "0", label, threads=threads)
            if got is not None:
                c.check(got == base, "%s: result differs from one thread's" % label)
        cases = [(2, None, None), (1, "1:1", None), (2, "20000:1", None), (2, "20000:3", None), (3, "1:2", None),
                 (1, "50000:2", None)]
        # Spilling: small caps, 1-3 key ranges, -j 1..3.
        cases += [(1, None, "6MiB"), (2, "cap:2", "8MiB"), (3, "cap:3", "11MiB"), (2, "cap:1", "7MiB"),
                  (1, "cap:3", "12MiB")]
        for workers, switch, cap in cases:
            label = "runs-%s-%s-j%d" % ((switch or "default").replace(":", "x"), cap or "nocap", workers)
            got = run(env, c, job, workers, switch, label, cap=cap, spill=cap is not None)
            if got is not None:
                c.check(got == base, "%s: result differs from the in-memory merge's" % label)
        # The same cap from the job file's "memory_cap".
        capped = lib.write_job(env.path("by_lamp_capped.json"), {
            "inputs": {"files": [env.path("lamps", "*.ndjson")]}, "memory_cap": "6MiB",
            "group": ["{/lamp}"], "measures": JOB_MEASURES, "emit": {"format": "json"}})
        got = run(env, c, capped, 2, None, "job-memory-cap", spill=True)
        if got is not None:
            c.check(got == base, "job-memory-cap: result differs from the in-memory merge's")

        result = json.loads(base)
        c.check(len(result) == len(expected), "%d groups, sqlite3 has %d" % (len(result), len(expected)))
        bad = 0
        for row in result:
            want = expected.get(row["lamp"])
            if want is None:
                bad += 1
                continue
            n, energy, lo, hi, levels, mean = want
            ok = (row["n"] == n and row["energy"] == energy and row["lat_lo"] == lo and row["lat_hi"] == hi
                  and row["levels"] == levels and lib.rel_close(row["power_mean"], mean, 1e-12))
            if not ok:
                bad += 1
                if bad <= 3:
                    c.fail("lamp %s: fanfold %r, sqlite3 %r" % (row["lamp"], row, want))
        c.check(bad == 0, "%d of %d groups disagree with sqlite3 GROUP BY" % (bad, len(result)))
        c.check([r["lamp"] for r in result] == sorted(expected), "rows are not in lamp order")
    c.exit()


if __name__ == "__main__":
    main()
