"""Fresh data from fanfold-gen (another seed than the demo set), a two-key
group-by with count/sum/min/max/distinct, checked against two independent
references: the sqlite3 shell (JSON parsed by SQLite's own json1 functions,
grouped with GROUP BY) and the Python stdlib reference. Then one shard is
truncated in the middle: the run must exit 1, name that shard on stderr, and
report for the other shards exactly what the references compute without it.
"""

import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402
import reference as ref  # noqa: E402
from reference import Measure as M, RefJob, ptr, coalesce, time_of, time_ms_of  # noqa: E402

SHARDS = 30
CORRUPT = 11  # index of the shard truncated in the second part

JOB = {
    "about": "e2e: two-key group-by over generated shards",
    "inputs": {"files": []},  # filled in below
    "derive": [
        {"name": "t", "expr": "coalesce(time({/ts}), time_ms({/ts_ms}))"},
        {"name": "hour", "expr": "period_start(t, 'hour')"},
    ],
    "group": ["hour", "{/district}"],
    "measures": [
        {"name": "n", "fn": "count"},
        {"name": "watts", "fn": "sum", "of": "{/power_w}"},
        {"name": "lat_min", "fn": "min", "of": "{/latency_ms}"},
        {"name": "lat_max", "fn": "max", "of": "{/latency_ms}"},
        {"name": "lamps", "fn": "distinct", "of": "{/lamp}"},
    ],
    "emit": {"format": "json"},
}


def t_json(r):  # coalesce(time({/ts}), time_ms({/ts_ms}))
    return coalesce(time_of(ptr(r, "/ts")), time_ms_of(ptr(r, "/ts_ms")))


REF_JOB = RefJob(
    group=[("hour", lambda r: ref.period_start(t_json(r), "hour")), ("district", lambda r: ptr(r, "/district"))],
    measures=[
        M("n", "count"),
        M("watts", "sum", of=lambda r: ptr(r, "/power_w")),
        M("lat_min", "min", of=lambda r: ptr(r, "/latency_ms")),
        M("lat_max", "max", of=lambda r: ptr(r, "/latency_ms")),
        M("lamps", "distinct", of=lambda r: ptr(r, "/lamp")),
    ])

# SQLite's reading of the same job: json_valid drops malformed lines, the
# date functions honour "Z"/"+HH:MM" suffixes and 'unixepoch', and a text
# power_w counts only when it is a plain decimal number.
SQL_QUERY = """
CREATE TABLE rec AS
  SELECT shard, CAST(line AS TEXT) AS j FROM raw WHERE json_valid(CAST(line AS TEXT));
CREATE TABLE v AS SELECT
  shard,
  strftime('%Y-%m-%dT%H', COALESCE(json_extract(j, '$.ts'),
                                   datetime(json_extract(j, '$.ts_ms') / 1000.0, 'unixepoch'))) AS hour,
  json_extract(j, '$.district') AS district,
  json_extract(j, '$.lamp') AS lamp,
  CASE WHEN json_type(j, '$.power_w') IN ('integer', 'real') THEN json_extract(j, '$.power_w')
       WHEN json_type(j, '$.power_w') = 'text'
            AND json_extract(j, '$.power_w') GLOB '*[0-9]*'
            AND json_extract(j, '$.power_w') NOT GLOB '*[^0-9.+-]*'
         THEN CAST(json_extract(j, '$.power_w') AS REAL) END AS watts,
  CASE WHEN json_type(j, '$.latency_ms') IN ('integer', 'real') THEN json_extract(j, '$.latency_ms') END AS lat
  FROM rec;
.mode json
SELECT (SELECT COUNT(*) FROM raw) - (SELECT COUNT(*) FROM rec) AS malformed;
SELECT hour, district, COUNT(*) AS n, SUM(watts) AS watts, MIN(lat) AS lat_min, MAX(lat) AS lat_max,
       COUNT(DISTINCT lamp) AS lamps
  FROM v GROUP BY hour, district ORDER BY hour, district;
"""


def sqlite_reference(env, files, skip):
    """(malformed lines, {(hour, district): row}) computed by the sqlite3 shell,
    leaving out shard index `skip` (-1 = none)."""
    sql_path = env.path("sqlite", "load.sql")
    with open(sql_path, "w") as f:
        f.write("CREATE TABLE raw(shard INTEGER, line BLOB);\nBEGIN;\n")
        for i, path in enumerate(files):
            if i == skip:
                continue
            for line in ref.split_lines(ref.read_shard_bytes(path)):
                # Hex blobs carry any bytes (garbage lines included) unchanged.
                f.write("INSERT INTO raw VALUES(%d, X'%s');\n" % (i, line.hex()))
        f.write("COMMIT;\n")
        f.write(SQL_QUERY)
    with open(sql_path, "rb") as f:
        done = subprocess.run(["sqlite3", ":memory:"], stdin=f, stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, timeout=300)
    if done.returncode != 0:
        raise RuntimeError("sqlite3 failed: " + done.stderr.decode("utf-8", "replace"))
    # Two JSON arrays, one per SELECT.
    text = done.stdout.decode("utf-8")
    dec = json.JSONDecoder()
    first, end = dec.raw_decode(text)
    second, _ = dec.raw_decode(text[end:].lstrip())
    rows = {(r["hour"], r["district"]): r for r in second}
    return first[0]["malformed"], rows


def python_reference(files, skip):
    records = []
    for i, f in enumerate(files):
        if i != skip:
            records.extend(ref.load_shard(f)[0])
    return ref.evaluate(REF_JOB, records)


def compare_with_sqlite(checks, label, rows, sql_rows):
    got = {(r.get("hour"), r.get("district")): r for r in rows}
    # Intent: sqlite3 GROUP BY finds the same groups.
    checks.check(set(got) == set(sql_rows), "%s: groups differ from sqlite3: only fanfold %s, only sqlite %s"
                 % (label, sorted(set(got) - set(sql_rows))[:3], sorted(set(sql_rows) - set(got))[:3]))
    for key, s in sql_rows.items():
        r = got.get(key)
        if r is None:
            continue
        where = "%s %r" % (label, key)
        # Intent: COUNT(*) and COUNT(DISTINCT lamp) are exact (sqlite3).
        checks.check(r.get("n") == s["n"], "%s: count %r, sqlite3 %r" % (where, r.get("n"), s["n"]))
        checks.check(r.get("lamps") == s["lamps"], "%s: distinct %r, sqlite3 %r" % (where, r.get("lamps"), s["lamps"]))
        # Intent: MIN/MAX pick the same input value (sqlite3; compared after its JSON printing).
        for c in ("lat_min", "lat_max"):
            checks.check(r.get(c) is not None and s[c] is not None and lib.rel_close(r[c], s[c], 1e-12),
                         "%s: %s %r, sqlite3 %r" % (where, c, r.get(c), s[c]))
        # Intent: SUM within 1e-9 relative (sqlite3 3.40 sums naively in double).
        if s["watts"] is None:
            checks.check(r.get("watts") in (None, 0), "%s: sum %r, sqlite3 NULL" % (where, r.get("watts")))
        else:
            checks.check(isinstance(r.get("watts"), (int, float)) and lib.rel_close(r["watts"], s["watts"], 1e-9),
                         "%s: sum %r, sqlite3 %r" % (where, r.get("watts"), s["watts"]))


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_generated_reference")
    with lib.Env(args) as env:
        data = os.path.join(env.tmp, "data")
        manifest = env.generate(data, "--shards", SHARDS, "--records", 500, "--seed", 424242,
                                "--bad-rate", 0.01, "--lamps", 300, "--start", "2026-06-28T20")
        files = [os.path.join(data, e["name"]) for e in manifest["files"]]
        job = json.loads(json.dumps(JOB))
        job["inputs"]["files"] = [os.path.join(data, "*.ndjson.zst")]
        job_path = lib.write_job(env.path("job.json"), job)

        # ---- part 1: all shards
        sql_bad, sql_rows = sqlite_reference(env, files, -1)
        # Intent: harness sanity: sqlite3's json_valid agrees with the generator's malformed count.
        checks.check(sql_bad == manifest["totals"]["malformed"],
                     "sqlite3 counts %d malformed lines, manifest %d" % (sql_bad, manifest["totals"]["malformed"]))
        expected = python_reference(files, -1)
        # Intent: harness sanity: the two references agree on the groups and counts.
        checks.check({k: v["n"] for k, v in expected.items()} == {k: v["n"] for k, v in sql_rows.items()},
                     "python and sqlite3 references disagree on group counts")

        out = env.path("all.json")
        rc, _, err = env.fanfold_run("run", job_path, "-j", args.workers, "-o", out)
        if checks.check(rc == 0, "run over all shards: exit %d: %s" % (rc, lib.tail(err))):
            rows = lib.read_rows(out, "json")
            compare_with_sqlite(checks, "all shards", rows, sql_rows)
            # Intent: the same rows, in default group order, as the Python reference.
            lib.compare_results(checks, "all shards (python)", rows, expected, REF_JOB)
            # Intent: summary malformed total == manifest (exact).
            got_bad = lib.summary_malformed_total(err)
            checks.check(got_bad == manifest["totals"]["malformed"],
                         "summary malformed %r, manifest %d" % (got_bad, manifest["totals"]["malformed"]))

        # ---- part 2: one shard truncated in the middle of its zstd frame
        victim = files[CORRUPT]
        with open(victim, "r+b") as f:
            size = os.path.getsize(victim)
            f.truncate(size // 2)
        out2 = env.path("corrupt.json")
        rc, _, err = env.fanfold_run("run", job_path, "-j", args.workers, "-o", out2)
        # Intent: a corrupt shard is a failed shard: exit status 1 (spec), not a crash or 0.
        checks.check(rc == 1, "run with a truncated shard: exit %d (want 1): %s" % (rc, lib.tail(err)))
        # Intent: the failed shard is named on stderr.
        checks.check(os.path.basename(victim) in err, "stderr does not name the truncated shard %s: %s"
                     % (os.path.basename(victim), lib.tail(err)))
        if checks.check(os.path.exists(out2), "no result written when a shard failed"):
            rows = lib.read_rows(out2, "json")
            _, sql_rows2 = sqlite_reference(env, files, CORRUPT)
            # Intent: the other shards' results equal sqlite3 and Python without the failed shard.
            compare_with_sqlite(checks, "without shard %d" % CORRUPT, rows, sql_rows2)
            lib.compare_results(checks, "without shard %d (python)" % CORRUPT, rows,
                                python_reference(files, CORRUPT), REF_JOB)
    checks.exit()


if __name__ == "__main__":
    main()
