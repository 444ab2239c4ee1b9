"""Rows that come out of the merge in the result's order are written without a sort (issue 14).

When the merge holds sorted runs, the output stage first writes each row
straight to the result files while every row's sort key is above the one
before; the first row out of order drops those files and the rows are
ordered as before. Five reductions of four NDJSON shards of invented
readings, each written to its own file (emit.path):

* `fixed_csv`, `fixed_json`: keys of one width ("K00017"): the merge's
  key-byte order is the result's, so nothing is sorted (the debug log says
  "no sort");
* `late`: three-letter names and one five-letter name ("q0000"): group keys
  start with their length, so the long name comes last from the merge but
  sorts among the short ones: the walk fails on the very last row (the log
  names it), the files are dropped and the rows sorted;
* `ints`: integer keys, which the merge walks in little-endian byte order;
* `by_count`: ordered by count, descending.

Checked: with the results in runs (FANFOLD_TEST_ONLY_MERGE_RUNS=50), in
runs with a tiny sort budget (FANFOLD_TEST_ONLY_SORT_BYTES, so the
fallback spills sorted files), and in the in-memory tables (no streaming
tried), every result file and every shown file are byte for byte the same,
and each reduction's rows equal sqlite3's (Python's stdlib module) GROUP BY
with ORDER BY (BINARY collation compares text bytewise, as fanfold does;
integers numerically); no temporary or sort file is left behind. SIGINT
and SIGKILL sent as the output stage starts, then `resume`: the same bytes
(temporaries of the shown files whose writer is gone removed, a live
writer's kept)
and nothing left behind.
"""

import csv
import glob
import io
import json
import os
import random
import re
import signal
import socket
import sqlite3
import subprocess

import e2e_lib as lib

SHARDS = 4
PER_SHARD = 3000
LATE_NAME = "q0000"

MEASURES = [{"name": "n", "fn": "count"}, {"name": "power", "fn": "sum", "of": "{/power_w}"}]

# name, group pointer, format, order, SQL column, SQL ORDER BY
REDUCTIONS = [
    ("fixed_csv", "/id", "csv", None, "id", "id"),
    ("fixed_json", "/id", "json", None, "id", "id"),
    ("late", "/name", "ndjson", None, "name", "name"),
    ("ints", "/k", "csv", None, "k", "k"),
    ("by_count", "/id", "csv", [{"by": "n", "desc": True}], "id", "count(*) DESC, id"),
]
STREAMED = {"fixed_csv", "fixed_json"}


def write_shards(env):
    rnd = random.Random(20261203)
    letters = "pqrstuvwxy"  # no 'e': a CSV reader could take "p1e" for a number elsewhere
    rows = []
    for s in range(SHARDS):
        with open(env.path("data", "readings-%d.ndjson" % s), "w") as f:
            for i in range(PER_SHARD):
                name = LATE_NAME if (s == 2 and i % 500 == 7) else "%s%02d" % (rnd.choice(letters), rnd.randrange(100))
                rec = ("K%05d" % rnd.randrange(4000), name, rnd.randrange(-300, 3000), rnd.randrange(0, 240))
                rows.append(rec)
                f.write(json.dumps({"id": rec[0], "name": rec[1], "k": rec[2], "power_w": rec[3]}) + "\n")
    return rows


def expected_rows(rows):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (id TEXT, name TEXT, k INTEGER, power INTEGER)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?, ?)", rows)
    out = {}
    for name, _, _, _, col, order in REDUCTIONS:
        q = "SELECT %s, count(*), sum(power) FROM r GROUP BY %s ORDER BY %s" % (col, col, order)
        out[name] = [[str(a), str(b), str(c)] for a, b, c in db.execute(q)]
    return out


def parsed(data, fmt, key):
    """A result file's rows as [key, n, power] texts."""
    text = data.decode("utf-8")
    if fmt == "csv":
        table = list(csv.reader(io.StringIO(text, newline="")))
        return table[1:]
    objs = json.loads(text) if fmt == "json" else [json.loads(l) for l in text.splitlines() if l.strip()]
    return [[str(o[key]), str(o["n"]), str(o["power"])] for o in objs]


def run(env, c, job, run_dir, switches, label):
    env_vars = dict(os.environ)
    for k in ("FANFOLD_TEST_ONLY_MERGE_RUNS", "FANFOLD_TEST_ONLY_SORT_BYTES"):
        env_vars.pop(k, None)
    env_vars.update(switches)
    done = subprocess.run([env.fanfold, "run", job, "--run-dir", run_dir, "-j", "2", "--log-level", "debug",
                           "--progress", "off"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp,
                          timeout=300, env=env_vars)
    err = done.stderr.decode()
    if not c.check(done.returncode == 0, "%s: exit %d: %s" % (label, done.returncode, lib.tail(err))):
        return None, None, err
    kept, shown = {}, {}
    for name, _, fmt, _, _, _ in REDUCTIONS:
        with open(os.path.join(run_dir, "result-%s.%s" % (name, fmt)), "rb") as f:
            kept[name] = f.read()
        with open(env.path("shown", label, "%s.%s" % (name, fmt)), "rb") as f:
            shown[name] = f.read()
        c.check(shown[name] == kept[name], "%s: %s: the shown file differs from the run directory's" % (label, name))
    c.check(not leftovers(env, run_dir, label), "%s: files left: %s" % (label, leftovers(env, run_dir, label)))
    return kept, shown, err


def leftovers(env, run_dir, label):
    """Sort files and temporaries (hidden ones included) left behind."""
    left = [p for p in glob.glob(os.path.join(run_dir, "**", "*"), recursive=True) if "sort-" in p or ".tmp" in p]
    left += glob.glob(os.path.join(run_dir, ".*.tmp*"))
    shown = os.path.dirname(env.path("shown", label, "x"))
    return left + [os.path.join(shown, n) for n in os.listdir(shown) if not n.endswith((".csv", ".json", ".ndjson"))]


def interrupt_streaming(env, c, job, run_dir, sig, label, expected):
    """Sends sig once the output stage starts (rows streaming to the files);
    then resumes if needed: the same bytes, and nothing left behind."""
    env_vars = dict(os.environ, FANFOLD_TEST_ONLY_MERGE_RUNS="50")
    env_vars.pop("FANFOLD_TEST_ONLY_SORT_BYTES", None)
    p = subprocess.Popen([env.fanfold, "run", job, "--run-dir", run_dir, "-j", "2", "--log-level", "debug",
                          "--progress", "off"], stdout=subprocess.DEVNULL, stderr=subprocess.PIPE, cwd=env.tmp,
                         env=env_vars)
    sent, rc = lib.signal_at_output_stage(p, sig)
    c.check(sent, "%s: the output stage was never reached" % label)
    if sig == signal.SIGINT:
        c.check(rc in (0, 130), "%s: exit %d" % (label, rc))
    planted = []
    if rc != 0:
        # Temporaries of the shown files as a killed writer on this machine
        # leaves them (its PID no longer alive: resume removes them, with
        # this host's name or the older name without a host), as a live
        # writer has them (this script's PID: resume leaves them alone) and
        # as a writer on another machine sharing the folder has them (its
        # PID means nothing here: left alone).
        gone = subprocess.Popen(["true"])
        gone.wait()
        # This machine's tag: FNV-1a (32 bits) of its host name, as 8 hex
        # digits (Fowler, Noll and Vo's published offset basis and prime).
        h = 2166136261
        for byte in socket.gethostname().encode():
            h = ((h ^ byte) * 16777619) & 0xFFFFFFFF
        host = "%08x" % h
        shown = os.path.dirname(env.path("shown", "runs", "x"))
        for name, _, fmt, _, _, _ in REDUCTIONS:
            for tag, keep in (("%d@%s" % (gone.pid, host), False), ("%d" % gone.pid, False),
                              ("%d@%s" % (os.getpid(), host), True), ("%d@elsewhere-%s" % (gone.pid, host), True)):
                path = os.path.join(shown, ".%s.%s.tmp-%s-7" % (name, fmt, tag))
                with open(path, "w") as f:
                    f.write("half a result")
                planted.append((path, keep))
        done = subprocess.run([env.fanfold, "resume", run_dir, "--progress", "off"], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, cwd=env.tmp, env=env_vars, timeout=300)
        c.check(done.returncode == 0, "%s: resume exit %d: %s" % (label, done.returncode,
                                                                 lib.tail(done.stderr.decode())))
    for path, live in planted:
        c.check(os.path.exists(path) == live, "%s: %s: %s" % (label, os.path.basename(path), (
            "a live or other machine's writer's temporary was removed" if live else "a dead writer's temporary was left")))
        if live:
            os.remove(path)
    for name, _, fmt, _, _, _ in REDUCTIONS:
        with open(os.path.join(run_dir, "result-%s.%s" % (name, fmt)), "rb") as f:
            c.check(f.read() == expected[name], "%s: %s differs from the uninterrupted run's" % (label, name))
    c.check(not leftovers(env, run_dir, "runs"), "%s: files left: %s" % (label, leftovers(env, run_dir, "runs")))


def output_lines(err):
    """reduction index -> its debug line about the output stage."""
    out = {}
    for m in re.finditer(r"output: reduction (\d+): .*", err):
        out[int(m.group(1))] = m.group(0)
    return out


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_output_in_order")
    with lib.Env(args) as env:
        rows = write_shards(env)
        expected = expected_rows(rows)
        results = {}
        for label, switches in (("runs", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50"}),
                                ("runs_spilled", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50",
                                                  "FANFOLD_TEST_ONLY_SORT_BYTES": "20000"}),
                                ("tables", {})):
            reductions = []
            for name, ptr, fmt, order, _, _ in REDUCTIONS:
                r = {"name": name, "group": ["{%s}" % ptr], "measures": MEASURES,
                     "emit": {"format": fmt, "path": os.path.join("shown", label, "%s.%s" % (name, fmt))}}
                if order:
                    r["emit"]["order"] = order
                reductions.append(r)
            job = lib.write_job(env.path("job-%s.json" % label),
                                {"inputs": {"files": [env.path("data", "*.ndjson")]}, "reductions": reductions})
            kept, _, err = run(env, c, job, env.path("runs", label), switches, label)
            if kept is None:
                c.exit()
            results[label] = kept
            lines = output_lines(err)
            for i, (name, ptr, fmt, _, _, _) in enumerate(REDUCTIONS):
                line = lines.get(i, "")
                c.check(("no sort" in line) == (label != "tables" and name in STREAMED),
                        "%s: %s: streamed or not as expected: %r" % (label, name, line))
                if label != "tables" and name == "late":
                    # The long name is the merge's last key; it sorts before the
                    # three-letter names after it, so the last row is the first out of order.
                    c.check("row %d came out of order" % len(expected["late"]) in line,
                            "%s: late: not caught at the last row: %r" % (label, line))
                got = parsed(kept[name], fmt, ptr[1:])
                c.check(got == expected[name], "%s: %s: rows differ from sqlite3's (first: %s vs %s)" %
                        (label, name, got[:2], expected[name][:2]))
        for name, _, _, _, _, _ in REDUCTIONS:
            c.check(results["runs"][name] == results["tables"][name], "%s: runs and tables differ" % name)
            c.check(results["runs_spilled"][name] == results["tables"][name], "%s: spilled and tables differ" % name)
        # Ctrl-C and SIGKILL while rows stream to the files, then resume.
        for sig, label in ((signal.SIGINT, "runs_sigint"), (signal.SIGKILL, "runs_sigkill")):
            interrupt_streaming(env, c, env.path("job-runs.json"), env.path("runs", label), sig, label, results["runs"])
        # The case is only a late one if the long name does not sort last.
        c.check(expected["late"][-1][0] != LATE_NAME, "late: %s sorts last; the data does not test a late row" % LATE_NAME)
    c.exit()


if __name__ == "__main__":
    main()
