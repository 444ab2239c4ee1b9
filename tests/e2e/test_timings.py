"""Per-shard timings: `fanfold report RUN_DIR --timings-json FILE` exports
every shard attempt of the journal with its shard path, worker, start/end
and the worker's phase times, byte and record counts. Checked against
outside facts: the files' sizes on disk (os.path.getsize), their
decompressed sizes and line counts (Python's gzip module), the generator's
manifest of malformed lines, and the run's own wall time and worker count
(the attempts of one worker cannot overlap, so their times sum to at most
wall time × workers).
"""

import gzip
import json
import os
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

JOB = {
    "about": "e2e: timings export",
    "inputs": {"files": []},
    "keep": "{/event} != 'heartbeat'",
    "group": ["{/district}"],
    "measures": [{"name": "n", "fn": "count"}],
    "emit": {"format": "json"},
}
FIELDS = ["shard", "path", "attempt", "worker", "outcome", "final", "start_ns", "end_ns", "wall_ns", "read_ns",
          "parse_ns", "aggregate_ns", "encode_ns", "bytes_in", "bytes_raw", "records", "kept", "malformed"]


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_timings")
    with lib.Env(args) as env:
        data = os.path.join(env.tmp, "data")
        manifest = env.generate(data, "--shards", 20, "--records", 3000, "--seed", 31, "--compress", "gz",
                                "--bad-rate", 0.003, "--spread", 0.5)
        files = sorted(os.path.join(data, e["name"]) for e in manifest["files"])
        job_path = lib.write_job(env.path("job.json"), dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.gz")]}))
        run_dir = env.path("runs", "t")
        out = env.path("out.json")
        # A worker crash on shard 4's first attempt gives one retried attempt to export.
        os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:crash:shard=4,attempt=1,after=10"
        try:
            rc, _, err = env.fanfold_run("run", job_path, "-j", 2, "--run-dir", run_dir, "-o", out)
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
        if not checks.check(rc == 0, "run: exit %d: %s" % (rc, lib.tail(err))):
            checks.exit()
        timings_path = env.path("timings.json")
        rc, text, err = env.fanfold_run("report", run_dir, "--timings-json", timings_path, "-o", env.path("r.html"))
        checks.check(rc == 0, "report: exit %d: %s" % (rc, lib.tail(err)))
        with open(timings_path) as f:
            attempts = json.load(f)
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        with open(os.path.join(run_dir, "journal.ndjson")) as f:
            journal = [json.loads(l) for l in f if l.strip()]
        journal_attempts = [e for e in journal if e["event"] == "attempt"]

        # Intent: a clean JSON array, one entry per journal attempt (the retry included), every field present.
        checks.check(isinstance(attempts, list) and len(attempts) == len(journal_attempts) == 21,
                     "%d exported attempts, journal has %d, expected 21 (20 shards + 1 retry)"
                     % (len(attempts), len(journal_attempts)))
        for a in attempts:
            missing = [k for k in FIELDS if k not in a]
            checks.check(not missing, "attempt %s lacks %s" % (a.get("shard"), missing))
        checks.check([a["start_ns"] for a in attempts] == sorted(a["start_ns"] for a in attempts),
                     "attempts are not in start order")
        retried = [a for a in attempts if not a["final"]]
        checks.check(len(retried) == 1 and retried[0]["shard"] == 4 and retried[0]["outcome"] == "died"
                     and retried[0].get("message"), "the injected crash is not the one retried attempt: %s" % retried)

        done = {a["shard"]: a for a in attempts if a["outcome"] == "done"}
        checks.check(sorted(done) == list(range(20)), "shards done: %s" % sorted(done))
        for i, path in enumerate(files):
            a = done.get(i)
            if a is None:
                continue
            # Intent: the shard path is the file's absolute path (shard index = sorted position).
            checks.check(a["path"] == os.path.abspath(path), "shard %d path %r, file %r" % (i, a["path"], path))
            # Intent: compressed bytes = the file size on disk (os.path.getsize).
            checks.check(a["bytes_in"] == os.path.getsize(path),
                         "shard %d bytes_in %d, file size %d" % (i, a["bytes_in"], os.path.getsize(path)))
            with gzip.open(path, "rb") as g:
                raw = g.read()
            # Intent: decompressed bytes and records read = Python gzip's byte count and line count.
            checks.check(a["bytes_raw"] == len(raw), "shard %d bytes_raw %d, gzip says %d" % (i, a["bytes_raw"], len(raw)))
            lines = len([l for l in raw.split(b"\n") if l.strip()])
            checks.check(a["records"] == lines, "shard %d records %d, %d non-empty lines" % (i, a["records"], lines))
            # Intent: the worker's phases happen inside the coordinator's window for the attempt.
            phases = a["read_ns"] + a["parse_ns"] + a["aggregate_ns"] + a["encode_ns"]
            checks.check(0 < phases <= a["wall_ns"] * 1.02 + 2e6 and a["wall_ns"] == a["end_ns"] - a["start_ns"],
                         "shard %d: phases %d ns vs attempt %d ns" % (i, phases, a["wall_ns"]))
            checks.check(0 <= a["worker"] < 2, "shard %d on worker slot %d with -j 2" % (i, a["worker"]))

        # Intent: one worker's attempts never overlap, so their sum is at most wall time × workers.
        total_ns = sum(a["wall_ns"] for a in attempts)
        bound = summary["wall_seconds"] * summary["workers"] * 1e9
        checks.check(total_ns <= bound, "attempts sum to %.3f s > wall %.3f s × %d workers"
                     % (total_ns / 1e9, summary["wall_seconds"], summary["workers"]))
        by_worker = {}
        for a in attempts:
            by_worker.setdefault(a["worker"], []).append((a["start_ns"], a["end_ns"]))
        for w, spans in by_worker.items():
            spans.sort()
            checks.check(all(spans[k][1] <= spans[k + 1][0] for k in range(len(spans) - 1)),
                         "worker %d has overlapping attempts" % w)

        # Intent: the counts add up to the summary, to the generator's manifest and to the output table.
        records = sum(a["records"] for a in done.values())
        malformed = sum(a["malformed"] for a in done.values())
        kept = sum(a["kept"] for a in done.values())
        checks.check(records == summary["records"]["read"], "records %d, summary %d" % (records, summary["records"]["read"]))
        checks.check(malformed == manifest["totals"]["malformed"],
                     "malformed %d, generator manifest %d" % (malformed, manifest["totals"]["malformed"]))
        rows = lib.read_rows(out, "json")
        checks.check(kept == sum(r["n"] for r in rows) == summary["records"]["kept"],
                     "kept %d, output counts %d, summary %d" % (kept, sum(r["n"] for r in rows), summary["records"]["kept"]))
        # Intent: the text summary of `report` goes to stdout and states the same totals.
        checks.check("%s read" % format(summary["records"]["read"], ",") in text and "1 retried" in text,
                     "report stdout lacks the totals: %s" % lib.tail(text))
    checks.exit()


if __name__ == "__main__":
    main()
