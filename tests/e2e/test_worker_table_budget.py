"""Workers keep their group tables within a budget and still give the same bytes (issue 14, item 4).

Data: fanfold-gen --tags (invented road-user tags seen by street lamps), five
NDJSON shards of 40,000 lean records whose tags are drawn from 150,000 values:
about 110,000 groups, most shards meeting every key once or twice. The job
groups by tag with count, sum, mean, min and max of power_w. Checked:

* with the test-only budget FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES small enough
  that every shard's table overflows (docs/worker-table-budget.md), at -j 1
  and -j 2, the result equals the unbounded run's byte for byte, and so does
  every stored partial's body (the bytes after its header);
* every group against sqlite3 (Python's stdlib module): GROUP BY tag with
  COUNT(*), MIN and MAX exact, SUM and AVG within 1e-12 relative (fanfold's
  sum is compensated and its mean Welford's, docs/measures.md; sqlite3 adds
  plainly);
* the overflow's temporary files have no name: while a worker is stopped
  mid-shard (test-only fault "stall") with its overflow open, the worker holds
  a "(deleted)" file under TMPDIR and TMPDIR lists nothing; after that worker
  is killed with SIGKILL the run retries the shard, finishes with the same
  result, and TMPDIR is still empty (the kernel freed the file).
"""

import glob
import json
import os
import signal
import sqlite3
import struct
import subprocess
import time

import e2e_lib as lib
import reference as ref

SHARDS = 5
PER_SHARD = 40000
TAGS = 150000
SMALL = 20000  # bytes: a few hundred groups a table


def sqlite_expected(records):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (tag TEXT, power REAL)")
    db.executemany("INSERT INTO r VALUES (?, ?)", ((r["tag"], r.get("power_w")) for r in records))
    out = {}
    for tag, n, s, mean, lo, hi in db.execute(
            "SELECT tag, COUNT(*), SUM(power), AVG(power), MIN(power), MAX(power) FROM r GROUP BY tag"):
        out[tag] = (n, s, mean, lo, hi)
    db.close()
    return out


def partial_bodies(run_dir):
    """{slot: bytes after the fixed header} of a run directory's committed
    partials, read from the packs as docs/run-directory.md describes them
    (u32 magic "FFPK", u32 slot, u64 length, u64 check, the partial), the
    header's size from its bytes 6-7 (docs/partial-state.md)."""
    out = {}
    for pack in sorted(glob.glob(os.path.join(run_dir, "partials", "pack-*.ffpk"))):
        with open(pack, "rb") as f:
            data = f.read()
        off = 0
        while len(data) - off >= 24:
            magic, slot, length, _check = struct.unpack_from("<IIQQ", data, off)
            if magic != 0x4B504646 or length > len(data) - off - 24:
                break
            b = data[off + 24: off + 24 + length]
            header_size = int.from_bytes(b[6:8], "little")
            out[slot] = b[header_size:]
            off += 24 + length
    return out


def with_env(extra):
    env = dict(os.environ)
    env.update(extra)
    return env


def run(env, c, job, workers, budget, label, tmpdir):
    run_dir = env.path("runs", label)
    out = env.path("out-%s.json" % label)
    extra = {"TMPDIR": tmpdir}
    if budget:
        extra["FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES"] = str(budget)
    done = subprocess.run([env.fanfold, "run", job, "-j", str(workers), "-o", out, "--run-dir", run_dir,
                           "--progress", "off"], env=with_env(extra), stdout=subprocess.PIPE,
                          stderr=subprocess.PIPE, timeout=300)
    if not c.check(done.returncode == 0, "%s: exit %d: %s" % (label, done.returncode,
                                                             lib.tail(done.stderr.decode("utf-8", "replace")))):
        return None, None
    c.check(os.listdir(tmpdir) == [], "%s: files left in TMPDIR: %s" % (label, os.listdir(tmpdir)[:3]))
    with open(out, "rb") as f:
        return f.read(), partial_bodies(run_dir)


def cpu_ticks(pid):
    """User + system CPU time of pid in clock ticks (proc(5): fields 14 and
    15 of /proc/PID/stat), or None if it is gone."""
    try:
        with open("/proc/%d/stat" % pid) as f:
            fields = f.read().rsplit(")", 1)[1].split()
        return int(fields[11]) + int(fields[12])
    except (OSError, IndexError, ValueError):
        return None


def overflow_fds(pid, tmpdir):
    """The worker's open files under tmpdir (Linux /proc/PID/fd links)."""
    found = []
    try:
        for fd in os.listdir("/proc/%d/fd" % pid):
            try:
                target = os.readlink("/proc/%d/fd/%s" % (pid, fd))
            except OSError:
                continue
            if target.startswith(tmpdir + "/"):
                found.append(target)
    except OSError:
        pass
    return found


def kill_trial(env, c, job, base, tmpdir):
    """A worker stalls mid-shard with its overflow open; it is killed; the run retries and finishes."""
    run_dir = env.path("runs", "killed")
    out = env.path("out-killed.json")
    extra = {"TMPDIR": tmpdir, "FANFOLD_TEST_ONLY_WORKER_TABLE_BYTES": str(SMALL),
             "FANFOLD_TEST_ONLY_FAULTS": "inject:stall:shard=2,attempt=1,after=30000"}
    p = subprocess.Popen([env.fanfold, "run", job, "-j", "2", "-o", out, "--run-dir", run_dir, "--progress", "off"],
                         env=with_env(extra), stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    victim, files = None, []
    deadline = time.time() + 120
    while time.time() < deadline and victim is None and p.poll() is None:
        for w in lib.worker_pids(p.pid):
            files = overflow_fds(w, tmpdir)
            if files:
                # The stalled worker: its overflow files unchanged and no CPU
                # time used for 0.3 s. A worker still reading (slowly, say
                # under a sanitizer) keeps using CPU; killing it instead would
                # leave the stalled one asleep and the run waiting for ever.
                cpu = cpu_ticks(w)
                time.sleep(0.3)
                if overflow_fds(w, tmpdir) == files and cpu is not None and cpu_ticks(w) == cpu:
                    victim = w
                    break
        time.sleep(0.05)
    c.check(victim is not None, "no worker was seen holding an overflow file under TMPDIR")
    if victim is not None:
        c.check(all(f.endswith("(deleted)") for f in files), "an overflow file has a name: %s" % files)
        c.check(os.listdir(tmpdir) == [], "TMPDIR lists files while a worker spills: %s" % os.listdir(tmpdir))
        os.kill(victim, signal.SIGKILL)
    try:
        _, err = p.communicate(timeout=300)
    except subprocess.TimeoutExpired:
        p.kill()
        _, err = p.communicate()
    c.check(p.returncode == 0, "killed run: exit %d: %s" % (p.returncode, lib.tail(err.decode("utf-8", "replace"))))
    c.check(os.listdir(tmpdir) == [], "files left in TMPDIR after the kill: %s" % os.listdir(tmpdir)[:3])
    if p.returncode == 0:
        with open(out, "rb") as f:
            c.check(f.read() == base, "the result after a killed worker differs")
        with open(os.path.join(run_dir, "journal.ndjson")) as f:
            attempts = [json.loads(l) for l in f if '"attempt"' in l]
        c.check(any(a.get("shard") == 2 and a.get("attempt") == 1 and a.get("outcome") != "done" for a in attempts)
                or any(a.get("attempt") == 2 for a in attempts), "the journal shows no retried shard: %s" % attempts[:4])


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_worker_table_budget")
    with lib.Env(args) as env:
        data = env.path("tags")
        env.generate(data, "--shards", SHARDS, "--records", PER_SHARD, "--spread", 0, "--seed", 14,
                     "--tags", TAGS, "--lean", "--bad-rate", 0.001)
        job = lib.write_job(env.path("by_tag.json"), {
            "inputs": {"files": [os.path.join(data, "*.ndjson.zst")]},
            "group": ["{/tag}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "energy", "fn": "sum", "of": "{/power_w}"},
                         {"name": "mean", "fn": "mean", "of": "{/power_w}"},
                         {"name": "lo", "fn": "min", "of": "{/power_w}"},
                         {"name": "hi", "fn": "max", "of": "{/power_w}"}],
            "emit": {"format": "json"}})
        tmpdir = env.path("tmp", "x")
        tmpdir = os.path.dirname(tmpdir)
        os.makedirs(tmpdir, exist_ok=True)
        records = []
        for f in sorted(os.listdir(data)):
            if f.endswith(".zst"):
                records += ref.load_shard(os.path.join(data, f))[0]
        expected = sqlite_expected(records)
        c.check(len(expected) > 100000, "only %d groups; the test wants 100k+" % len(expected))

        base, base_parts = run(env, c, job, 2, 0, "unbounded", tmpdir)
        if base is None:
            c.exit()
        for workers, budget in ((1, SMALL), (2, SMALL), (2, 3000), (1, 400000)):
            label = "budget-%d-j%d" % (budget, workers)
            got, parts = run(env, c, job, workers, budget, label, tmpdir)
            if got is not None:
                c.check(got == base, "%s: result differs from the unbounded run's" % label)
                c.check(parts == base_parts, "%s: a partial's body differs from the unbounded run's" % label)

        result = json.loads(base)
        c.check(len(result) == len(expected), "%d groups, sqlite3 has %d" % (len(result), len(expected)))
        bad = 0
        for row in result:
            want = expected.get(row["tag"])
            ok = want is not None
            if ok:
                n, s, mean, lo, hi = want
                ok = (row["n"] == n and row["lo"] == lo and row["hi"] == hi and
                      (row["energy"] == s if s is None or row["energy"] is None else lib.rel_close(row["energy"], s, 1e-12)) and
                      (row["mean"] == mean if mean is None or row["mean"] is None else lib.rel_close(row["mean"], mean, 1e-12)))
            if not ok:
                bad += 1
                if bad <= 3:
                    c.fail("tag %s: fanfold %r, sqlite3 %r" % (row.get("tag"), row, want))
        c.check(bad == 0, "%d of %d groups disagree with sqlite3 GROUP BY" % (bad, len(result)))

        kill_trial(env, c, job, base, tmpdir)
    c.exit()


if __name__ == "__main__":
    main()
