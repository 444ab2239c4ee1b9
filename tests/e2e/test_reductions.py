"""Several reductions in one read, through whole runs. A job with three named
reductions over six NDJSON shards (one of them zstd-compressed): per district
(with a derived field of its own), per power level over the faults only (its own
filter, and a rows step with an added ratio and a group filter), and one
ungrouped total. The reference is Python's sqlite3 module running three
GROUP BY queries (CASE, WHERE, HAVING) over the same records. Also:
- each reduction's CSV is byte-identical at -j 1, -j 2 and --in-process;
- one read: the decompressed bytes in summary.json equal a one-reduction
  job's and the shards' total size, and each shard is journaled once;
- stdout shows the reductions one after another under their titles; -o FILE
  is refused for several reductions; each emit.path is honoured;
- a shard that fails (its worker killed on every attempt) is recomputed by
  `resume`, which gives the same bytes as an undisturbed run; `report` lists
  the reductions.
"""

import csv
import io
import json
import os
import random
import sqlite3
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

DISTRICTS = ["Brassfen", "Fennick Row", "Marrowick", "Quillmoor", "Sorrowvane"]
EVENTS = ["heartbeat", "heartbeat", "heartbeat", "fault", "reboot"]


def make_records(rng, n):
    out = []
    for i in range(n):
        r = {"district": rng.choice(DISTRICTS), "i": i, "event": rng.choice(EVENTS)}
        if rng.random() < 0.9:
            r["power_w"] = rng.randrange(0, 90)  # whole watts: sums compare exactly
        if rng.random() < 0.02:
            r["district"] = None
        out.append(r)
    return out


LEVEL_SQL = "CASE WHEN power_w >= 50 THEN 'high' WHEN power_w IS NOT NULL THEN 'low' ELSE 'none' END"
QUERIES = {
    # GROUP BY with a conditional count; a NULL district is its own group (sorted first here and by fanfold).
    "by_district": "SELECT district, COUNT(*), SUM(power_w), SUM(CASE WHEN event = 'fault' THEN 1 ELSE 0 END) "
                   "FROM r GROUP BY district ORDER BY district IS NOT NULL, district",
    # the reduction's own filter is WHERE; rows.keep is HAVING; the added column a ratio.
    "fault_levels": "SELECT %s AS level, COUNT(*), SUM(power_w), CAST(SUM(power_w) AS REAL) / COUNT(*) "
                    "FROM r WHERE event = 'fault' GROUP BY level HAVING COUNT(*) >= 300 ORDER BY level" % LEVEL_SQL,
    "total": "SELECT COUNT(*), MAX(power_w), COUNT(DISTINCT district) FROM r",
}

JOB_REDUCTIONS = [
    {"name": "by_district",
     "derive": [{"name": "faulty", "expr": "one_if({/event} == 'fault')"}],
     "group": ["{/district}"],
     "measures": [{"name": "events", "fn": "count"},
                  {"name": "watts", "fn": "sum", "of": "{/power_w}"},
                  {"name": "faults", "fn": "sum", "of": "faulty"}],
     "emit": {"format": "csv", "path": "out/by_district.csv"}},
    {"name": "fault_levels",
     "keep": "{/event} == 'fault'",
     "derive": [{"name": "level", "expr": "branch({/power_w} >= 50, 'high', has({/power_w}), 'low', 'none')"}],
     "group": ["level"],
     "measures": [{"name": "faults", "fn": "count"},
                  {"name": "watts", "fn": "sum", "of": "{/power_w}"}],
     "rows": {"add": [{"name": "per_fault", "expr": "watts / faults"}], "keep": "faults >= 300"},
     "emit": {"format": "csv", "path": "out/fault_levels.csv", "order": [{"by": "level"}]}},
    {"name": "total",
     "measures": [{"name": "events", "fn": "count"},
                  {"name": "max_w", "fn": "max", "of": "{/power_w}"},
                  {"name": "districts", "fn": "distinct", "of": "{/district}"}],
     "emit": {"format": "csv", "path": "out/total.csv"}},
]


def sqlite_answers(records):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (district TEXT, event TEXT, power_w INTEGER)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?)",
                   [(r["district"], r["event"], r.get("power_w")) for r in records])
    return {name: [tuple(row) for row in db.execute(q)] for name, q in QUERIES.items()}


def parse_csv(text):
    rows = list(csv.reader(io.StringIO(text, newline="")))
    return rows[0], rows[1:]


def as_number(x):
    if x == "":
        return None
    try:
        return int(x)
    except ValueError:
        return float(x)


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_reductions")
    with lib.Env(args) as env:
        rng = random.Random(31)
        records = make_records(rng, 9000)
        files = []
        for s in range(6):
            files.append(env.path("in", "shard%d.ndjson" % s))
            with open(files[-1], "w") as f:
                for r in records[s::6]:
                    f.write(json.dumps(r) + "\n")
        subprocess.run(["zstd", "-q", "--rm", files[5]], check=True)
        files[5] += ".zst"
        job_doc = {"inputs": {"files": files}, "reductions": JOB_REDUCTIONS}
        job = lib.write_job(env.path("three.json"), job_doc)
        want = sqlite_answers(records)
        # Intent: the data exercises each case (a null-district group, a level dropped by HAVING).
        c.check(want["by_district"][0][0] is None and len(want["fault_levels"]) == 2,
                "the generated data lacks a case: %r" % want)

        # Intent: `check` lists each reduction under its name.
        rc, out, err = env.run([env.fanfold, "check", job])
        c.check(rc == 0 and "  reduction fault_levels:\n    keep:    {/event} == 'fault'\n" in out,
                "check output (exit %d): %s %s" % (rc, out, lib.tail(err)))

        results = {}
        for mode in (["-j", "1"], ["-j", "2"], ["--in-process"]):
            label = " ".join(mode)
            run_dir = env.path("runs", "three" + label.replace(" ", "").replace("-", ""))
            rc, out, err = env.fanfold_run("run", job, *mode, "--run-dir", run_dir)
            if not c.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
                continue
            got = {}
            for red in JOB_REDUCTIONS:
                with open(env.path("out", red["name"] + ".csv"), "rb") as f:
                    got[red["name"]] = f.read()
                # Intent: the run directory keeps each reduction's result under its name.
                with open(os.path.join(run_dir, "result-%s.csv" % red["name"]), "rb") as f:
                    c.check(f.read() == got[red["name"]], "%s: result-%s.csv differs from emit.path's file"
                            % (label, red["name"]))
            results[label] = got
            # Intent: per-reduction notes name their reduction.
            c.check('rows.keep of reduction "fault_levels" kept 2 of 3 result rows' in err,
                    "%s: rows.keep note: %s" % (label, lib.tail(err)))
            with open(os.path.join(run_dir, "summary.json")) as f:
                summary = json.load(f)
            names = [r["name"] for r in summary.get("reductions", [])]
            c.check(names == ["by_district", "fault_levels", "total"], "%s: summary reductions %r" % (label, names))
            faults = sum(1 for r in records if r["event"] == "fault")
            kept = [r.get("kept") for r in summary.get("reductions", [])]
            c.check(kept == [len(records), faults, len(records)], "%s: kept per reduction %r" % (label, kept))
            if label == "-j 2":
                summary_three = summary

        # Intent: every reduction agrees with sqlite3's GROUP BY / WHERE / HAVING.
        if "-j 1" in results:
            got = results["-j 1"]
            header, body = parse_csv(got["by_district"].decode())
            c.check(header == ["district", "events", "watts", "faults"], "by_district header %r" % header)
            rows = [(None if r[0] == "" else r[0],) + tuple(as_number(x) for x in r[1:]) for r in body]
            c.check(rows == want["by_district"], "by_district:\n%r\nvs sqlite3\n%r" % (rows, want["by_district"]))
            header, body = parse_csv(got["fault_levels"].decode())
            rows = [(r[0],) + tuple(as_number(x) for x in r[1:]) for r in body]
            ok = len(rows) == len(want["fault_levels"]) and all(
                a[:3] == b[:3] and abs(a[3] - b[3]) <= 1e-12 * abs(b[3])
                for a, b in zip(rows, want["fault_levels"]))
            c.check(ok, "fault_levels:\n%r\nvs sqlite3\n%r" % (rows, want["fault_levels"]))
            header, body = parse_csv(got["total"].decode())
            rows = [tuple(as_number(x) for x in r) for r in body]
            # sqlite's COUNT(DISTINCT) skips NULL; fanfold's distinct counts values too (null is no value).
            c.check(rows == want["total"], "total: %r vs sqlite3 %r" % (rows, want["total"]))
        # Intent: the bytes do not depend on the worker count or the transport.
        c.check(len(results) == 3 and all(r == results["-j 1"] for r in results.values()),
                "results differ between -j 1, -j 2 and --in-process")

        # Intent: one read feeds every reduction: the decompressed bytes are a
        # one-reduction job's and the shards' total size (os.path.getsize of
        # the plain files, zstd -dc's length for the compressed one).
        one = lib.write_job(env.path("one.json"), {"inputs": {"files": files}, "group": ["{/district}"],
                                                   "measures": [{"name": "n", "fn": "count"}]})
        one_dir = env.path("runs", "one")
        rc, _, err = env.fanfold_run("run", one, "-j", "2", "--run-dir", one_dir, "-q")
        plain = sum(os.path.getsize(f) for f in files[:5])
        plain += len(subprocess.run(["zstd", "-dc", files[5]], stdout=subprocess.PIPE, check=True).stdout)
        if c.check(rc == 0, "one-reduction job: exit %d: %s" % (rc, lib.tail(err))):
            with open(os.path.join(one_dir, "summary.json")) as f:
                one_summary = json.load(f)
            three_bytes = summary_three["bytes"]["decompressed"]
            c.check(three_bytes == one_summary["bytes"]["decompressed"] == plain,
                    "decompressed bytes: three reductions %d, one %d, files %d"
                    % (three_bytes, one_summary["bytes"]["decompressed"], plain))
            with open(os.path.join(env.path("runs", "threej2"), "journal.ndjson")) as f:
                attempts = [json.loads(line) for line in f if '"attempt"' in line]
            shards = sorted(a.get("shard") for a in attempts)
            c.check(shards == list(range(6)), "each shard read once, journal attempts: %r" % shards)

        # Intent: on stdout the reductions come one after another, each under its title.
        stdout_job = lib.write_job(env.path("stdout.json"), {"inputs": {"files": files}, "reductions": [
            dict(r, emit={"format": "csv"}) for r in JOB_REDUCTIONS]})
        rc, out, err = env.fanfold_run("run", stdout_job, "-q")
        c.check(rc == 0 and out.startswith("== by_district ==\ndistrict,events,watts,faults\n")
                and "\n\n== fault_levels ==\nlevel,faults,watts,per_fault\n" in out
                and "\n\n== total ==\nevents,max_w,districts\n" in out,
                "stdout (exit %d): %s %s" % (rc, out[:400], lib.tail(err)))
        # Intent: -o FILE cannot hold three results: a usage error (exit 2) that says what to do.
        rc, out, err = env.fanfold_run("run", stdout_job, "-o", env.path("x.csv"))
        c.check(rc == 2 and "3 reductions, which cannot share one file" in err, "-o: exit %d: %s" % (rc, err))

        # Intent: a shard whose worker dies on every attempt fails (exit 1); resume
        # recomputes it, and every reduction's result equals the undisturbed run's.
        run_dir = env.path("runs", "faulty")
        os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:crash:shard=3,after=5"
        try:
            rc, _, err = env.fanfold_run("run", job, "-j", "2", "--run-dir", run_dir, "--attempts", "2")
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
        c.check(rc == 1 and "shard 3" in err, "faulty run: exit %d: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("resume", run_dir, "-j", "2")
        c.check(rc == 0 and "5 shards saved, 1 to process" in err, "resume: exit %d: %s" % (rc, lib.tail(err)))
        if "-j 1" in results:
            for red in JOB_REDUCTIONS:
                with open(os.path.join(run_dir, "result-%s.csv" % red["name"]), "rb") as f:
                    c.check(f.read() == results["-j 1"][red["name"]], "resumed %s differs" % red["name"])
        # Intent: a lookup table feeds every reduction: the demo job jobs/lamp_models.json
        # asked as one reduction beside another gives its own result byte for byte.
        with open(os.path.join(env.src, "jobs", "lamp_models.json")) as f:
            lamp_job = json.load(f)
        demo = os.path.join(env.src, "demo_data")
        inputs = {"files": [os.path.join(demo, "lamps", "*.ndjson.zst")]}
        tables = [dict(t, path=os.path.join(demo, os.path.basename(t["path"]))) for t in lamp_job["tables"]]
        alone = dict(lamp_job, inputs=inputs, tables=tables, emit={"format": "csv"})
        rc, alone_out, err = env.fanfold_run("run", lib.write_job(env.path("alone.json"), alone), "-q")
        both = {"inputs": inputs, "tables": tables, "reductions": [
            {"name": "by_district", "group": ["{/district}"], "measures": [{"name": "n", "fn": "count"}]},
            {"name": "models", "derive": lamp_job["derive"], "group": lamp_job["group"],
             "measures": lamp_job["measures"], "rows": lamp_job["rows"], "emit": {"format": "csv"}}]}
        rc2, both_out, err2 = env.fanfold_run("run", lib.write_job(env.path("both.json"), both), "-q")
        c.check(rc == 0 and rc2 == 0 and both_out.endswith("\n== models ==\n" + alone_out),
                "lookup + reductions: exit %d/%d: %s %s" % (rc, rc2, lib.tail(err), lib.tail(err2)))

        # Intent: the report of a resumed run of three reductions lists each with its kept
        # count and result file (the same numbers as summary.json).
        html = env.path("report.html")
        rc, _, err = env.run([env.fanfold, "report", run_dir, "-o", html, "-q"])
        page = open(html).read() if rc == 0 else ""
        faults = sum(1 for r in records if r["event"] == "fault")
        c.check(rc == 0 and '<table id="reductions">' in page
                and "<td>fault_levels</td><td class=\"n\">{:,}</td><td>result-fault_levels.csv</td>".format(faults)
                in page, "report: exit %d: %s" % (rc, lib.tail(err)))
    c.exit()


if __name__ == "__main__":
    main()
