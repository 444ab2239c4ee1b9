"""Lookup tables through whole runs: events (four NDJSON shards) name a lamp,
some by an integer, some by numeric text, some by an id the lamp table lacks,
some by none. A CSV table of lamps brings each lamp's model, installation
year and district code; a gzip-compressed NDJSON table of districts, looked
up by the district code the first table brought, brings the district's name.
The reference is Python's sqlite3 module running the same question as two
LEFT JOINs with GROUP BY (INTEGER affinity turns '17' into 17 there, as ==
does in fanfold); the unmatched counts are sqlite's COUNT(*) ... WHERE the
joined key IS NULL. fanfold's CSV at -j 1 and -j 2 must be byte-identical.
Then: `resume` after the lamp table changed refuses and names the table;
a duplicate key is an error naming both lines.
"""

import csv
import gzip
import io
import json
import os
import random
import re
import sqlite3
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

MODELS = ["Aster-40", "Birchlight", "Cedar LED", "Dunmore 2"]
DISTRICTS = [("FR", "Fennick Row"), ("MW", "Marrowick"), ("NW", "Northwick"), ("SV", "Sorrowvane")]


def make_lamps(rng):
    lamps = []
    for lamp_id in range(1, 301):
        if lamp_id % 37 == 0:
            continue  # a gap: events name lamps the table lacks
        code = rng.choice([d[0] for d in DISTRICTS] + ["XX"])  # XX: no such district
        lamps.append((lamp_id, rng.choice(MODELS), rng.randrange(2004, 2024), code))
    return lamps


def make_events(rng, n):
    out = []
    for i in range(n):
        r = {"i": i, "w": rng.randrange(0, 120)}
        roll = rng.random()
        lamp = rng.randrange(1, 320)  # ids past 300 are in no table
        if roll < 0.04:
            pass  # no lamp at all
        elif roll < 0.06:
            r["lamp"] = None
        elif roll < 0.15:
            r["lamp"] = str(lamp)  # numeric text: == makes it the number
        else:
            r["lamp"] = lamp
        out.append(r)
    return out


QUERY = """
SELECT l.model, d.name, COUNT(*), SUM(e.w), MIN(l.installed), MAX(l.installed)
FROM e LEFT JOIN l ON l.lamp_id = e.lamp LEFT JOIN d ON d.code = l.district
GROUP BY 1, 2
"""


def sqlite_answers(lamps, events):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE l (lamp_id INTEGER, model TEXT, installed INTEGER, district TEXT)")
    db.execute("CREATE TABLE d (code TEXT, name TEXT)")
    db.execute("CREATE TABLE e (lamp INTEGER, w INTEGER)")
    db.executemany("INSERT INTO l VALUES (?, ?, ?, ?)", lamps)
    db.executemany("INSERT INTO d VALUES (?, ?)", DISTRICTS)
    db.executemany("INSERT INTO e VALUES (?, ?)", [(r.get("lamp"), r["w"]) for r in events])
    rows = [tuple(row) for row in db.execute(QUERY)]
    no_lamp = db.execute("SELECT COUNT(*) FROM e LEFT JOIN l ON l.lamp_id = e.lamp WHERE l.lamp_id IS NULL").fetchone()[0]
    no_district = db.execute("SELECT COUNT(*) FROM e LEFT JOIN l ON l.lamp_id = e.lamp "
                             "LEFT JOIN d ON d.code = l.district WHERE d.code IS NULL").fetchone()[0]
    return rows, no_lamp, no_district


def sort_key(row):
    return tuple((x is None, x if x is not None else "") for x in row[:2])


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_lookup_tables")
    with lib.Env(args) as env:
        rng = random.Random(41)
        lamps = make_lamps(rng)
        events = make_events(rng, 8000)
        os.makedirs(env.path("tables"), exist_ok=True)
        lamp_csv = env.path("tables", "lamps.csv")
        with open(lamp_csv, "w", newline="") as f:
            w = csv.writer(f)
            w.writerow(["lamp_id", "model", "installed", "district"])
            w.writerows(lamps)
        with gzip.open(env.path("tables", "districts.ndjson.gz"), "wt") as f:
            for code, name in DISTRICTS:
                f.write(json.dumps({"code": code, "about": {"name": name}}) + "\n")
        files = []
        for s in range(4):
            files.append(env.path("in", "shard%d.ndjson" % s))
            with open(files[-1], "w") as f:
                for r in events[s::4]:
                    f.write(json.dumps(r) + "\n")
        job = lib.write_job(env.path("joined.json"), {
            "inputs": {"files": files},
            "tables": [
                {"name": "lamps", "path": "tables/lamps.csv", "key": "{lamp_id}", "match": "{/lamp}",
                 "fields": ["model", {"name": "installed", "expr": "num({installed})"}, "district"]},
                {"name": "districts", "path": "tables/districts.ndjson.gz", "key": "{/code}", "match": "district",
                 "fields": [{"name": "district_name", "expr": "{/about/name}"}]}],
            "group": ["model", "district_name"],
            "measures": [{"name": "events", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/w}"},
                         {"name": "first", "fn": "min", "of": "installed"},
                         {"name": "last", "fn": "max", "of": "installed"}],
            "emit": {"format": "csv"}})
        want, no_lamp, no_district = sqlite_answers(lamps, events)
        want.sort(key=sort_key)
        # Intent: the data has every case: unmatched lamps, lamps in no district, matched rows.
        c.check(no_lamp > 0 and no_district > no_lamp and len(want) > len(MODELS) * len(DISTRICTS),
                "the generated data lacks a case: %d %d %d" % (no_lamp, no_district, len(want)))

        outputs = {}
        for workers in ("1", "2"):
            out_path = env.path("out%s.csv" % workers)
            run_dir = env.path("runs", "j" + workers)
            rc, _, err = env.fanfold_run("run", job, "-j", workers, "-o", out_path, "--run-dir", run_dir)
            if not c.check(rc == 0, "-j %s: exit %d: %s" % (workers, rc, lib.tail(err))):
                continue
            with open(out_path, "rb") as f:
                outputs[workers] = f.read()
            rows = list(csv.reader(io.StringIO(outputs[workers].decode("utf-8"), newline="")))
            c.check(rows[0] == ["model", "district_name", "events", "w", "first", "last"],
                    "-j %s: header %r" % (workers, rows[0]))
            got = [tuple(None if x == "" else x for x in r[:2]) + tuple(int(x) if x != "" else None for x in r[2:])
                   for r in rows[1:]]
            got.sort(key=sort_key)
            # Intent: every group, count and sum is sqlite3's two LEFT JOINs (GROUP BY model, name);
            # a record with no match sees missing values, grouped as sqlite's NULL.
            c.check(got == want, "-j %s: rows differ from sqlite3's:\n%r\nvs\n%r" % (workers, got[:5], want[:5]))
            # Intent: the summary counts unmatched lookups per table as sqlite's
            # COUNT(*) ... WHERE the joined key IS NULL.
            with open(os.path.join(run_dir, "summary.json")) as f:
                summary = json.load(f)
            c.check(summary.get("lookups") == {"lamps": {"rows": len(lamps), "unmatched": no_lamp},
                                               "districts": {"rows": len(DISTRICTS), "unmatched": no_district}},
                    "-j %s: summary.json lookups %r, want %d and %d" % (workers, summary.get("lookups"), no_lamp,
                                                                        no_district))
            m = re.search(r'lookup table "lamps" \(([\d,]+) rows\): ([\d,]+) of ([\d,]+) records found no row', err)
            c.check(m is not None and int(m.group(2).replace(",", "")) == no_lamp
                    and int(m.group(3).replace(",", "")) == len(events),
                    "-j %s: stderr lacks the unmatched count %d: %s" % (workers, no_lamp, lib.tail(err)))
        # Intent: the result does not depend on the worker count, byte for byte.
        c.check(len(outputs) == 2 and outputs["1"] == outputs["2"], "-j 1 and -j 2 outputs differ")

        # Intent: resume with the tables unchanged reuses every partial and writes the same bytes.
        again = env.path("again.csv")
        rc, _, err = env.fanfold_run("resume", env.path("runs", "j2"), "-o", again)
        c.check(rc == 0 and open(again, "rb").read() == outputs.get("2"),
                "resume without changes: exit %d: %s" % (rc, lib.tail(err)))
        # Intent: reused partials carry their unmatched counts: the resumed summary has the same totals.
        with open(os.path.join(env.path("runs", "j2"), "summary.json")) as f:
            resumed = json.load(f)
        c.check(resumed.get("lookups", {}).get("lamps", {}).get("unmatched") == no_lamp
                and resumed["shards"]["reused"] == 4 and resumed["shards"]["processed"] == 0,
                "resumed summary.json: %r %r" % (resumed.get("lookups"), resumed.get("shards")))
        # Intent: a touched shard is recomputed on resume by workers that load the tables from the
        # run's copy of the job (job.json in the run directory), relative paths still meaning the
        # original job file's directory; the result is the same bytes.
        st = os.stat(files[0])
        os.utime(files[0], ns=(st.st_atime_ns, st.st_mtime_ns + 1_000_000_000))
        rc, _, err = env.fanfold_run("resume", env.path("runs", "j2"), "-j", "2", "-o", again)
        c.check(rc == 0 and "recomputing it" in err and open(again, "rb").read() == outputs.get("2"),
                "resume recomputing a shard: exit %d: %s" % (rc, lib.tail(err)))
        # Intent: `check` shows each table with its file, row count, key, match and fields.
        rc, out, err = env.fanfold_run("check", job)
        c.check(rc == 0 and "  table:   lamps = %s (csv, %d rows), key {lamp_id}, matched by {/lamp}, brings model, "
                "installed, district\n" % (lamp_csv, len(lamps)) in out,
                "check output lacks the lamps table (exit %d): %s %s" % (rc, out, lib.tail(err)))
        # Intent: a changed lookup table makes resume refuse, naming the table, and say how to start afresh
        # (docs/job-file.md, "tables": the table's size, mtime and content hash are in the plan fingerprint).
        with open(lamp_csv, "a", newline="") as f:
            csv.writer(f).writerow([37, "Aster-40", 2020, "FR"])
        rc, _, err = env.fanfold_run("resume", env.path("runs", "j2"), "-o", again)
        c.check(rc == 2 and 'lookup table "lamps" (\'%s\') changed since the run started' % lamp_csv in err
                and "--fresh" in err, "resume after the table changed: exit %d: %s" % (rc, lib.tail(err)))
        # Intent: a fresh run sees the new row (lamp 37 now matches: fewer unmatched).
        rc, _, err = env.fanfold_run("run", job, "-o", env.path("fresh.csv"), "--run-dir", env.path("runs", "j2"),
                                     "--fresh")
        newly = sum(1 for r in events if r.get("lamp") is not None and int(r["lamp"]) == 37)
        m = re.search(r'lookup table "lamps" \(([\d,]+) rows\): ([\d,]+) of', err)
        c.check(rc == 0 and m is not None and int(m.group(2).replace(",", "")) == no_lamp - newly and newly > 0,
                "fresh run after the change: exit %d, want %d unmatched: %s" % (rc, no_lamp - newly, lib.tail(err)))

        # Intent: a duplicate key stops the run before it starts, naming the file and both lines.
        with open(lamp_csv, "a", newline="") as f:
            csv.writer(f).writerow(["5", "Birchlight", 2021, "NW"])
        rc, _, err = env.fanfold_run("run", job, "-o", env.path("dup.csv"))
        first = next(i for i, l in enumerate(lamps) if l[0] == 5) + 2  # header on line 1
        last = len(lamps) + 3
        c.check(rc == 2 and "lamps.csv' line %d: key \"5\" again (first on line %d)" % (last, first) in err,
                "duplicate key: exit %d: %s" % (rc, lib.tail(err)))
    c.exit()


if __name__ == "__main__":
    main()
