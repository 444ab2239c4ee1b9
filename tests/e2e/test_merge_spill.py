"""The merge's spill files and the memory cap on every way out (issue 14, item 4).

Twelve NDJSON shards of 20,000 invented meter readings (meter ids drawn
from 150,000, about 120,000 groups), grouped by meter with count, integer
sum and max, merged under --memory-cap 6MiB so that the runs go to spill
files in the run directory's merge/ folder (FANFOLD_TEST_ONLY_MERGE_RUNS=
cap:1 keeps the cap's rule; -j 1 makes the run last long enough to act on).
Checked against the in-memory merge's bytes (FANFOLD_TEST_ONLY_MERGE_RUNS=0)
and sqlite3 (Python's stdlib module: GROUP BY meter, COUNT(*), SUM, MAX;
integers, exact in both):

* SIGKILL of the coordinator while merge/ holds spill files, then
  `fanfold resume`: the same bytes, and merge/ is gone;
* SIGINT while spilling: exit 130, merge/ gone, and resume gives the bytes;
* an error exit after spilling (the result's path is under a regular file):
  non-zero exit, merge/ gone;
* a cap too small for the job (--memory-cap 1MiB, or the job's
  "memory_cap": "1MiB"): a clear error naming the flag or the JSON location
  and the least that works, non-zero exit, no run directory made; `resume`
  with it: refused before the run journals a start (no worker started);
* a "memory_cap" that is no byte count: refused naming /memory_cap;
* `merge` of two parts, `refresh` and `scale` under --memory-cap 6MiB:
  the same bytes, spilled (summary.json's "memory"), no spill folder left;
* the default cap (no flag): at most 128 MiB (summary.json), the same bytes;
* 3 key ranges at -j 3 under 6 MiB (batches read as streams from the packs
  by each range): the same bytes.
"""

import glob
import json
import os
import random
import signal
import sqlite3
import subprocess
import time

import e2e_lib as lib

SHARDS = 12
PER_SHARD = 20000
METERS = 150000
SWITCH = "FANFOLD_TEST_ONLY_MERGE_RUNS"


def write_shards(env):
    rnd = random.Random(20261203)
    rows = []
    for s in range(SHARDS):
        with open(env.path("meters", "m-%02d.ndjson" % s), "w") as f:
            for _ in range(PER_SHARD):
                meter = "MT-%06d" % rnd.randrange(METERS)
                wh = rnd.randrange(0, 5000)
                rows.append((meter, wh))
                f.write(json.dumps({"meter": meter, "wh": wh}) + "\n")
    return rows


def job_body(env, **extra):
    body = {"inputs": {"files": [env.path("meters", "*.ndjson")]}, "group": ["{/meter}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "wh", "fn": "sum", "of": "{/wh}"},
                         {"name": "peak", "fn": "max", "of": "{/wh}"}],
            "emit": {"format": "csv"}}
    body.update(extra)
    return body


def with_switch(value):
    env = dict(os.environ)
    env[SWITCH] = value
    return env


def spill_files(run_dir):
    return glob.glob(os.path.join(run_dir, "merge", "*.grp"))


def start(env, job, run_dir, out, extra=()):
    argv = [env.fanfold, "run", job, "-j", "1", "--progress", "off", "--memory-cap", "6MiB",
            "--run-dir", run_dir, "-o", out] + (list(extra) or ["-q"])
    return subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, env=with_switch("cap:1"),
                            cwd=env.tmp)


def wait_for_spill(proc, run_dir, timeout=60):
    """True iff spill files appeared while proc still ran."""
    end = time.time() + timeout
    while time.time() < end and proc.poll() is None:
        if spill_files(run_dir):
            return True
        time.sleep(0.002)
    return False


def read(path):
    with open(path, "rb") as f:
        return f.read()


def resume(env, run_dir, out):
    return env.run([env.fanfold, "resume", run_dir, "-q", "--memory-cap", "6MiB", "-o", out])


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_merge_spill")
    with lib.Env(args) as env:
        rows = write_shards(env)
        job = lib.write_job(env.path("meters.json"), job_body(env))

        # The reference: the coordinator's in-memory tables.
        base_out = env.path("base.csv")
        os.environ[SWITCH] = "0"
        rc, _, err = env.fanfold_run("run", job, "-j", "2", "-q", "-o", base_out)
        del os.environ[SWITCH]
        if not c.check(rc == 0, "in-memory run: exit %d: %s" % (rc, lib.tail(err))):
            c.exit()
        base = read(base_out)
        db = sqlite3.connect(":memory:")
        db.execute("CREATE TABLE r (meter TEXT, wh INTEGER)")
        db.executemany("INSERT INTO r VALUES (?, ?)", rows)
        want = ["meter,n,wh,peak"] + ["%s,%d,%d,%d" % r for r in db.execute(
            "SELECT meter, COUNT(*), SUM(wh), MAX(wh) FROM r GROUP BY meter ORDER BY meter")]
        c.check(len(want) > 100001, "only %d groups; the test wants 100k+" % (len(want) - 1))
        c.check(base.decode().splitlines() == want, "the in-memory result differs from sqlite3 GROUP BY")

        # The default cap (no flag, no "memory_cap"): a quarter of the
        # available memory, at most 128 MiB (memory_budget.h); the same
        # bytes, whatever path the merge took.
        rd = env.path("runs", "default-cap")
        out = env.path("default-cap.csv")
        rc, _, err = env.fanfold_run("run", job, "-j", "2", "-q", "--run-dir", rd, "-o", out)
        if c.check(rc == 0, "default cap: exit %d: %s" % (rc, lib.tail(err))):
            c.check(read(out) == base, "default cap: result differs from the in-memory merge's")
            with open(os.path.join(rd, "summary.json")) as f:
                memory = json.load(f)["memory"]
            c.check(0 < memory["cap_bytes"] <= 128 << 20 and "at most 128 MiB" in memory["cap_from"],
                    "default cap: summary.json says %r" % memory)
            c.check(not os.path.exists(os.path.join(rd, "merge")), "default cap: the spill folder is left behind")

        # Streamed batches over several key ranges, many shards' packs
        # read at once: -j 3 and 3 key ranges under the 6 MiB cap.
        rd = env.path("runs", "ranges")
        out = env.path("ranges.csv")
        done = subprocess.run([env.fanfold, "run", job, "-j", "3", "-q", "--memory-cap", "6MiB", "--run-dir", rd,
                               "-o", out], env=with_switch("cap:3"), capture_output=True)
        if c.check(done.returncode == 0, "3 key ranges: exit %d: %s" % (done.returncode,
                                                                      lib.tail(done.stderr.decode()))):
            c.check(read(out) == base, "3 key ranges under a 6 MiB cap: result differs from the in-memory merge's")

        # SIGKILL while spilling, then resume.
        rd = env.path("runs", "killed")
        out = env.path("killed.csv")
        proc = start(env, job, rd, out)
        spilling = wait_for_spill(proc, rd)
        proc.send_signal(signal.SIGKILL)
        proc.wait()
        c.check(spilling, "no spill file appeared while the run ran")
        c.check(not spilling or spill_files(rd), "SIGKILL left no spill file (killed too late to test resume)")
        for _ in range(200):  # the workers leave on their own (parent-death signal)
            if not lib.child_pids(proc.pid):
                break
            time.sleep(0.01)
        rc, _, err = resume(env, rd, out)
        c.check(rc == 0, "resume after SIGKILL: exit %d: %s" % (rc, lib.tail(err)))
        c.check(rc != 0 or read(out) == base, "resume after SIGKILL: result differs from the in-memory merge's")
        c.check(not os.path.exists(os.path.join(rd, "merge")), "resume after SIGKILL left the spill folder")

        # SIGINT while spilling: a graceful stop removes the folder.
        rd = env.path("runs", "interrupted")
        out = env.path("interrupted.csv")
        proc = start(env, job, rd, out)
        spilling = wait_for_spill(proc, rd)
        proc.send_signal(signal.SIGINT)
        proc.communicate(timeout=120)
        c.check(spilling, "SIGINT: no spill file appeared while the run ran")
        c.check(proc.returncode in (0, 130), "SIGINT: exit %d" % proc.returncode)
        c.check(not os.path.exists(os.path.join(rd, "merge")), "SIGINT: the spill folder is left behind")
        rc, _, err = resume(env, rd, out)
        c.check(rc == 0 and read(out) == base, "resume after SIGINT: exit %d or other bytes" % rc)

        # An error exit after the merge spilled: the result cannot be written.
        blocker = env.path("not-a-dir")
        with open(blocker, "w") as f:
            f.write("x")
        rd = env.path("runs", "failed")
        proc = start(env, job, rd, os.path.join(blocker, "out.csv"), extra=["--log-level", "debug"])
        _, err = proc.communicate(timeout=120)
        err = err.decode("utf-8", "replace")
        c.check(proc.returncode != 0, "writing under a regular file: exit 0")
        c.check("written to spill files" in err, "error exit: the merge did not spill: " + lib.tail(err))
        c.check(not os.path.exists(os.path.join(rd, "merge")), "error exit: the spill folder is left behind")

        # merge (of parts), refresh and scale take the cap too.
        spill_env = with_switch("cap:1")
        for i in (1, 2):
            rc, _, err = env.fanfold_run("run", job, "--part", "%d/2" % i, "--run-dir", env.path("runs", "p%d" % i), "-q")
            c.check(rc == 0, "part %d: exit %d: %s" % (i, rc, lib.tail(err)))
        for label, argv, rd in (
                ("merge", ["merge", env.path("runs", "p1"), env.path("runs", "p2"), "--run-dir",
                           env.path("runs", "merged")], env.path("runs", "merged")),
                ("refresh", ["refresh", env.path("runs", "killed")], env.path("runs", "killed"))):
            out = env.path(label + ".csv")
            done = subprocess.run([env.fanfold] + argv + ["--memory-cap", "6MiB", "-q", "-o", out], env=spill_env,
                                  stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp)
            c.check(done.returncode == 0, "%s: exit %d: %s" % (label, done.returncode, lib.tail(done.stderr.decode())))
            if done.returncode == 0:
                c.check(read(out) == base, "%s under a 6 MiB cap: result differs" % label)
                with open(os.path.join(rd, "summary.json")) as f:
                    memory = json.load(f)["memory"]
                c.check(memory["merge"] == "spilled runs" and memory["cap_bytes"] == 6 << 20,
                        "%s: summary.json says %r" % (label, memory))
            c.check(not os.path.exists(os.path.join(rd, "merge")), "%s: the spill folder is left behind" % label)
        done = subprocess.run([env.fanfold, "scale", job, "--workers", "1", "--memory-cap", "6MiB", "-q"],
                              env=spill_env, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp)
        c.check(done.returncode == 0, "scale --memory-cap 6MiB: exit %d: %s" % (done.returncode,
                                                                               lib.tail(done.stderr.decode())))

        # A cap too small for the job: refused before anything starts.
        rd = env.path("runs", "tiny")
        rc, _, err = env.fanfold_run("run", job, "--memory-cap", "1MiB", "--run-dir", rd)
        c.check(rc != 0, "--memory-cap 1MiB: exit 0")
        c.check("--memory-cap" in err and "too small" in err and "expected at least" in err,
                "--memory-cap 1MiB: unclear error: " + lib.tail(err))
        c.check(not os.path.exists(rd), "--memory-cap 1MiB: the run directory was made")
        tiny = lib.write_job(env.path("tiny.json"), job_body(env, memory_cap="1MiB"))
        rc, _, err = env.fanfold_run("run", tiny, "--run-dir", rd)
        c.check(rc != 0 and "/memory_cap" in err and "too small" in err,
                "job memory_cap 1MiB: exit %d: %s" % (rc, lib.tail(err)))
        c.check(not os.path.exists(rd), "job memory_cap 1MiB: the run directory was made")
        journal = os.path.join(env.path("runs", "killed"), "journal.ndjson")
        before = read(journal)
        rc, _, err = env.run([env.fanfold, "resume", env.path("runs", "killed"), "--memory-cap", "100KiB"])
        c.check(rc != 0 and "too small" in err, "resume --memory-cap 100KiB: exit %d: %s" % (rc, lib.tail(err)))
        c.check(read(journal) == before, "resume with a too-small cap journaled a start")
        for bad in ("lots", -5, 0, "12 parsecs", 1.5):
            j = lib.write_job(env.path("bad.json"), job_body(env, memory_cap=bad))
            rc, _, err = env.fanfold_run("run", j)
            c.check(rc != 0 and "/memory_cap" in err and "byte count" in err,
                    "memory_cap %r: exit %d: %s" % (bad, rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("run", job, "--memory-cap", "4XB")
        c.check(rc != 0 and "--memory-cap" in err and "4XB" in err, "--memory-cap 4XB: %s" % lib.tail(err))
    c.exit()


if __name__ == "__main__":
    main()
