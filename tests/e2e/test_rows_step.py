"""The "rows" step (issue 12, item 2): columns computed from the finished
measures of each result row, and a filter on result rows before order and
limit, checked against sqlite3 (Python's stdlib module) on generated data.

The same job runs with `-j 1` and `-j 2`; checked:

* the CSV results are byte-identical across worker counts;
* every row equals sqlite3's GROUP BY with the same ratio and difference
  columns computed in SELECT, HAVING for `rows.keep`, ORDER BY ... LIMIT for
  `emit.order`/`emit.limit`: counts, integer sums and their differences
  exactly (their sums pass 2^53, where doubles skip integers: the CSV
  text and NDJSON's JSON integers hold every digit), ratios of integers
  exactly (both divide the same two doubles once), ratios over a mean to a
  relative 1e-12 (sqlite3's AVG and fanfold's mean may differ in the last bit);
* a division by zero is null in both (sqlite3 gives NULL for x / 0), and
  summary.json's rows.no_value counts it per column, rows.merged and
  rows.dropped count the groups and those HAVING dropped; stderr says both;
* editing only the job's rows step and running `fanfold resume` reuses every
  saved partial (0 processed, all reused), applies the new step (checked
  against sqlite3's new query), and makes the edit the run's copy job.json;
  an edit that does not load, or one that changes a measure, is not applied.
"""

import csv
import json
import os
import random
import sqlite3

import e2e_lib as lib

SHARDS = 4
RECORDS = 3000
GROUPS = ["g%02d" % i for i in range(14)]
NO_FAULTS = "g03"   # never has f: faults = 0, so n / faults divides by zero
NO_W = "g07"        # never has w: its mean is null

MEASURES = [
    {"name": "n", "fn": "count"},
    {"name": "faults", "fn": "count_present", "of": "{/f}"},
    {"name": "sv", "fn": "sum", "of": "{/v}"},
    {"name": "mw", "fn": "mean", "of": "{/w}"},
]
ROWS_A = {
    "add": [
        {"name": "share", "expr": "faults / n"},
        {"name": "per_fault", "expr": "n / faults"},
        {"name": "rest", "expr": "n - faults"},
        {"name": "spread", "expr": "sv - n * 1000000007"},
        {"name": "w_per_share", "expr": "mw / share"},
    ],
    "keep": "rest > 150 and n >= 180",
}
SQL_A = """
SELECT g, COUNT(*) AS n, COUNT(f) AS faults, SUM(v) AS sv, AVG(w) AS mw,
       CAST(COUNT(f) AS REAL) / COUNT(*) AS share,
       CAST(COUNT(*) AS REAL) / COUNT(f) AS per_fault,
       COUNT(*) - COUNT(f) AS rest,
       SUM(v) - COUNT(*) * 1000000007 AS spread,
       AVG(w) / (CAST(COUNT(f) AS REAL) / COUNT(*)) AS w_per_share
FROM r GROUP BY g
HAVING COUNT(*) - COUNT(f) > 150 AND COUNT(*) >= 180
ORDER BY share DESC, g ASC LIMIT 9
"""
ROWS_B = {
    "add": [{"name": "ok_share", "expr": "(n - faults) / n"}],
    "keep": "faults >= 10",
}
SQL_B = """
SELECT g, COUNT(*) AS n, COUNT(f) AS faults, SUM(v) AS sv, AVG(w) AS mw,
       CAST(COUNT(*) - COUNT(f) AS REAL) / COUNT(*) AS ok_share
FROM r GROUP BY g HAVING COUNT(f) >= 10
ORDER BY ok_share DESC, g ASC LIMIT 9
"""


def make_records():
    rnd = random.Random(20261202)
    out = []
    for _ in range(RECORDS):
        g = rnd.choice(GROUPS)
        rec = {"g": g, "v": rnd.randrange(10 ** 15, 10 ** 16)}
        if g != NO_FAULTS and rnd.random() < 0.2 + 0.03 * GROUPS.index(g):
            rec["f"] = rnd.choice(["E-HOT", "E-LINK"])
        elif rnd.random() < 0.5:
            rec["f"] = None
        if g != NO_W and rnd.random() < 0.8:
            rec["w"] = round(rnd.uniform(0, 250), 3)
        out.append(rec)
    return out


def sqlite_rows(records, sql):
    """Python's sqlite3: the reference query over the same records."""
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (g TEXT, f TEXT, v INTEGER, w REAL)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?, ?)",
                   [(r["g"], r.get("f"), r["v"], r.get("w")) for r in records])
    cur = db.execute(sql)
    names = [d[0] for d in cur.description]
    return [dict(zip(names, row)) for row in cur.fetchall()]


def same(k, actual, expected, csv_text):
    """actual (a CSV cell's text when csv_text, else a JSON value) is expected."""
    if csv_text:
        if expected is None:
            return actual == ""
        if isinstance(expected, (str, int)):
            return actual == str(expected)  # every digit of an integer, as sqlite3 holds it
        actual = float(actual)
    elif expected is None or isinstance(expected, (str, int)):
        return actual == expected and type(actual) == type(expected)
    if k in ("mw", "w_per_share"):
        return isinstance(actual, float) and lib.rel_close(actual, expected, 1e-12)
    return actual == expected


def compare(c, label, got, want, csv_text=False):
    c.check(len(got) == len(want), "%s: %d rows, sqlite3 gives %d" % (label, len(got), len(want)))
    for g, w in zip(got, want):
        for k, expected in w.items():
            actual = g.get(k, "(absent)")
            c.check(same(k, actual, expected, csv_text),
                    "%s: group %s column %s: fanfold %r, sqlite3 %r" % (label, w["g"], k, actual, expected))


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_rows_step")
    records = make_records()
    with lib.Env(args) as env:
        for s in range(SHARDS):
            with open(env.path("data", "part-%d.ndjson" % s), "w") as f:
                for r in records[s::SHARDS]:
                    f.write(json.dumps(r) + "\n")
        job_path = env.path("job.json")
        job = {"inputs": {"files": [env.path("data", "*.ndjson")]}, "group": ["{/g}"], "measures": MEASURES,
               "rows": ROWS_A, "emit": {"order": [{"by": "share", "desc": True}], "limit": 9}}
        lib.write_job(job_path, job)
        want = sqlite_rows(records, SQL_A)
        c.check(len(want) >= 4, "the reference query keeps %d groups: too few to test" % len(want))

        texts = {}
        for workers in (1, 2):
            out = env.path("out-j%d.csv" % workers)
            run_dir = env.path("runs", "j%d" % workers)
            rc, _, err = env.fanfold_run("run", job_path, "-j", workers, "--run-dir", run_dir, "-o", out)
            c.check(rc == 0, "-j %d: exit %d: %s" % (workers, rc, lib.tail(err)))
            with open(out, "rb") as f:
                texts[workers] = f.read()
            if workers == 2:
                with open(os.path.join(run_dir, "summary.json")) as f:
                    rows = json.load(f).get("rows")
                all_groups = sqlite_rows(records, "SELECT g, COUNT(*) - COUNT(f) AS rest, COUNT(*) AS n, "
                                                  "COUNT(f) AS faults FROM r GROUP BY g")
                kept = [r for r in all_groups if r["rest"] > 150 and r["n"] >= 180]
                zero = sum(1 for r in all_groups if r["faults"] == 0)
                c.check(rows == {"merged": len(all_groups), "dropped": len(all_groups) - len(kept),
                                 "no_value": {"share": 0, "per_fault": zero, "rest": 0, "spread": 0,
                                              "w_per_share": zero + 1}},
                        "summary.json rows %r; sqlite3: %d groups, %d kept, %d without faults"
                        % (rows, len(all_groups), len(kept), zero))
                c.check('column "per_fault" has no value in %d %s (' % (zero, "row" if zero == 1 else "rows") in err
                        and 'column "w_per_share" has no value in %d rows (' % (zero + 1) in err,
                        "stderr does not count per_fault's missing values: %s" % lib.tail(err))
                c.check("rows.keep kept %d of %d result rows" % (len(kept), len(all_groups)) in err,
                        "stderr does not say what rows.keep kept: %s" % lib.tail(err))
        c.check(texts[1] == texts[2], "-j 1 and -j 2 results differ")
        with open(env.path("out-j1.csv"), newline="") as f:
            compare(c, "csv", list(csv.DictReader(f)), want, csv_text=True)
        job["emit"]["format"] = "ndjson"
        lib.write_job(job_path, job)
        rc, out, err = env.fanfold_run("run", job_path, "-j", 2, "-q", "-o", "-", "--run-dir",
                                       env.path("runs", "nd2"))
        c.check(rc == 0, "ndjson run: exit %d: %s" % (rc, lib.tail(err)))
        compare(c, "ndjson", [json.loads(line) for line in out.splitlines()], want)

        # shown_digits of an added column, and --digits over it (Python's format(x, '.Ng')).
        job["rows"] = dict(ROWS_A, add=[dict(a, shown_digits=3) if a["name"] == "share" else a
                                        for a in ROWS_A["add"]])
        job["emit"]["format"] = "csv"
        lib.write_job(job_path, job)
        for flags, digits in (([], 3), (["--digits", 2], 2)):
            rc, out, err = env.fanfold_run("run", job_path, "-q", "-o", "-", *flags)
            got = list(csv.DictReader(out.splitlines()))
            c.check(rc == 0 and len(got) == len(want), "shown_digits run %r: exit %d: %s" % (flags, rc, lib.tail(err)))
            for g, w in zip(got, want):
                c.check(g["share"] == format(w["share"], ".%dg" % digits),
                        "%r: share of %s shows %r, Python's format gives %r"
                        % (flags, w["g"], g["share"], format(w["share"], ".%dg" % digits)))
        rc, out, err = env.fanfold_run("check", job_path)
        c.check(rc == 0 and "  add:     share = faults / n\n" in out and
                "  rows:    keep rest > 150 and n >= 180\n" in out and "w_per_share\n" in out,
                "check does not show the rows step: exit %d: %s" % (rc, out + err))

        # Only the rows step changes: resume reuses every partial and applies it.
        run_dir = env.path("runs", "j2")
        job["rows"] = ROWS_B
        job["emit"] = {"order": [{"by": "ok_share", "desc": True}], "limit": 9, "format": "ndjson"}
        lib.write_job(job_path, job)
        rc, out, err = env.fanfold_run("resume", run_dir, "-o", "-")
        c.check(rc == 0, "resume after editing rows: exit %d: %s" % (rc, lib.tail(err)))
        c.check("%d shards saved, 0 to process" % SHARDS in err and "changed only in what runs after the merge" in err,
                "resume should reuse every partial and say the edit applies: %s" % lib.tail(err))
        with open(os.path.join(run_dir, "summary.json")) as f:
            shards = json.load(f)["shards"]
        c.check(shards["processed"] == 0 and shards["reused"] == SHARDS,
                "summary.json after the resume: %r, want 0 processed, %d reused" % (shards, SHARDS))
        compare(c, "resume with rows B", [json.loads(line) for line in out.splitlines()],
                sqlite_rows(records, SQL_B))
        with open(os.path.join(run_dir, "job.json")) as f, open(job_path) as g:
            c.check(f.read() == g.read(), "the run's copy job.json is not the edited job file")
        # An edit that does not load is named, and the copy is used.
        job["rows"] = {"keep": "{/g} == 'g01'"}
        lib.write_job(job_path, job)
        rc, out, err = env.fanfold_run("resume", run_dir, "-o", "-")
        c.check(rc == 0 and "resuming with the run's copy" in err and "(the edited file does not load: " in err
                and "/rows/keep: column 1: found field {/g} (did you mean g?)" in err,
                "resume with a broken rows edit should name the error and use the copy: exit %d: %s"
                % (rc, lib.tail(err)))
        c.check(len(out.splitlines()) == len(sqlite_rows(records, SQL_B)), "the broken edit leaked into the resume")
        job["rows"] = ROWS_B
        # A changed measure is not an edit after the merge: the copy stays.
        job["measures"] = MEASURES + [{"name": "m", "fn": "max", "of": "{/v}"}]
        lib.write_job(job_path, job)
        rc, out, err = env.fanfold_run("resume", run_dir, "-o", "-")
        c.check(rc == 0 and "changed since the run started; resuming with the run's copy" in err,
                "resume after a measure changed should keep the copy: exit %d: %s" % (rc, lib.tail(err)))
        c.check('"m"' not in out, "the changed measure leaked into the resume: %s" % out[:300])
    c.exit()


if __name__ == "__main__":
    main()
