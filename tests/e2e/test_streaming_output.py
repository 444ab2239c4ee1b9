"""The streaming output stage gives the in-memory output's bytes (issue 14, item 1).

Eight NDJSON shards of 30,000 invented lamp readings (ids drawn from 400,000,
so about 180,000 groups) in a job of seven reductions grouped by lamp, each
with its own format and ordering: no order (CSV, aligned table), `order`
without `limit` (JSON by count descending, CSV by lamp descending), `order`
+ `limit` (NDJSON, 50 rows; a table of 100,000 rows after a rows step, more
than the small budget holds, so its heap moves to sorted files) and `limit`
without `order` (CSV). Checked:

* run with the default sort budget (rows ordered in memory) and with the
  test-only FANFOLD_TEST_ONLY_SORT_BYTES=150000 (sorted files spilled to the
  run directory and merged; the debug log says so): every result file in
  the run directory (every digit) and stdout (--digits 4, under the titles)
  byte for byte equal;
* the orders against sqlite3 (Python's stdlib module): ORDER BY n DESC,
  lamp; ORDER BY lamp DESC; ORDER BY lamp LIMIT 1000 (sqlite's BINARY
  collation compares text bytewise, as fanfold does);
* no sort file (merge/sort-*.rows) is left after success, after an error
  (the shown output cannot be written), after SIGINT during the output stage
  (exit 130 and `resume` finishes with the same bytes, or the run had
  already finished) and after SIGKILL there (the next `resume` removes the
  leftovers, a planted temporary of the result file included, and gives
  the same bytes);
* `fanfold merge` of the job's two parts gives the whole run's bytes through
  the spilled sort.
"""

import glob
import json
import os
import random
import signal
import sqlite3
import subprocess

import e2e_lib as lib

SHARDS = 8
PER_SHARD = 30000
LAMP_IDS = 400000
SMALL = "150000"

MEASURES = [
    {"name": "n", "fn": "count"},
    {"name": "energy", "fn": "sum", "of": "{/power_w}"},
    {"name": "lat_mean", "fn": "mean", "of": "{/latency_ms}"},
    {"name": "lat_lo", "fn": "min", "of": "{/latency_ms}"},
]


def reduction(name, fmt, order=None, limit=None, rows=None):
    r = {"name": name, "group": ["{/lamp}"], "measures": MEASURES, "emit": {"format": fmt}}
    if order:
        r["emit"]["order"] = order
    if limit is not None:
        r["emit"]["limit"] = limit
    if rows:
        r["rows"] = rows
    return r


REDUCTIONS = [
    reduction("plain_csv", "csv"),
    reduction("plain_table", "table"),
    reduction("by_n", "json", order=[{"by": "n", "desc": True}]),
    reduction("lamp_desc", "csv", order=[{"by": "lamp", "desc": True}]),
    reduction("low_latency", "ndjson", order=[{"by": "lat_mean"}], limit=50),
    reduction("first", "csv", limit=1000),
    reduction("per_reading", "table", order=[{"by": "per", "desc": True}], limit=100000,
              rows={"add": [{"name": "per", "expr": "energy / n"}], "keep": "n >= 1"}),
]


def write_shards(env):
    rnd = random.Random(20261203)
    rows = []
    for s in range(SHARDS):
        with open(env.path("lamps", "readings-%02d.ndjson" % s), "w") as f:
            for _ in range(PER_SHARD):
                lamp = "L%d" % rnd.randrange(LAMP_IDS)  # various lengths: key-byte order is not lamp order
                power = rnd.randrange(0, 240)
                latency = rnd.randrange(1, 4000) / 10
                rows.append((lamp, power, latency))
                f.write(json.dumps({"lamp": lamp, "power_w": power, "latency_ms": latency}) + "\n")
    return rows


def sort_files(run_dir):
    return glob.glob(os.path.join(run_dir, "merge", "sort-*.rows"))


def with_env(name, value):
    env = dict(os.environ)
    env.pop("FANFOLD_TEST_ONLY_SORT_BYTES", None)
    if value is not None:
        env[name] = value
    return env


def run(env, c, job, run_dir, budget, label):
    rc, out, err = run_env(env, [env.fanfold, "run", job, "--run-dir", run_dir, "-j", "2", "-o", "-", "--digits",
                                 "4", "--log-level", "debug", "--progress", "off"], budget)
    if not c.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
        return None
    spilled = "sort files" in err
    c.check(spilled == (budget is not None), "%s: sort files used: %s" % (label, spilled))
    c.check(not sort_files(run_dir), "%s: sort files left: %s" % (label, sort_files(run_dir)))
    results = {}
    for path in sorted(glob.glob(os.path.join(run_dir, "result-*"))):
        with open(path, "rb") as f:
            results[os.path.basename(path)] = f.read()
    return out, results


def run_env(env, argv, budget):
    done = subprocess.run(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp, timeout=300,
                          env=with_env("FANFOLD_TEST_ONLY_SORT_BYTES", budget))
    return done.returncode, done.stdout.decode(), done.stderr.decode()


def check_against_sqlite(c, rows, results):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (lamp TEXT, power INTEGER, latency REAL)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?)", rows)
    by_n = [(r["lamp"], r["n"]) for r in json.loads(results["result-by_n.json"])]
    want = [tuple(x) for x in db.execute("SELECT lamp, COUNT(*) AS n FROM r GROUP BY lamp ORDER BY n DESC, lamp")]
    c.check(len(want) > 150000, "only %d groups; the test wants 150k+" % len(want))
    c.check(by_n == want, "by_n: the order differs from sqlite3's ORDER BY n DESC, lamp")
    lamps = [line.split(",")[0] for line in results["result-lamp_desc.csv"].decode().splitlines()[1:]]
    want = [x[0] for x in db.execute("SELECT DISTINCT lamp FROM r ORDER BY lamp DESC")]
    c.check(lamps == want, "lamp_desc: the order differs from sqlite3's ORDER BY lamp DESC")
    lamps = [line.split(",")[0] for line in results["result-first.csv"].decode().splitlines()[1:]]
    want = [x[0] for x in db.execute("SELECT DISTINCT lamp FROM r ORDER BY lamp LIMIT 1000")]
    c.check(lamps == want, "first: differs from sqlite3's ORDER BY lamp LIMIT 1000")
    db.close()


def interrupt_in_output(env, c, job, run_dir, sig, expected, label):
    """Starts a run with a small sort budget, sends sig once the output stage
    starts; returns the exit status after any resume needed."""
    argv = [env.fanfold, "run", job, "--run-dir", run_dir, "-j", "2", "--log-level", "debug", "--progress", "off"]
    p = subprocess.Popen(argv, stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd=env.tmp,
                         env=with_env("FANFOLD_TEST_ONLY_SORT_BYTES", "60000"))
    sent, rc = lib.signal_at_output_stage(p, sig)
    if args_verbose():
        print("%s: exit %d" % (label, rc))
    c.check(sent, "%s: the output stage was never reached" % label)
    if sig == signal.SIGINT:
        c.check(rc in (0, 130), "%s: exit %d" % (label, rc))
        c.check(not sort_files(run_dir), "%s: sort files left after SIGINT" % label)
    if rc != 0:
        # What a coordinator killed while writing its result leaves beside it:
        # resume removes it (the run directory has one coordinator at a time).
        with open(os.path.join(run_dir, ".result.csv.tmp-99999-1"), "w") as f:
            f.write("half a result")
        rc2, _, err = run_env(env, [env.fanfold, "resume", run_dir, "--progress", "off"], "60000")
        c.check(rc2 == 0, "%s: resume exit %d: %s" % (label, rc2, lib.tail(err)))
        left = [n for n in os.listdir(run_dir) if n.startswith(".result.csv.tmp-")]
        c.check(not left, "%s: temporaries left after the resume: %s" % (label, left))
    c.check(not sort_files(run_dir), "%s: sort files left after the resume" % label)
    with open(os.path.join(run_dir, "result.csv"), "rb") as f:
        c.check(f.read() == expected, "%s: result differs from the uninterrupted run's" % label)


def args_verbose():
    return os.environ.get("FANFOLD_E2E_VERBOSE") == "1"


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_streaming_output")
    with lib.Env(args) as env:
        rows = write_shards(env)
        job = lib.write_job(env.path("lamps.json"), {"inputs": {"files": [env.path("lamps", "*.ndjson")]},
                                                     "reductions": REDUCTIONS})
        base = run(env, c, job, env.path("runs", "memory"), None, "in-memory")
        small = run(env, c, job, env.path("runs", "spilled"), SMALL, "spilled")
        if base is None or small is None:
            c.exit()
        c.check(len(base[1]) == len(REDUCTIONS), "result files: %s" % sorted(base[1]))
        for name, data in base[1].items():
            c.check(small[1].get(name) == data, "%s differs between the budgets" % name)
        c.check(small[0] == base[0], "stdout (--digits 4, titles) differs between the budgets")
        check_against_sqlite(c, rows, base[1])

        # One reduction, CSV, for the exit paths.
        one = lib.write_job(env.path("one.json"), {"inputs": {"files": [env.path("lamps", "*.ndjson")]},
                                                   "group": ["{/lamp}"], "measures": MEASURES,
                                                   "emit": {"format": "csv", "order": [{"by": "n", "desc": True}]}})
        first = env.path("runs", "one")
        rc, _, err = run_env(env, [env.fanfold, "run", one, "--run-dir", first, "-o", env.path("one.csv"),
                                   "--progress", "off"], SMALL)
        c.check(rc == 0, "one: exit %d: %s" % (rc, lib.tail(err)))
        with open(os.path.join(first, "result.csv"), "rb") as f:
            expected = f.read()
        with open(env.path("one.csv"), "rb") as f:
            c.check(f.read() == expected, "one: -o file differs from the run directory's result")

        # `fanfold merge` of two parts writes its result through the same stage.
        parts = []
        for i in (1, 2):
            d = env.path("runs", "part-%d" % i)
            rc, _, err = run_env(env, [env.fanfold, "run", one, "--part", "%d/2" % i, "--run-dir", d, "-o", "-",
                                       "--progress", "off", "-q"], SMALL)
            c.check(rc == 0, "part %d: exit %d: %s" % (i, rc, lib.tail(err)))
            parts.append(d)
        merged = env.path("runs", "merged")
        rc, _, err = run_env(env, [env.fanfold, "merge"] + parts + ["--run-dir", merged, "-o", "-", "--log-level",
                                                                    "debug"], SMALL)
        if not c.check(rc == 0, "merge: exit %d: %s" % (rc, lib.tail(err))):
            c.exit()
        c.check("sort files" in err, "merge: no sort files used")
        c.check(not sort_files(merged), "merge: sort files left")
        with open(os.path.join(merged, "result.csv"), "rb") as f:
            c.check(f.read() == expected, "merge: result differs from the whole run's")

        blocker = env.path("blocker")
        with open(blocker, "w") as f:
            f.write("a file, not a folder\n")
        bad = env.path("runs", "bad")
        rc, _, err = run_env(env, [env.fanfold, "run", one, "--run-dir", bad, "-o", os.path.join(blocker, "x.csv"),
                                   "--progress", "off"], SMALL)
        c.check(rc != 0, "unwritable output: exit 0")
        c.check(not sort_files(bad), "unwritable output: sort files left: %s" % sort_files(bad))

        interrupt_in_output(env, c, one, env.path("runs", "sigint"), signal.SIGINT, expected, "SIGINT")
        interrupt_in_output(env, c, one, env.path("runs", "sigkill"), signal.SIGKILL, expected, "SIGKILL")
    c.exit()


if __name__ == "__main__":
    main()
