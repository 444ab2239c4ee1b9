"""Honest run accounting, checked against outside facts:

* a file cut into chunks counts its bytes once: the summary's input bytes,
  and the chunks' bytes_in added up, equal the file's size on disk
  (os.path.getsize);
* `resume` counts the shards it reuses apart from those it processes (the
  reused ones are the committed partials read back from the run directory's
  packs, as docs/run-directory.md lays them out), and its MB/s is over the
  processed shards' decompressed bytes only (Python's gzip module) and its
  own wall time;
* every finished attempt's four phase times are non-zero and add up to the
  worker's own start-to-end time of the attempt within 5% + 2 ms (one
  attempt may miss that on a busy machine; see PHASE_TOLERANCE), and extra
  aggregation work shows in aggregate_ns, not in parse_ns.
"""

import glob
import gzip
import json
import os
import re
import struct
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

JOB = {
    "about": "e2e: run accounting",
    "inputs": {"files": []},
    "derive": [{"name": "hour", "expr": "period_start(time({/ts}), 'hour')"}],
    "keep": "{/event} != 'heartbeat'",
    "group": ["{/district}", "hour"],
    "measures": [{"name": "n", "fn": "count"},
                 {"name": "w", "fn": "sum", "of": "{/power_w}"},
                 {"name": "lat", "fn": "quantile", "of": "{/latency_ms}", "at": [0.5, 0.99]}],
    "emit": {"format": "json"},
}

# The phases may miss the few microseconds of the worker's loop around the
# shard (reading the task, handing the partial over): 5% of the attempt plus
# 2 ms. A busy machine may deschedule the worker inside that gap for longer
# (seen once: 13 ms, while crashed workers were being replaced), so one
# attempt of the run may miss the tolerance, never two.
PHASE_TOLERANCE = (0.05, 2e6)
PHASE_MISSES_ALLOWED = 1


def journal_attempts(run_dir):
    with open(os.path.join(run_dir, "journal.ndjson")) as f:
        events = [json.loads(l) for l in f if l.strip()]
    return events


def committed_shards(run_dir):
    """Shards with a committed partial: the pack entries of
    docs/run-directory.md (u32 magic FFPK, u32 shard, u64 length, u64 check,
    then the partial), the highest-numbered pack winning; an empty entry
    holds no partial."""
    out = {}
    for pack in sorted(glob.glob(os.path.join(run_dir, "partials", "pack-*.ffpk"))):
        with open(pack, "rb") as f:
            data = f.read()
        off = 0
        while len(data) - off >= 24:
            magic, shard, length, _check = struct.unpack_from("<IIQQ", data, off)
            if magic != 0x4B504646 or length > len(data) - off - 24:
                break
            out[shard] = length
            off += 24 + length
    return sorted(s for s, n in out.items() if n > 0)


def check_chunks(env, checks):
    data = env.path("big")
    env.generate(data, "--shards", 1, "--records", 12000, "--seed", 5, "--compress", "none")
    path = glob.glob(os.path.join(data, "*.ndjson"))[0]
    size = os.path.getsize(path)
    job = env.path("chunks.json")
    lib.write_job(job, dict(JOB, inputs={"files": [path], "chunk_bytes": 65536}))
    run_dir = env.path("runs", "chunks")
    rc, _, err = env.fanfold_run("run", job, "-j", 2, "--run-dir", run_dir, "-o", env.path("chunks.out.json"))
    if not checks.check(rc == 0, "chunked run: exit %d: %s" % (rc, lib.tail(err))):
        return
    with open(os.path.join(run_dir, "summary.json")) as f:
        summary = json.load(f)
    done = [a for a in journal_attempts(run_dir) if a["event"] == "attempt" and a["outcome"] == "done"]
    # Intent: the file really was cut, into ceil(size / 65536) chunks.
    checks.check(len(done) == (size + 65535) // 65536 and len(done) > 10,
                 "%d chunks done for a %d-byte file" % (len(done), size))
    # Intent: the chunks' input bytes add up to the size on disk (os.path.getsize), not twice it.
    checks.check(sum(a["bytes_in"] for a in done) == size,
                 "chunks' bytes_in add up to %d, the file has %d" % (sum(a["bytes_in"] for a in done), size))
    checks.check(summary["bytes"]["compressed"] == size == summary["bytes"]["decompressed"],
                 "summary.json bytes %r, file size %d" % (summary["bytes"], size))
    # Intent: the summary line says so too, in decimal MB.
    checks.check("| %.1f MB in, %.1f MB decompressed |" % (size / 1e6, size / 1e6) in err,
                 "summary line for a %d-byte file: %s" % (size, lib.tail(err)))


def check_resume(env, checks):
    data = env.path("gz")
    env.generate(data, "--shards", 16, "--records", 1500, "--seed", 23, "--compress", "gz")
    files = sorted(glob.glob(os.path.join(data, "*.ndjson.gz")))
    job = env.path("resume.json")
    lib.write_job(job, dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.gz")]}))
    run_dir = env.path("runs", "resume")
    # Shards 2, 7 and 11 fail in the first run (their worker exits), so the resume has work to do.
    failing = [2, 7, 11]
    os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:" + ";".join("exit:shard=%d,code=3" % s for s in failing)
    try:
        rc, _, err = env.fanfold_run("run", job, "-j", 2, "--attempts", 1, "--run-dir", run_dir,
                                     "-o", env.path("first.json"))
    finally:
        del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
    if not checks.check(rc == 1, "first run: exit %d (want 1: shards failed): %s" % (rc, lib.tail(err))):
        return
    saved = committed_shards(run_dir)
    # Intent: the packs hold exactly the shards that did not fail.
    checks.check(saved == [i for i in range(len(files)) if i not in failing],
                 "committed partials before resume: %s" % saved)
    rc, _, err = env.run([env.fanfold, "resume", run_dir, "-o", env.path("second.json")])
    if not checks.check(rc == 0, "resume: exit %d: %s" % (rc, lib.tail(err))):
        return
    with open(os.path.join(run_dir, "summary.json")) as f:
        summary = json.load(f)
    reused, processed = len(saved), len(files) - len(saved)
    # Intent: the summary line counts the reused shards (read back from the packs) apart from the processed ones.
    want = "%d of %d shards done (%d reused from the run directory, %d processed), 0 failed |" % (
        len(files), len(files), reused, processed)
    checks.check(want in err, "resume summary lacks %r: %s" % (want, lib.tail(err)))
    checks.check(summary["shards"]["reused"] == reused and summary["shards"].get("processed") == processed,
                 "summary.json shards %r, want %d reused and %d processed" % (summary["shards"], reused, processed))
    # Intent: the processed bytes are the failed shards' decompressed sizes (Python's gzip), not all 16 shards'.
    got = summary.get("processed", {}).get("bytes", {})
    raw = {}
    for i, path in enumerate(files):
        with gzip.open(path, "rb") as g:
            raw[i] = len(g.read())
    want_bytes = sum(raw[i] for i in failing)
    checks.check(got.get("decompressed") == want_bytes,
                 "summary.json processed bytes %r, gzip says %d" % (got.get("decompressed"), want_bytes))
    # Intent: and their compressed bytes the failed shards' sizes on disk (os.path.getsize).
    checks.check(got.get("compressed") == sum(os.path.getsize(files[i]) for i in failing),
                 "summary.json processed compressed bytes %r" % got.get("compressed"))
    checks.check(summary["bytes"]["decompressed"] == sum(raw.values()),
                 "summary.json total bytes %d, gzip says %d" % (summary["bytes"]["decompressed"], sum(raw.values())))
    # Intent: MB/s is the processed bytes over this session's wall time, as printed.
    m = re.search(r"processed: ([\d.]+) MB decompressed in ([\d.]+) s, ([\d.]+) MB/s", err)
    if checks.check(m is not None, "resume summary lacks the processed rate: %s" % lib.tail(err)):
        wall = summary["wall_seconds"]
        checks.check(m.group(1) == "%.1f" % (want_bytes / 1e6) and m.group(2) == "%.2f" % wall
                     and m.group(3) == "%.1f" % (want_bytes / 1e6 / wall),
                     "rate %s, want %.1f MB in %.2f s" % (m.group(0), want_bytes / 1e6, wall))
    # Intent: `report` gives the same rate over the processed shards.
    rc, text, err = env.run([env.fanfold, "report", run_dir, "-o", env.path("resume.html")])
    checks.check(rc == 0 and m is not None and m.group(0) in text,
                 "report's rate differs from the run's: %s" % lib.tail(text))


def check_phases(env, checks):
    data = env.path("demo")
    env.generate(data, "--shards", 24, "--records", 2000, "--seed", 7)
    job = env.path("phases.json")
    lib.write_job(job, dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.zst")]}))
    run_dir = env.path("runs", "phases")
    rc, _, err = env.fanfold_run("run", job, "-j", 2, "--run-dir", run_dir, "-o", env.path("phases.out.json"))
    if not checks.check(rc == 0, "run: exit %d: %s" % (rc, lib.tail(err))):
        return
    done = [a for a in journal_attempts(run_dir) if a["event"] == "attempt" and a["outcome"] == "done"]
    checks.check(len(done) == 24, "%d done attempts" % len(done))
    frac, slack = PHASE_TOLERANCE
    misses = []
    for a in done:
        phases = [a["read_ns"], a["parse_ns"], a["aggregate_ns"], a["encode_ns"]]
        wall = a["end_ns"] - a["start_ns"]
        # Intent: every phase took time (each shard has records; parse_ns used to be 0 in half of them).
        checks.check(a["records"] > 0 and all(p > 0 for p in phases),
                     "shard %d: a phase is zero: %s" % (a["shard"], phases))
        # Intent: the phases never add up to more than the attempt (the worker's clock, in the journal).
        checks.check(sum(phases) <= wall * 1.001 + 1e5,
                     "shard %d: phases add up to %d ns, the attempt took %d ns" % (a["shard"], sum(phases), wall))
        if wall - sum(phases) > frac * wall + slack:
            misses.append("shard %d: phases %d ns of %d ns" % (a["shard"], sum(phases), wall))
        checks.check(a.get("phases") == "measured", "shard %d: phases %r" % (a["shard"], a.get("phases")))
    # Intent: and they fill it, within 5% + 2 ms, for every attempt but at most one.
    checks.check(len(misses) <= PHASE_MISSES_ALLOWED, "phases fall short of the attempt: %s" % misses)
    rc, text, err = env.run([env.fanfold, "report", run_dir, "-o", env.path("phases.html")])
    # Intent: the report says the phases were measured and how much of the attempts' time they fill.
    m = re.search(r"^worker time: .*\(measured; they fill ([\d.]+)% of the attempts' time\)$", text, re.M)
    if checks.check(rc == 0 and m is not None, "report lacks the measured phases: %s" % lib.tail(text)):
        total = sum(a["end_ns"] - a["start_ns"] for a in done)
        phases = sum(a["read_ns"] + a["parse_ns"] + a["aggregate_ns"] + a["encode_ns"] for a in done)
        checks.check(m.group(1) == "%.1f" % (100.0 * phases / total), "fill %s%%, journal says %.1f%%"
                     % (m.group(1), 100.0 * phases / total))
    with open(env.path("phases.html")) as f:
        checks.check("measured; they fill" in f.read(), "the page does not say the phases are measured")


def check_split(env, checks):
    """Two jobs read the same two fields of the same shards; one aggregates
    almost nothing, the other derives and counts twelve distinct strings per
    record. If the phases are measured where the work happens, the extra
    work lands in aggregate_ns, and parse_ns stays about the same."""
    data = env.path("split")
    env.generate(data, "--shards", 6, "--records", 12000, "--seed", 41)
    files = [os.path.join(data, "*.ndjson.zst")]
    light = {"inputs": {"files": files}, "group": ["{/district}"],
             "measures": [{"name": "n", "fn": "count"}, {"name": "l", "fn": "count_present", "of": "{/lamp}"}],
             "emit": {"format": "json"}}
    heavy = dict(light,
                 derive=[{"name": "d%d" % i, "expr": "upper(substr(lower({/lamp}), %d))" % (i % 3)} for i in range(12)],
                 measures=[{"name": "n", "fn": "count"}] +
                          [{"name": "x%d" % i, "fn": "distinct", "of": "d%d" % i} for i in range(12)])
    totals = {}
    for name, job in (("light", light), ("heavy", heavy)):
        path = env.path(name + ".json")
        lib.write_job(path, job)
        best = None
        for trial in range(3):  # the smallest of three runs: a busy machine only ever adds time
            run_dir = env.path("runs", "%s%d" % (name, trial))
            rc, _, err = env.fanfold_run("run", path, "-j", 1, "--run-dir", run_dir, "-q", "-o", env.path("split.out"))
            if not checks.check(rc == 0, "%s run: exit %d: %s" % (name, rc, lib.tail(err))):
                return
            done = [a for a in journal_attempts(run_dir) if a["event"] == "attempt" and a["outcome"] == "done"]
            got = {k: sum(a[k] for a in done) for k in ("parse_ns", "aggregate_ns")}
            best = got if best is None else {k: min(best[k], got[k]) for k in got}
        totals[name] = best
    lp, la = totals["light"]["parse_ns"], totals["light"]["aggregate_ns"]
    hp, ha = totals["heavy"]["parse_ns"], totals["heavy"]["aggregate_ns"]
    # Intent: the heavy job's extra work is counted as aggregating (measured ~45x here), not as parsing
    # (measured 1.1-1.5x on the build VM: both read the same two fields; 2.2x once
    # with other builds running beside it, hence the bound of 4x, which still
    # catches the heavy job's aggregation counted as parsing, ~45x).
    checks.check(ha >= 10 * la and ha > hp, "aggregate_ns light %d, heavy %d (parse_ns heavy %d)" % (la, ha, hp))
    checks.check(hp <= 4 * lp, "parse_ns light %d, heavy %d: the aggregation leaks into parsing" % (lp, hp))


def check_memory(env, checks):
    """Peak memory in summary.json is the kernel's: a fresh Python process
    that runs fanfold as its only child reads resource.getrusage(
    RUSAGE_CHILDREN).ru_maxrss afterwards, the largest peak of fanfold's
    coordinator and of its workers (descendants that were waited for)."""
    data = env.path("mem")
    env.generate(data, "--shards", 2, "--records", 60000, "--seed", 9)
    job = env.path("mem.json")
    # A group per record: the worker's table, then the coordinator's, grow.
    lib.write_job(job, dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.zst")]},
                            group=["{/ts}", "{/lamp}"], measures=[{"name": "n", "fn": "count"}]))
    for mode in (["-j", "2"], ["--in-process"]):
        run_dir = env.path("runs", "mem" + mode[0])
        probe = ("import resource, subprocess, sys; "
                 "r = subprocess.run(sys.argv[1:], stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL); "
                 "print(r.returncode, resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss)")
        rc, out, err = env.run([sys.executable, "-c", probe, env.fanfold, "run", job, *mode, "--run-dir", run_dir,
                                "-o", env.path("mem.out.json")])
        fields = out.split()
        if not checks.check(rc == 0 and len(fields) == 2 and fields[0] == "0", "memory run %s: %r %s" % (mode, out, err)):
            continue
        kib = int(fields[1])
        with open(os.path.join(run_dir, "summary.json")) as f:
            peak = json.load(f)["peak_rss_bytes"]
        worker = peak["largest_worker"]
        # Intent: a worker's figure exactly when workers ran.
        checks.check((worker is None) == (mode[0] == "--in-process"), "%s: largest_worker %r" % (mode, worker))
        # Intent: the larger figure is the kernel's for the whole run, within what the coordinator
        # allocates after it reads its own (rendering the result): at most 10 % more.
        top = max(peak["coordinator"], worker or 0) / 1024
        checks.check(top <= kib <= top * 1.10 + 1024, "%s: summary.json peak %r, getrusage says %d KiB" % (mode, peak, kib))
        checks.check(peak["coordinator"] > 4 << 20, "%s: coordinator peak %r is implausibly small" % (mode, peak))

    # Intent: the workers' figure is theirs alone, also when fanfold was exec'd by a process that
    # had waited for a big child before (the README's first command runs it after the compiler):
    # getrusage(RUSAGE_CHILDREN) survives execve (getrusage(2), Linux man-pages), so it would
    # report that child's peak. The probe waits for a child that touches 400 MiB, reads its peak
    # from RUSAGE_CHILDREN, then becomes fanfold.
    run_dir = env.path("runs", "mem-exec")
    probe = ("import os, resource, subprocess, sys; "
             "subprocess.run([sys.executable, '-c', 'b = bytearray(400 << 20)']); "
             "print(resource.getrusage(resource.RUSAGE_CHILDREN).ru_maxrss, flush=True); "
             "os.execv(sys.argv[1], sys.argv[1:])")
    rc, out, err = env.run([sys.executable, "-c", probe, env.fanfold, "run", job, "-j", "2", "--run-dir", run_dir,
                            "-o", env.path("mem.out.json")])
    if checks.check(rc == 0 and out.split() and out.split()[0].isdigit(), "exec'd run: %r %s" % (out, err)):
        big_kib = int(out.split()[0])
        with open(os.path.join(run_dir, "summary.json")) as f:
            worker = json.load(f)["peak_rss_bytes"]["largest_worker"]
        checks.check(big_kib >= 400 << 10, "the probe's child peaked at %d KiB (expected >= 400 MiB)" % big_kib)
        checks.check(worker is not None and worker < (big_kib << 10) // 2,
                     "exec'd run: largest_worker %r is not the earlier child's %d KiB" % (worker, big_kib))


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_accounting")
    with lib.Env(args) as env:
        check_chunks(env, checks)
        check_resume(env, checks)
        check_phases(env, checks)
        check_split(env, checks)
        check_memory(env, checks)
    checks.exit()


if __name__ == "__main__":
    main()
