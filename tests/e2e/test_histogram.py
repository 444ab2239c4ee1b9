"""The histogram measure end to end (issue 12, item 6).

Generated NDJSON rows in four shards: per group, a value x (doubles,
integers, values on the edges, numeric text, and things every numeric
measure skips: "nan", text, null, bools, missing) and an integer id around
2^53. Three histograms: x by edges, x by width (0 to 1 by 0.1, whose edges
are the decimals 0.1, 0.2, 0.3 ...), and id by edges around 2^53. Run with
-j 1 and -j 2. Checked:

* the CSV results are byte-identical across worker counts;
* the header names the slots (below, one column per bin [a, b), above);
* every group's count per slot equals sqlite3's (Python's stdlib module):
  SELECT g, CASE WHEN x < e0 THEN 0 WHEN x < e1 THEN 1 ... ELSE n+1 END,
  COUNT(*) ... GROUP BY g, slot, with the edges as SQL decimal literals
  (sqlite3 compares an INTEGER with a REAL exactly, as fanfold does);
* the same counts equal collections.Counter of bisect.bisect_right over
  the edges (Python compares int with float exactly);
* the run summary reports the skipped values Python counts.
"""

import bisect
import collections
import csv
import io
import json
import math
import random
import sqlite3

import e2e_lib as lib

SHARDS = 4
ROWS = 6000
TWO53 = 2 ** 53
GROUPS = ["north", "south", "east"]
X_EDGES = ["-10", "0", "2.5", "10", "100"]          # as written in the job and in SQL
W_EDGES = ["0", "0.1", "0.2", "0.3", "0.4", "0.5", "0.6", "0.7", "0.8", "0.9", "1"]
ID_EDGES = [str(TWO53 - 2), str(TWO53), str(TWO53 + 2), str(TWO53 + 4)]
MEASURES = [
    {"name": "x", "fn": "histogram", "of": "{/x}", "edges": [float(e) for e in X_EDGES]},
    {"name": "w", "fn": "histogram", "of": "{/x}", "from": 0, "to": 1, "width": 0.1},
    {"name": "id", "fn": "histogram", "of": "{/id}", "edges": [int(e) for e in ID_EDGES]},
]


def make_rows():
    """Rows (g, x as written to JSON or None for missing, id)."""
    rnd = random.Random(20261212)
    rows = []
    for _ in range(ROWS):
        g = rnd.choice(GROUPS)
        r = rnd.random()
        if r < 0.25:
            x = rnd.uniform(-20, 120)
        elif r < 0.45:
            x = rnd.randrange(-15, 110)
        elif r < 0.65:
            x = float(rnd.choice(X_EDGES + W_EDGES))      # exactly on an edge
        elif r < 0.8:
            x = rnd.randrange(0, 11) / 10                   # 0.0, 0.1, ... 1.0: the decimal edges
        elif r < 0.85:
            x = "%r" % rnd.uniform(-5, 5)                   # numeric text: a number
        elif r < 0.88:
            x = "nan"                                       # skipped: NaN
        elif r < 0.91:
            x = "abc"                                       # skipped: not a number
        elif r < 0.94:
            x = None                                        # skipped: null
        elif r < 0.97:
            x = True                                        # skipped: a bool
        else:
            x = "MISSING"                                   # skipped: no field
        rows.append((g, x, TWO53 + rnd.randrange(-4, 7)))
    return rows


def usable(x):
    """The number a numeric measure reads from x, or None (docs/measures.md)."""
    if isinstance(x, bool) or x is None or x == "MISSING":
        return None
    if isinstance(x, str):
        try:
            v = float(x)
        except ValueError:
            return None
        return None if math.isnan(v) or math.isinf(v) else v
    return x


def write_shards(env, rows):
    per = ROWS // SHARDS
    for s in range(SHARDS):
        with open(env.path("in", "part-%d.ndjson" % s), "w") as f:
            for g, x, ident in rows[s * per:(s + 1) * per]:
                rec = {"g": g, "id": ident}
                if x != "MISSING":
                    rec["x"] = x
                f.write(json.dumps(rec) + "\n")


def slot_names(name, edges):
    return [name + "_below"] + ["%s_%s_%s" % (name, a, b) for a, b in zip(edges, edges[1:])] + [name + "_above"]


def sqlite_counts(rows):
    """{(measure, g): [count per slot]} from CASE / GROUP BY."""
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (g TEXT, x, id INTEGER)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?)", [(g, usable(x), i) for g, x, i in rows])
    out = {}
    for name, column, edges in (("x", "x", X_EDGES), ("w", "x", W_EDGES), ("id", "id", ID_EDGES)):
        # Edges as REAL literals: the id edges compare an INTEGER with a REAL, exactly.
        case = " ".join("WHEN %s < %s.0 THEN %d" % (column, e, i) if "." not in e else
                        "WHEN %s < %s THEN %d" % (column, e, i) for i, e in enumerate(edges))
        q = "SELECT g, CASE %s ELSE %d END AS slot, COUNT(*) FROM r WHERE %s IS NOT NULL GROUP BY g, slot" % (
            case, len(edges), column)
        for g in GROUPS:
            out[(name, g)] = [0] * (len(edges) + 1)
        for g, slot, n in db.execute(q):
            out[(name, g)][slot] = n
    db.close()
    return out


def python_counts(rows):
    """{(measure, g): [count per slot]} from bisect.bisect_right and Counter."""
    out = {}
    for name, edges, pick in (("x", X_EDGES, lambda r: usable(r[1])), ("w", W_EDGES, lambda r: usable(r[1])),
                              ("id", ID_EDGES, lambda r: r[2])):
        e = [float(v) for v in edges]
        for g in GROUPS:
            c = collections.Counter(bisect.bisect_right(e, pick(r)) for r in rows
                                    if r[0] == g and pick(r) is not None)
            out[(name, g)] = [c[i] for i in range(len(e) + 1)]
    return out


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_histogram")
    with lib.Env(args) as env:
        rows = make_rows()
        write_shards(env, rows)
        job = lib.write_job(env.path("job.json"), {
            "inputs": {"files": [env.path("in", "*.ndjson")]}, "group": ["{/g}"], "measures": MEASURES,
            "emit": {"format": "csv"}})
        texts = {}
        for workers in (1, 2):
            out = env.path("out-%d.csv" % workers)
            rc, _, err = env.fanfold_run("run", job, "-j", workers, "-o", out)
            if not c.check(rc == 0, "-j %d: exit %d: %s" % (workers, rc, lib.tail(err))):
                c.exit()
            with open(out, "rb") as f:
                texts[workers] = f.read()
            skipped = sum(1 for r in rows if usable(r[1]) is None)
            c.check('measure "x" skipped %s values' % format(skipped, ",") in err,
                    "-j %d: the summary reports %d skipped values of x: %s" % (workers, skipped, lib.tail(err)))
        c.check(texts[1] == texts[2], "the results differ between -j 1 and -j 2")
        table = list(csv.reader(io.StringIO(texts[1].decode())))
        header = table[0]
        # Edges as fanfold writes numbers (docs/measures.md): 0.1 steps are the decimals.
        expected_header = (["g"] + slot_names("x", ["-10", "0", "2.5", "10", "100"]) + slot_names("w", W_EDGES) +
                           slot_names("id", ID_EDGES))
        c.check(header == expected_header, "header %r, expected %r" % (header, expected_header))
        sq = sqlite_counts(rows)
        py = python_counts(rows)
        c.check(sq == py, "sqlite3 and Python disagree (test bug): %r / %r" % (sq, py))
        for line in table[1:]:
            got = dict(zip(header, line))
            g = got["g"]
            for name, edges in (("x", X_EDGES), ("w", W_EDGES), ("id", ID_EDGES)):
                names = slot_names(name, ["-10", "0", "2.5", "10", "100"] if name == "x" else edges)
                counts = [int(got[n]) for n in names]
                c.check(counts == sq[(name, g)], "%s %s: %r, sqlite3 says %r" % (g, name, counts, sq[(name, g)]))
        c.check(len(table) == 1 + len(GROUPS), "%d result rows" % (len(table) - 1))
    c.exit()


if __name__ == "__main__":
    main()
