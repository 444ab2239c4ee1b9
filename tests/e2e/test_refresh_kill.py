"""A refresh killed with SIGKILL at a random moment — while it expands the
patterns, rewrites run.json, computes the new shards, writes the result, or
collects the partials of dropped shards — is finished by the next `refresh`
(or, once the new run.json is written, by `resume`) with the bytes of a `--fresh` run over the same files (docs/run-directory.md,
"What `refresh` does"). Each trial changes the file list first (hours added,
hours removed), so a kill can land between the old and the new shard list,
and every trial's dead partials give the compaction work to be cut short in.
The workers of a killed coordinator leave on their own and /dev/shm is clean
after the next start. Afterwards every pack is at least half live (Python's
struct over the pack layout of docs/run-directory.md, run.json's slots).
"""

import json
import os
import random
import shutil
import signal
import struct
import subprocess
import time

import e2e_lib as lib

TRIALS = int(os.environ.get("FANFOLD_CRASH_TRIALS", "8"))
POOL = 30 + 5 * TRIALS


def pack_use(run_dir):
    """[(pack, bytes, live bytes)]: each pack's size and the bytes of its entries that hold the winning
    (highest pack) partial of a slot in run.json (frame: u32 magic, u32 slot, u64 length, u64 hash)."""
    with open(os.path.join(run_dir, "run.json")) as f:
        live = {s["slot"] for s in json.load(f)["shards"]}
    part = os.path.join(run_dir, "partials")
    names = sorted((int(n[5:-5]), n) for n in os.listdir(part) if n.startswith("pack-") and n.endswith(".ffpk"))
    winner = {}
    sizes = {}
    for seq, name in names:
        data = open(os.path.join(part, name), "rb").read()
        sizes[name] = len(data)
        off = 0
        while len(data) - off >= 24:
            magic, slot, length, _ = struct.unpack_from("<IIQQ", data, off)
            if magic != 0x4B504646 or length > len(data) - off - 24:
                break
            winner[slot] = (name, 24 + length)
            off += 24 + length
    used = {name: 0 for _, name in names}
    for slot, (name, n) in winner.items():
        if slot in live:
            used[name] += n
    return [(name, sizes[name], used[name]) for _, name in names]


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_refresh_kill")
    rng = random.Random(int(os.environ.get("FANFOLD_CRASH_SEED", "1515")))
    with lib.Env(args) as env:
        pool = os.path.dirname(env.path("incoming", "x"))
        data = os.path.dirname(env.path("logs", "x"))
        env.generate(pool, "--shards", POOL, "--records", 300, "--seed", 7, "--compress", "none")
        hours = sorted(f for f in os.listdir(pool) if f.endswith(".ndjson"))
        for h in hours[:30]:
            shutil.copy(os.path.join(pool, h), data)
        job = lib.write_job(env.path("job.json"), {
            "inputs": {"files": [os.path.join(data, "*.ndjson")]},
            "group": ["{/district}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/power_w}"},
                         {"name": "lat", "fn": "quantile", "of": "{/latency_ms}", "at": [0.5, 0.9]}],
            "emit": {"format": "csv"},
        })
        rd = env.path("runs", "r")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", rd, "-q", "-o", env.path("first.csv"))
        c.check(rc == 0, "first run: exit %d: %s" % (rc, lib.tail(err)))
        next_hour = 30
        killed = 0  # trials whose refresh was still running when killed
        resumed = 0  # trials finished by resume
        # Kills land within the time the last finishing refresh or resume
        # took (a refresh of a few new hours takes tens of milliseconds, less
        # than a fixed window's end on a quiet machine).
        span = 0.06
        for t in range(TRIALS):
            for h in hours[next_hour:next_hour + 5]:
                shutil.copy(os.path.join(pool, h), data)
            next_hour += 5
            present = sorted(os.listdir(data))
            for h in rng.sample(present, 2):
                os.remove(os.path.join(data, h))
            out = env.path("t%d.csv" % t)
            with open(os.path.join(rd, "run.json")) as f:
                generation_before = json.load(f).get("generation", 1)
            proc = subprocess.Popen([env.fanfold, "refresh", rd, "-j", "2", "-q", "-o", out],
                                    stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, cwd=env.tmp)
            time.sleep(rng.uniform(0.0, span))
            kids = lib.child_pids(proc.pid)
            proc.send_signal(signal.SIGKILL)
            killed += proc.wait() == -signal.SIGKILL
            deadline = time.time() + 5
            while time.time() < deadline and any(lib.process_alive(k) for k in kids):
                time.sleep(0.05)
            c.check(not any(lib.process_alive(k) for k in kids), "trial %d: workers exit on their own" % t)
            # Once the new run.json is in place, `resume` finishes the refresh
            # too (every other such trial); otherwise the next refresh does.
            with open(os.path.join(rd, "run.json")) as f:
                generation = json.load(f).get("generation", 1)
            verb = "resume" if generation > generation_before and t % 2 == 1 else "refresh"
            resumed += verb == "resume"
            started = time.monotonic()
            rc, _, err = env.fanfold_run(verb, rd, "-j", "2", "-q", "-o", out)
            span = max(0.005, 0.9 * (time.monotonic() - started))
            c.check(rc == 0, "trial %d: the next %s exits %d: %s" % (t, verb, rc, lib.tail(err)))
            fresh = env.path("fresh%d.csv" % t)
            rc, _, err = env.fanfold_run("run", job, "--run-dir", env.path("runs", "f%d" % t), "--fresh", "-q",
                                         "-o", fresh)
            c.check(rc == 0, "trial %d: fresh run exits %d: %s" % (t, rc, lib.tail(err)))
            with open(out, "rb") as a, open(fresh, "rb") as b:
                c.check(a.read() == b.read(), "trial %d: refresh after a kill differs from --fresh" % t)
            with open(os.path.join(rd, "summary.json")) as f:
                summary = json.load(f)
            total = summary["shards"]["total"]
            with open(os.path.join(rd, "run.json")) as f:
                c.check(summary["generation"] == json.load(f)["generation"],
                        "trial %d: summary.json's generation is run.json's" % t)
            c.check(total == len(os.listdir(data)), "trial %d: %d shards, %d files" % (t, total, len(os.listdir(data))))
            leaked = lib.leaked_segments()
            c.check(leaked == [], "trial %d: /dev/shm clean after the next start: %s" % (t, leaked))
            for name, size, used in pack_use(rd):
                c.check(used * 2 >= size, "trial %d: %s holds %d live bytes of %d after compaction" % (t, name, used, size))
        # Not a check (timing decides): how many kills landed mid-refresh.
        print("test_refresh_kill: %d of %d refreshes were killed before they ended, %d finished by resume"
              % (killed, TRIALS, resumed))
    c.exit()


if __name__ == "__main__":
    main()
