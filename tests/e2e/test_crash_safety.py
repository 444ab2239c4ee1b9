"""Crash safety: a crash, a kill or a poison shard costs only the shards it
touched, and `resume` finishes a run with the bytes an uninterrupted run
gives. Deterministic faults use the test-only switch FANFOLD_TEST_ONLY_FAULTS;
randomised trials SIGKILL real worker and coordinator processes from outside
at random moments (fixed seeds, bounded counts and times).
"""

import glob
import json
import os
import random
import re
import signal
import subprocess
import sys
import time

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

TRIALS = int(os.environ.get("FANFOLD_CRASH_TRIALS", "30"))


def journal(run_dir):
    out = []
    try:
        with open(os.path.join(run_dir, "journal.ndjson")) as f:
            for line in f:
                try:
                    out.append(json.loads(line))
                except ValueError:
                    pass  # a line torn by a kill
    except OSError:
        pass
    return out


def pack_entries(run_dir):
    """{shard: (pack path, offset, length)} of committed partials, read as
    docs/run-directory.md describes the pack format (independently of fanfold)."""
    import struct
    out = {}
    for pack in sorted(glob.glob(os.path.join(run_dir, "partials", "pack-*.ffpk"))):
        data = read(pack)
        off = 0
        while len(data) - off >= 24:
            magic, shard, length, _check = struct.unpack_from("<IIQQ", data, off)
            if magic != 0x4B504646 or length > len(data) - off - 24:
                break
            out[shard] = (pack, off + 24, length)
            off += 24 + length
    return out


def read(path):
    with open(path, "rb") as f:
        return f.read()


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_crash_safety")
    rng = random.Random(20261201)
    with lib.Env(args) as env:
        env.generate(env.path("data"), "--shards", 40, "--records", 1500, "--seed", 31)
        job_spec = {
            "inputs": {"files": ["data/*.ndjson.zst"]},
            "derive": [{"name": "hour", "expr": "period_start(coalesce(time({/ts}), time_ms({/ts_ms})), 'hour')"}],
            "group": ["hour", "{/district}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/power_w}"},
                         {"name": "lamps", "fn": "distinct", "of": "{/lamp}"},
                         {"name": "q", "fn": "quantile", "of": "{/latency_ms}", "at": [0.9]}],
            "emit": {"format": "csv"},
        }
        job = lib.write_job(env.path("job.json"), job_spec)
        shards = sorted(glob.glob(env.path("data", "*.ndjson.zst")))
        total = len(shards)
        ref_dir = env.path("runs", "ref")
        rc, _, err = env.fanfold_run("run", job, "-j", "2", "-q", "-o", env.path("ref.csv"), "--run-dir", ref_dir)
        c.check(rc == 0, "reference run exits 0: " + lib.tail(err))
        ref = read(env.path("ref.csv"))

        def faulty(name, faults, *extra, expect=0):
            os.environ["FANFOLD_TEST_ONLY_FAULTS"] = faults
            try:
                out = env.path(name + ".csv")
                rd = env.path("runs", name)
                rc, _, err = env.fanfold_run("run", job, "-j", "2", "-o", out, "--run-dir", rd, *extra, timeout=120)
            finally:
                del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
            c.check(rc == expect, "%s: exit %d (got %d): %s" % (name, expect, rc, lib.tail(err)))
            return out, rd, err

        # Intent: a worker crashing once on shard 5 is retried on a fresh worker; output unchanged.
        out, rd, _ = faulty("crash-once", "inject:crash:shard=5,attempt=1,after=10")
        c.check(read(out) == ref, "crash-once: output identical to the reference")
        ev = [e for e in journal(rd) if e.get("event") == "attempt" and e["shard"] == 5]
        c.check([e["outcome"] for e in ev] == ["died", "done"], "crash-once: journal shows died then done: %s" % ev)

        # Intent: a shard that crashes every attempt is quarantined; exit 1; the rest is exact.
        out, rd, err = faulty("crash-always", "inject:crash:shard=7", expect=1)
        c.check("shard 7 failed" in err and "quarantined after 3 attempts" in err, "crash-always: shard 7 reported")
        c.check("SIGKILL" in err or "signal 9" in err, "crash-always: the signal is named")
        with open(os.path.join(rd, "summary.json")) as f:
            summary = json.load(f)
        c.check([x["shard"] for x in summary["failed"]] == [7], "crash-always: summary lists shard 7")
        without = lib.write_job(env.path("without7.json"),
                                dict(job_spec, inputs={"files": [os.path.relpath(s, env.tmp) for i, s in
                                                                 enumerate(shards) if i != 7]}))
        rc, _, _ = env.fanfold_run("run", without, "-j", "2", "-q", "-o", env.path("without7.csv"))
        c.check(rc == 0 and read(out) == read(env.path("without7.csv")),
                "crash-always: other shards' results equal a run without shard 7")

        # Intent: a hung worker is killed at the time limit and the shard retried.
        out, rd, _ = faulty("stall", "inject:stall:shard=3,attempt=1", "--shard-time-limit", "1.5")
        c.check(read(out) == ref, "stall: output identical")
        c.check(any(e.get("outcome") == "timed-out" and e["shard"] == 3 for e in journal(rd)),
                "stall: journal records the time-out")

        # Intent: a partial corrupted in transit fails its checksum and is recomputed.
        out, rd, _ = faulty("corrupt-transit", "inject:corrupt:shard=4,attempt=1")
        c.check(read(out) == ref, "corrupt-transit: output identical")

        # Intent: one flipped bit in a persisted partial is detected at resume and recomputed.
        p, off, length = pack_entries(ref_dir)[10]
        data = bytearray(read(p))
        data[off + length // 2] ^= 0x04
        with open(p, "wb") as f:
            f.write(data)
        rc, _, err = env.fanfold_run("resume", ref_dir, "-o", env.path("resumed.csv"))
        c.check(rc == 0 and "discarding the saved partial of shard 10" in err, "bit flip detected: " + lib.tail(err))
        c.check(read(env.path("resumed.csv")) == ref, "bit flip: resumed output identical")
        starts = [e for e in journal(ref_dir) if e.get("event") == "start"]
        c.check(starts and starts[-1]["pending"] == 1, "bit flip: only shard 10 recomputed")

        # Intent: a job file changed after the run: resume keeps to the run's copy of it and says so;
        # without that copy (a run directory of an earlier version) a different plan is refused.
        changed = dict(job_spec, measures=job_spec["measures"][:2])
        lib.write_job(job, changed)
        rc, _, err = env.fanfold_run("resume", ref_dir, "-o", env.path("resumed-copy.csv"))
        c.check(rc == 0 and "resuming with the run's copy" in err and read(env.path("resumed-copy.csv")) == ref,
                "changed job file: resume with the copy: %d %s" % (rc, lib.tail(err)))
        os.remove(os.path.join(ref_dir, "job.json"))
        rc, _, err = env.fanfold_run("resume", ref_dir)
        c.check(rc == 2 and "changed since the run started" in err and "--fresh" in err,
                "fingerprint mismatch refused: %d %s" % (rc, lib.tail(err)))
        lib.write_job(job, job_spec)
        # Intent: `run` on a directory holding a run says so instead of mixing plans.
        rc, _, err = env.fanfold_run("run", job, "--run-dir", ref_dir)
        c.check(rc == 2 and "already holds" in err and "fanfold resume" in err, "run refuses a used run dir")

        # Intent: SIGINT stops gracefully with exit 130 and a resume hint; resume completes.
        rd = env.path("runs", "sigint")
        proc = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-o", env.path("sigint.csv"), "--run-dir", rd],
                                stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp)
        time.sleep(0.3)
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=60)
        err = err.decode()
        if proc.returncode == 130:
            c.check("fanfold resume" in err, "SIGINT: hint on how to resume")
            # Intent: the summary's count is what the run directory holds (read back from the packs by the
            # format in docs/run-directory.md, independently of fanfold).
            m = re.search(r"(\d+) of (\d+) shards saved", err)
            saved = len(pack_entries(rd))
            c.check(m is not None and int(m.group(1)) == saved,
                    "SIGINT: the summary says %s shards saved, the run directory holds %d: %s"
                    % (m.group(1) if m else None, saved, lib.tail(err)))
            rc, _, err2 = env.fanfold_run("resume", rd, "-o", env.path("sigint.csv"))
            c.check(rc == 0 and read(env.path("sigint.csv")) == ref, "SIGINT: resume gives identical output")
        else:
            c.check(proc.returncode == 0, "SIGINT: exit 130 (or 0 if it finished first), got %d" % proc.returncode)
        leaked = lib.leaked_segments()
        c.check(leaked == [], "SIGINT: no segment left: %s (the interrupted coordinator was pid %d, exit %d; %s)"
                % (leaked, proc.pid, proc.returncode, lib.tail(err)))

        # Intent: SIGINT at random moments while a shard hangs (so the run is surely still going): the
        # summary's "N of M shards saved" equals the shards with committed partials, read back from the packs.
        rng_int = random.Random(41)
        for i in range(3):
            rd = env.path("runs", "sigint-count-%d" % i)
            os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:stall:shard=%d,attempt=1" % rng_int.randrange(len(shards))
            try:
                proc = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-o", env.path("sc.csv"), "--run-dir", rd],
                                        stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp)
            finally:
                del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
            time.sleep(rng_int.uniform(0.05, 0.6))
            proc.send_signal(signal.SIGINT)
            _, err = proc.communicate(timeout=60)
            err = err.decode()
            m = re.search(r"(\d+) of (\d+) shards saved", err)
            saved = len(pack_entries(rd))
            c.check(proc.returncode == 130 and m is not None and int(m.group(1)) == saved,
                    "SIGINT %d: exit %d, summary says %s saved, the run directory holds %d: %s"
                    % (i, proc.returncode, m.group(1) if m else None, saved, lib.tail(err)))

        # Intent: -q on an interrupted run still prints what is essential: that it was interrupted, how many
        # shards are saved (as many as the packs hold), each failed shard with its reason, and how to
        # finish. Every shard but one exits with status 3 (failing after 3 attempts); that one stalls, so
        # the run is surely still going when SIGINT comes.
        rd = env.path("runs", "sigint-quiet")
        stalled = 11
        faults = ["stall:shard=%d" % stalled] + ["exit:shard=%d,code=3" % i for i in range(total) if i != stalled]
        os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:" + ";".join(faults)
        try:
            proc = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-q", "-o", env.path("sq.csv"), "--run-dir", rd],
                                    stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp)
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
        time.sleep(3.0)
        proc.send_signal(signal.SIGINT)
        _, err = proc.communicate(timeout=60)
        err = err.decode()
        m = re.search(r"^fanfold: interrupted: (\d+) of (\d+) shards saved, (\d+) failed$", err, re.M)
        failed_lines = re.findall(r"^fanfold: shard (\d+) '[^']*' failed: (.+)$", err, re.M)
        c.check(proc.returncode == 130 and m is not None and int(m.group(1)) == len(pack_entries(rd))
                and int(m.group(2)) == total,
                "-q SIGINT: exit %d, want 130 and 'interrupted: N of %d shards saved' matching the packs: %s"
                % (proc.returncode, total, lib.tail(err)))
        c.check(m is not None and int(m.group(3)) >= 1 and int(m.group(3)) == len(failed_lines)
                and all("exit" in why or "status 3" in why for _, why in failed_lines),
                "-q SIGINT: every failed shard listed with its reason (status 3): %s" % lib.tail(err))
        c.check(("fanfold: to finish the run: fanfold resume " + rd) in err, "-q SIGINT: says how to resume: %s"
                % lib.tail(err))
        c.check("records:" not in err, "-q SIGINT: no full summary line under -q: %s" % lib.tail(err))

        # Randomised: SIGKILL a random worker at a random moment.
        for t in range(TRIALS):
            rd = env.path("runs", "wk%d" % t)
            out = env.path("wk%d.csv" % t)
            proc = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-q", "-o", out, "--run-dir", rd],
                                    stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd=env.tmp)
            time.sleep(rng.uniform(0.05, 0.6))
            kids = lib.worker_pids(proc.pid)
            if kids:
                os.kill(rng.choice(kids), signal.SIGKILL)
            _, err = proc.communicate(timeout=120)
            c.check(proc.returncode == 0, "worker-kill trial %d: exit 0 (got %d) %s" % (t, proc.returncode,
                                                                                       lib.tail(err.decode())))
            c.check(os.path.exists(out) and read(out) == ref, "worker-kill trial %d: output identical" % t)

        # Randomised: SIGKILL the coordinator at a random moment, then resume.
        for t in range(TRIALS):
            rd = env.path("runs", "co%d" % t)
            out = env.path("co%d.csv" % t)
            proc = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-q", "-o", out, "--run-dir", rd],
                                    stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=env.tmp)
            time.sleep(rng.uniform(0.0, 0.8))
            kids = lib.child_pids(proc.pid)
            proc.kill()
            proc.wait()
            deadline = time.time() + 5
            while time.time() < deadline and any(lib.process_alive(k) for k in kids):
                time.sleep(0.05)
            c.check(not any(lib.process_alive(k) for k in kids), "coordinator-kill trial %d: workers exit on their own" % t)
            persisted = len(pack_entries(rd))
            if os.path.exists(os.path.join(rd, "run.json")):
                rc, _, err = env.fanfold_run("resume", rd, "-q", "-o", out)
                starts = [e for e in journal(rd) if e.get("event") == "start"]
                pending = starts[-1]["pending"] if starts and starts[-1].get("mode") == "resume" else None
                c.check(pending is not None and pending <= total - persisted,
                        "coordinator-kill trial %d: reprocessed %s <= not yet persisted %d" %
                        (t, pending, total - persisted))
            else:  # killed before the run directory was written: start again
                rc, _, err = env.fanfold_run("run", job, "-q", "-o", out, "--run-dir", rd, "--fresh")
            c.check(rc == 0, "coordinator-kill trial %d: finishing exits 0 (got %d) %s" % (t, rc, lib.tail(err)))
            c.check(os.path.exists(out) and read(out) == ref, "coordinator-kill trial %d: output identical" % t)
            leaked = lib.leaked_segments()
            c.check(leaked == [], "coordinator-kill trial %d: /dev/shm clean after the next start: %s" % (t, leaked))

        # A coordinator killed after its last commit leaves its segment and a run
        # with nothing left to do; the resume that starts no worker removes it too
        # (the run engine sweeps before it knows whether it needs workers).
        dead = subprocess.Popen(["true"])
        dead.wait()
        stale = "/dev/shm/fanfold-%d-00000000deadbeef" % dead.pid
        with open(stale, "wb") as f:
            f.write(b"x" * 64)
        rc, _, err = env.fanfold_run("resume", rd, "-q", "-o", out)
        c.check(rc == 0 and not os.path.exists(stale),
                "resume with nothing to process removes a dead coordinator's segment: %d %s" % (rc, lib.tail(err)))
        if os.path.exists(stale):
            os.unlink(stale)

        # Storage faults: a run directory that cannot be created; a full disk.
        blocker = env.path("not-a-dir")
        with open(blocker, "w") as f:
            f.write("x")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", os.path.join(blocker, "run"))
        c.check(rc == 3 and os.path.join(blocker, "run") in err, "uncreatable run dir: exit 3 naming it: " + err)
        mnt = env.path("small")
        os.makedirs(mnt, exist_ok=True)
        if subprocess.run(["mount", "-t", "tmpfs", "-o", "size=96k", "tmpfs", mnt]).returncode == 0:
            try:
                rd = os.path.join(mnt, "run")
                rc, _, err = env.fanfold_run("run", job, "-j", "2", "-o", env.path("full.csv"), "--run-dir", rd)
                c.check(rc == 3 and "No space left on device" in err and mnt in err,
                        "full disk: exit 3 with ENOSPC naming the path: %d %s" % (rc, lib.tail(err)))
                subprocess.run(["mount", "-o", "remount,size=64m", mnt], check=True)
                rc, _, err = env.fanfold_run("resume", rd, "-o", env.path("full.csv"))
                c.check(rc == 0 and read(env.path("full.csv")) == ref,
                        "full disk: resume works once space is available: " + lib.tail(err))
            finally:
                subprocess.run(["umount", mnt])
        else:
            c.fail("could not mount a small tmpfs to test a full disk (needs root)")
        c.check(lib.leaked_segments() == [], "no segment left at the end: %s" % lib.leaked_segments())
    c.exit()


if __name__ == "__main__":
    main()
