"""Rows in order written piece by piece of the merged run, on a thread each (issue 14).

When the merge's result is a run cut into key ranges (pieces) and the
result is CSV or NDJSON, the output stage walks every piece on its own
thread: its rows are finalized, checked for order and formatted there, and
the text is written in piece order. Four NDJSON shards of invented
readings, results forced into runs over 1, 2, 3 and 7 key ranges
(FANFOLD_TEST_ONLY_MERGE_RUNS=50:N; one range takes the one-thread path)
and kept in the in-memory tables (never streamed), five reductions:

* `fixed_csv`, `fixed_ndjson`: keys of one width, float sums (text from
  the shortest round trip), a rows step that adds a column and drops rows
  (so the pieces' row counts differ from their groups'), and in CSV a
  shown copy rounded to 3 digits (`shown_digits`), so two copies differ;
* `late`: one five-letter name among three-letter ones: the last row is the
  first out of order, reported with its row number over all pieces;
* `mixed`: three- and four-letter names: the first four-letter name (past
  every three-letter one in the merge's key-byte order, as the key's
  length comes first) is the first row out of order: its row number is the
  three-letter names' count + 1, whatever piece it falls in;
Over 2 and 7 ranges the output's share is 20,000 bytes
(FANFOLD_TEST_ONLY_SORT_BYTES), so pieces ahead of the one being written
wait for room.

Checked: every file byte for byte the same over 1, 2, 3 and 7 ranges and
the tables; rows against sqlite3's GROUP BY + ORDER BY (Python's stdlib
module; BINARY collation compares text bytewise, as fanfold does); which
results were streamed (the debug log's "no sort"); the out-of-order row
numbers; nothing left behind.
"""

import csv
import glob
import io
import json
import os
import random
import re
import sqlite3
import subprocess

import e2e_lib as lib

SHARDS = 4
PER_SHARD = 4000
MEASURES = [{"name": "n", "fn": "count"}, {"name": "power", "fn": "sum", "of": "{/power_w}", "shown_digits": 3}]
ROWS_STEP = {"add": [{"name": "per", "expr": "power / n"}], "keep": "n >= 2"}

# name, group pointer, format, rows step, streamed on runs
REDUCTIONS = [
    ("fixed_csv", "/id", "csv", True, True),
    ("fixed_ndjson", "/id", "ndjson", True, True),
    ("late", "/name", "csv", False, False),
    ("mixed", "/word", "csv", False, False),
]


def write_shards(env):
    rnd = random.Random(20261203)
    rows = []
    os.makedirs(env.path("data"), exist_ok=True)
    for s in range(SHARDS):
        with open(env.path("data", "readings-%d.ndjson" % s), "w") as f:
            for i in range(PER_SHARD):
                name = "q0000" if (s == 1 and i % 700 == 3) else "%s%02d" % (rnd.choice("pqrstuvwxy"), rnd.randrange(100))
                word = "%s%d" % (rnd.choice("pqrs"), rnd.randrange(1000))  # 2 to 4 characters
                power = rnd.randrange(-3000, 30000) / 10.0
                rec = ("K%05d" % rnd.randrange(6000), name, word, power)
                rows.append(rec)
                f.write(json.dumps({"id": rec[0], "name": rec[1], "word": rec[2], "power_w": rec[3]}) + "\n")
    return rows


def expected(rows):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (id TEXT, name TEXT, word TEXT, power REAL)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?, ?)", rows)
    out = {}
    for name, ptr, _, step, _ in REDUCTIONS:
        col = ptr[1:]
        having = " HAVING count(*) >= 2" if step else ""
        q = "SELECT %s, count(*), sum(power) FROM r GROUP BY %s%s ORDER BY %s" % (col, col, having, col)
        out[name] = [(a, b, c) for a, b, c in db.execute(q)]
    # The merge walks keys by length first, then bytes: the first key
    # longer than the shortest ones that sorts before the one ahead of it.
    words = [w for w, _, _ in out["mixed"]]
    walk = sorted(words, key=lambda w: (len(w), w))
    out["mixed_first_late"] = next(i + 1 for i in range(1, len(walk)) if walk[i] < walk[i - 1])
    out["late_rows"] = len(out["late"])
    return out


def rows_of(data, fmt, key):
    text = data.decode("utf-8")
    if fmt == "csv":
        table = list(csv.reader(io.StringIO(text, newline="")))[1:]
        return [(r[0], int(r[1]), float(r[2])) for r in table]
    objs = [json.loads(l) for l in text.splitlines() if l.strip()]
    return [(o[key], o["n"], o["power"]) for o in objs]


def run(env, c, label, switches):
    reductions = []
    for name, ptr, fmt, step, _ in REDUCTIONS:
        r = {"name": name, "group": ["{%s}" % ptr], "measures": MEASURES,
             "emit": {"format": fmt, "path": os.path.join("shown", label, "%s.%s" % (name, fmt))}}
        if step:
            r["rows"] = ROWS_STEP
        reductions.append(r)
    job = lib.write_job(env.path("job-%s.json" % label),
                        {"inputs": {"files": [env.path("data", "*.ndjson")]}, "reductions": reductions})
    run_dir = env.path("runs", label)
    env_vars = {k: v for k, v in os.environ.items() if not k.startswith("FANFOLD_TEST_ONLY_")}
    env_vars.update(switches)
    done = subprocess.run([env.fanfold, "run", job, "--run-dir", run_dir, "-j", "2", "--log-level", "debug",
                           "--progress", "off"], stdout=subprocess.PIPE, stderr=subprocess.PIPE, cwd=env.tmp,
                          timeout=300, env=env_vars)
    err = done.stderr.decode()
    if not c.check(done.returncode == 0, "%s: exit %d: %s" % (label, done.returncode, lib.tail(err))):
        return None, None, err
    files = {}
    for name, _, fmt, _, _ in REDUCTIONS:
        with open(os.path.join(run_dir, "result-%s.%s" % (name, fmt)), "rb") as f:
            kept = f.read()
        with open(env.path("shown", label, "%s.%s" % (name, fmt)), "rb") as f:
            shown = f.read()
        files[name] = (kept, shown)
    left = [p for p in glob.glob(os.path.join(run_dir, "**", "*"), recursive=True) if "sort-" in p or ".tmp" in p]
    left += glob.glob(os.path.join(run_dir, ".*.tmp*")) + glob.glob(env.path("shown", label, ".*"))
    c.check(not left, "%s: files left: %s" % (label, left))
    lines = {int(m.group(1)): m.group(0) for m in re.finditer(r"output: reduction (\d+): .*", err)}
    return files, lines, err


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_output_by_pieces")
    with lib.Env(args) as env:
        want = expected(write_shards(env))
        results = {}
        for label, switches in (("tables", {}),
                                ("runs1", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50:1"}),
                                ("runs2", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50:2", "FANFOLD_TEST_ONLY_SORT_BYTES": "20000"}),
                                ("runs3", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50:3"}),
                                ("runs7", {"FANFOLD_TEST_ONLY_MERGE_RUNS": "50:7", "FANFOLD_TEST_ONLY_SORT_BYTES": "20000"})):
            files, lines, _ = run(env, c, label, switches)
            if files is None:
                c.exit()
            results[label] = files
            for i, (name, ptr, fmt, _, streamed) in enumerate(REDUCTIONS):
                line = lines.get(i, "")
                c.check(("no sort" in line) == (label != "tables" and streamed),
                        "%s: %s: streamed or not as expected: %r" % (label, name, line))
                got = [(k, n, p) for k, n, p in rows_of(files[name][0], fmt, ptr[1:])]
                ref = [(k, n, p) for k, n, p in want[name]]
                c.check(len(got) == len(ref) and all(a[0] == b[0] and a[1] == b[1] and lib.rel_close(a[2], b[2], 1e-9)
                                                     for a, b in zip(got, ref)),
                        "%s: %s: rows differ from sqlite3's (%d vs %d rows; first %s vs %s)" %
                        (label, name, len(got), len(ref), got[:1], ref[:1]))
            if label != "tables":
                c.check("row %d came out of order" % want["late_rows"] in lines.get(2, ""),
                        "%s: late: not caught at the last row (%d): %r" % (label, want["late_rows"], lines.get(2)))
                c.check("row %d came out of order" % want["mixed_first_late"] in lines.get(3, ""),
                        "%s: mixed: not caught at row %d: %r" % (label, want["mixed_first_late"], lines.get(3)))
            c.check(files["fixed_csv"][1] != files["fixed_csv"][0], "%s: the rounded shown copy equals the kept one" % label)
        for label in ("runs1", "runs2", "runs3", "runs7"):
            for name in results["tables"]:
                c.check(results[label][name] == results["tables"][name], "%s: %s differs from the tables'" % (label, name))
    c.exit()


if __name__ == "__main__":
    main()
