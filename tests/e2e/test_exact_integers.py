"""64-bit integers stay exact end to end (issue 11, item 1).

The same rows — ids around 2^53, 2^63 and 2^64-1, negative ids, order keys
around 2^53 (where neighbouring integers share a double) — are written as
NDJSON and as CSV, four shards each, and reduced with `-j 1`, `-j 2` and
`-j 3`. Checked:

* the result files are byte-identical across worker counts, per format;
* every group's count, exact distinct, top 3, min, max, at_lowest,
  at_highest, integer sums and integer means equal those computed with
  Python's arbitrary-precision `int` (sums past 2^64 included; the mean as
  Python's int / int true division, which is correctly rounded);
* the same against sqlite3 (Python's stdlib module; 64-bit INTEGER) for the
  groups whose values fit its INTEGER: GROUP BY + COUNT, COUNT(DISTINCT),
  MIN, MAX, SUM of the small column, top by GROUP BY/ORDER BY, and the value
  at the lowest / highest key by ORDER BY key, rowid. sqlite3's SUM raises
  "integer overflow" past int64, so the id sums are Python's only;
* NDJSON and CSV give the same numbers (CSV cells are text; the numeric
  measures read integer text exactly);
* the exact digits appear in the output text.
"""

import json
import os
import random
import sqlite3

import e2e_lib as lib

SHARDS = 4
ROWS = 2400
TWO53, TWO63, TWO64 = 2 ** 53, 2 ** 63, 2 ** 64
# The last group's ids and keys go past int64: Python is the only reference there.
GROUPS = [TWO53, TWO53 + 1, -TWO63, TWO63 - 1, -1, TWO64 - 1]
INT64_GROUPS = [g for g in GROUPS if -TWO63 <= g < TWO63]
SIGNED_POOL = [TWO53 - 1, TWO53, TWO53 + 1, TWO53 + 2, TWO63 - 2, TWO63 - 1, -TWO63, -TWO63 + 1,
               -TWO53 - 1, -TWO53, -1, 0, 1]
UNSIGNED_POOL = [TWO63, TWO63 + 1, TWO64 - 2, TWO64 - 1, TWO64 - 1025, TWO53 + 1, 7]
MEASURES = [
    {"name": "n", "fn": "count"},
    {"name": "ids", "fn": "distinct", "of": "ID"},
    {"name": "common", "fn": "top", "of": "ID", "k": 3},
    {"name": "lo", "fn": "min", "of": "ID"},
    {"name": "hi", "fn": "max", "of": "ID"},
    {"name": "first", "fn": "at_lowest", "of": "ID", "by": "T"},
    {"name": "last", "fn": "at_highest", "of": "ID", "by": "T"},
    {"name": "sum_v", "fn": "sum", "of": "V"},
    {"name": "sum_id", "fn": "sum", "of": "ID"},
    {"name": "mean_v", "fn": "mean", "of": "V"},
    {"name": "mean_id", "fn": "mean", "of": "ID"},
]


def make_rows():
    """Rows (g, id, v, t) in input order; shard s holds rows s*ROWS/SHARDS.. ."""
    rnd = random.Random(20261202)
    rows = []
    for _ in range(ROWS):
        g = rnd.choice(GROUPS)
        if g == TWO64 - 1:
            ident = rnd.choice(UNSIGNED_POOL)
            t = TWO64 - 1 - rnd.randrange(40)
        else:
            ident = rnd.choice(SIGNED_POOL) if rnd.random() < 0.8 else rnd.randrange(-TWO63, TWO63)
            t = TWO53 + rnd.randrange(40) if g != -1 else -TWO63 + rnd.randrange(40)
        rows.append((g, ident, rnd.randrange(-2 ** 40, 2 ** 40), t))
    return rows


def write_shards(env, rows):
    per = ROWS // SHARDS
    nd, cs = [], []
    for s in range(SHARDS):
        part = rows[s * per:(s + 1) * per]
        p = env.path("nd", "part-%d.ndjson" % s)
        with open(p, "w") as f:
            for g, ident, v, t in part:
                f.write(json.dumps({"g": g, "id": ident, "v": v, "t": t}) + "\n")
        nd.append(p)
        p = env.path("cs", "part-%d.csv" % s)
        with open(p, "w") as f:
            f.write("g,id,v,t\n")
            for r in part:
                f.write(",".join(str(x) for x in r) + "\n")
        cs.append(p)
    return nd, cs


def job_for(pattern, ref):
    measures = []
    for m in MEASURES:
        m = dict(m)
        for k in ("of", "by"):
            if k in m:
                m[k] = ref(m[k].lower())
        measures.append(m)
    return {"inputs": {"files": [pattern]}, "group": [ref("g")], "measures": measures,
            "emit": {"format": "json"}}


def python_expected(rows, text_ties):
    """Per group, what Python's int arithmetic gives for every measure. top's
    ties go by value ascending in key order (docs/measures.md): numerically
    for numbers, bytewise for text (CSV cells, text_ties)."""
    out = {}
    for g in GROUPS:
        mine = [r for r in rows if r[0] == g]
        ids = [r[1] for r in mine]
        vs = [r[2] for r in mine]
        counts = {}
        for i in ids:
            counts[i] = counts.get(i, 0) + 1
        # top: by count descending, ties by value ascending (docs/measures.md)
        top = sorted(counts.items(), key=lambda kv: (-kv[1], str(kv[0]) if text_ties else kv[0]))[:3]
        low_t = min(r[3] for r in mine)
        high_t = max(r[3] for r in mine)
        out[g] = {
            "n": len(mine),
            "ids": len(set(ids)),
            "common": [[v, c] for v, c in top],
            "lo": min(ids),
            "hi": max(ids),
            "first": next(r[1] for r in mine if r[3] == low_t),                 # earliest of the lowest key
            "last": next(r[1] for r in reversed(mine) if r[3] == high_t),       # latest of the highest key
            "sum_v": sum(vs),
            "sum_id": sum(ids),
            "mean_v": sum(vs) / len(vs),    # Python: int / int, correctly rounded
            "mean_id": sum(ids) / len(ids),
        }
    return out


def sqlite_expected(rows, text_ties):
    """Per int64 group, what sqlite3 gives (64-bit INTEGER columns)."""
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (g INTEGER, id INTEGER, v INTEGER, t INTEGER)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?, ?)", [r for r in rows if r[0] in INT64_GROUPS])
    out = {}
    q = db.execute("SELECT g, COUNT(*), COUNT(DISTINCT id), MIN(id), MAX(id), SUM(v) FROM r GROUP BY g")
    for g, n, ids, lo, hi, sum_v in q:
        first = db.execute("SELECT id FROM r WHERE g = ? ORDER BY t ASC, rowid ASC LIMIT 1", (g,)).fetchone()[0]
        last = db.execute("SELECT id FROM r WHERE g = ? ORDER BY t DESC, rowid DESC LIMIT 1", (g,)).fetchone()[0]
        tie = "CAST(id AS TEXT)" if text_ties else "id"
        top = db.execute("SELECT id, COUNT(*) AS c FROM r WHERE g = ? GROUP BY id ORDER BY c DESC, %s ASC LIMIT 3"
                         % tie, (g,)).fetchall()
        out[g] = {"n": n, "ids": ids, "lo": lo, "hi": hi, "sum_v": sum_v, "first": first, "last": last,
                  "common": [[v, c] for v, c in top]}
    db.close()
    return out


def as_int(x):
    """An output value as a Python int: JSON numbers as they are, CSV text parsed."""
    if isinstance(x, str):
        return int(x)
    if not isinstance(x, int) or isinstance(x, bool):
        raise ValueError("not an integer: %r" % (x,))
    return x


def normalise(row):
    """One output row with integer values as ints (CSV text parsed) and top as [[value, count]]."""
    out = dict(row)
    for k in ("g", "ids", "lo", "hi", "first", "last", "sum_v", "sum_id", "n"):
        out[k] = as_int(row[k])
    out["common"] = [[as_int(e["value"]), e["count"]] for e in row["common"]]
    return out


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_exact_integers")
    with lib.Env(args) as env:
        rows = make_rows()
        write_shards(env, rows)
        py = {fmt: python_expected(rows, fmt == "csv") for fmt in ("ndjson", "csv")}
        sq = {fmt: sqlite_expected(rows, fmt == "csv") for fmt in ("ndjson", "csv")}
        c.check(sorted(sq["csv"]) == sorted(INT64_GROUPS), "sqlite3 groups %r" % sorted(sq["csv"]))
        jobs = {
            "ndjson": lib.write_job(env.path("nd.json"), job_for(env.path("nd", "*.ndjson"),
                                                                  lambda f: "{/%s}" % f)),
            "csv": lib.write_job(env.path("cs.json"), job_for(env.path("cs", "*.csv"), lambda f: "{%s}" % f)),
        }
        results = {}
        for fmt, job in jobs.items():
            texts = {}
            for workers in (1, 2, 3):
                out = env.path("out-%s-%d.json" % (fmt, workers))
                rc, _, err = env.fanfold_run("run", job, "-j", workers, "-o", out, "-q")
                if not c.check(rc == 0, "%s -j %d: exit %d: %s" % (fmt, workers, rc, lib.tail(err))):
                    continue
                with open(out, "rb") as f:
                    texts[workers] = f.read()
            if len(texts) != 3:
                continue
            # Determinism: one answer for every worker count, byte for byte.
            c.check(texts[1] == texts[2] == texts[3], "%s: results differ across -j 1/2/3" % fmt)
            text = texts[1].decode()
            for digits in ("18446744073709551615", "9007199254740993", "-9223372036854775808", "9223372036854775807"):
                c.check(digits in text, "%s: the exact digits %s do not appear in the result" % (fmt, digits))
            results[fmt] = {normalise(r)["g"]: normalise(r) for r in json.loads(text)}

        for fmt, got in results.items():
            c.check(sorted(got) == sorted(GROUPS), "%s: groups %r, Python's %r" % (fmt, sorted(got), sorted(GROUPS)))
            for g in GROUPS:
                row = got.get(g)
                if row is None:
                    continue
                # Python's int arithmetic (arbitrary precision) for every measure.
                for k, want in py[fmt][g].items():
                    have = row[k]
                    if isinstance(want, float) and isinstance(have, int):
                        have = float(have)  # a mean that is a whole number prints without a fraction
                    c.check(have == want and type(have) is type(want),
                            "%s group %d %s: fanfold %r, Python %r" % (fmt, g, k, have, want))
                # sqlite3 (64-bit INTEGER) where the group's values fit it.
                for k, want in sq[fmt].get(g, {}).items():
                    c.check(row[k] == want, "%s group %d %s: fanfold %r, sqlite3 %r" % (fmt, g, k, row[k], want))
        if len(results) == 2:
            # top's ties order apart (numbers vs text); everything else is the same number.
            strip = lambda res: {g: {k: v for k, v in row.items() if k != "common"} for g, row in res.items()}
            c.check(strip(results["ndjson"]) == strip(results["csv"]), "NDJSON and CSV results differ")
        # Discrimination: the references disagree with plain doubles here.
        c.check(float(TWO53 + 1) == float(TWO53) and py["ndjson"][TWO64 - 1]["sum_id"] > TWO64,
                "the data does not exercise doubles' limits")
    c.exit()


if __name__ == "__main__":
    main()
