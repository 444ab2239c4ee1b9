"""`fanfold scale` on generated data at 1 and 2 workers: the table on
stdout, the warm-up note, byte-identical results, valid JSON whose derived
numbers are recomputed here from its own wall times — speedup T1/Tp,
efficiency S/p, the Karp–Flatt serial fraction e = (1/S − 1/p)/(1 − 1/p)
(Karp & Flatt 1990, CACM 33(5)), the shard-size bound total/max(longest,
total/p) — with Python's statistics.median; the HTML chart; the warning
for more workers than cores; scratch directories removed.
"""

import json
import os
import re
import statistics
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

JOB = {
    "about": "e2e: scaling",
    "inputs": {"files": []},
    "derive": [{"name": "hour", "expr": "period_start(coalesce(time({/ts}), time_ms({/ts_ms})), 'hour')"}],
    "group": ["hour", "{/district}"],
    "measures": [{"name": "n", "fn": "count"}, {"name": "watts", "fn": "sum", "of": "{/power_w}"},
                 {"name": "lat", "fn": "quantile", "of": "{/latency_ms}", "at": [0.5, 0.99]}],
    "emit": {"format": "csv"},
}


def close(a, b, rel=1e-9):
    return abs(a - b) <= rel * max(abs(a), abs(b), 1e-300)


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_scale")
    with lib.Env(args) as env:
        # Scratch directories go under our own TMPDIR so that leftovers are visible.
        scratch = env.path("tmpdir", "x")
        scratch = os.path.dirname(scratch)
        os.environ["TMPDIR"] = scratch
        data = os.path.join(env.tmp, "data")
        manifest = env.generate(data, "--shards", 16, "--records", 5000, "--seed", 8, "--spread", 0.6)
        job_path = lib.write_job(env.path("job.json"), dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.zst")]}))
        js, html = env.path("scale.json"), env.path("scale.html")
        rc, out, err = env.fanfold_run("scale", job_path, "--workers", "1,2", "--repeat", 2, "--json", js,
                                       "--html", html, timeout=600)
        if not checks.check(rc == 0, "scale: exit %d: %s" % (rc, lib.tail(err))):
            checks.exit()
        # Intent: the table is on stdout with a header and one row per worker count.
        lines = out.strip().splitlines()
        checks.check(len(lines) == 3 and lines[0].split()[0] == "workers" and "speedup" in lines[0]
                     and "serial fraction" in lines[0], "table header/rows: %r" % out)
        rows = {int(l.split()[0]): l.split() for l in lines[1:] if l.split() and l.split()[0].isdigit()}
        checks.check(sorted(rows) == [1, 2], "table rows for %s, want 1 and 2" % sorted(rows))
        # Intent: the warm-up pass is announced, and the outputs were compared and found identical.
        checks.check(re.search(r"warm-up run .*not timed", err) is not None, "no warm-up note: %s" % lib.tail(err))
        checks.check("byte-identical in all 5 runs" in err, "no identical-output note: %s" % lib.tail(err))
        # Intent: no scratch run directory is left behind.
        checks.check(os.listdir(scratch) == [], "scratch left behind: %s" % os.listdir(scratch))

        with open(js) as f:
            s = json.load(f)
        pts = {p["workers"]: p for p in s["points"]}
        checks.check(sorted(pts) == [1, 2] and s["identical_outputs"] is True and s["repeat"] == 2,
                     "JSON points %s identical %r" % (sorted(pts), s.get("identical_outputs")))
        # Intent: the input totals equal the generator's manifest (records read include malformed lines).
        checks.check(s["records"] == manifest["totals"]["records"] + manifest["totals"]["malformed"]
                     and s["shards"] == 16, "records %r shards %r vs manifest %r"
                     % (s["records"], s["shards"], manifest["totals"]))
        t1 = statistics.median(pts[1]["wall_seconds"])
        for p, pt in sorted(pts.items()):
            med = statistics.median(pt["wall_seconds"])
            checks.check(len(pt["wall_seconds"]) == 2 and close(pt["median_s"], med), "median at %d: %r vs %r" % (p, pt["median_s"], med))
            checks.check(close(pt["min_s"], min(pt["wall_seconds"])) and close(pt["max_s"], max(pt["wall_seconds"])),
                         "min/max at %d" % p)
            S = t1 / med
            checks.check(close(pt["speedup"], S), "speedup at %d: %r, T1/Tp = %r" % (p, pt["speedup"], S))
            checks.check(close(pt["efficiency"], S / p), "efficiency at %d: %r vs %r" % (p, pt["efficiency"], S / p))
            checks.check(close(pt["mb_per_s"], s["bytes"]["decompressed"] / 1e6 / med), "MB/s at %d" % p)
            checks.check(close(pt["records_per_s"], s["records"] / med), "records/s at %d" % p)
            if p == 1:
                checks.check(pt["karp_flatt"] is None, "serial fraction at 1 worker should be null")
            else:
                # Karp & Flatt (1990): e = (1/S - 1/p) / (1 - 1/p).
                e = (1 / S - 1 / p) / (1 - 1 / p)
                checks.check(pt["karp_flatt"] is not None and close(pt["karp_flatt"], e),
                             "Karp-Flatt at %d: %r, recomputed %r" % (p, pt["karp_flatt"], e))
                # The table prints the same value to three decimals.
                checks.check(rows.get(p) and ("%.3f" % e) in rows[p], "table row %r lacks e = %.3f" % (rows.get(p), e))
            times = s["shard_seconds"]
            total = sum(times)
            bound = total / max(max(times), total / p)
            checks.check(len(times) == 16 and all(t > 0 for t in times) and close(pt["skew_bound"], bound),
                         "skew bound at %d: %r, recomputed %r" % (p, pt["skew_bound"], bound))
            checks.check(rows.get(p) and ("%.2fx" % S) in rows[p], "table row %r lacks speedup %.2fx" % (rows.get(p), S))
        # Intent: the HTML page is self-contained and draws one point per worker count.
        with open(html) as f:
            page = f.read()
        checks.check(page.count('class="point" data-workers=') == 2 and "<script src" not in page
                     and "<link" not in page, "scale HTML lacks its chart or loads something")

        # Intent: the scale file names the job and the plan it timed (the plan's 16-hex-digit fingerprint).
        checks.check(s["job"] == os.path.abspath(job_path) and re.fullmatch(r"[0-9a-f]{16}", s.get("plan", "")),
                     "scale JSON job %r plan %r" % (s["job"], s.get("plan")))
        run_dir = env.path("run")
        rc, _, err = env.fanfold_run("run", job_path, "-q", "-o", env.path("run.out"), "--run-dir", run_dir)
        checks.check(rc == 0, "run for report --scale: exit %d: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("report", run_dir, "-q", "--scale", js, "-o", env.path("same.html"))
        # Intent: figures of the run's own job and plan are taken.
        checks.check(rc == 0, "report --scale of the same job: exit %d: %s" % (rc, lib.tail(err)))
        with open(os.path.join(run_dir, "run.json")) as f:
            run_fingerprint = json.load(f).get("plan")
        for label, change, needles in [
                ("another job", {"job": "/elsewhere/other.json"},
                 ["its figures are of the job /elsewhere/other.json", os.path.abspath(job_path)]),
                ("another plan", {"plan": "0123456789abcdef"},
                 ["its figures are of another plan of", "plan 0123456789abcdef", "has plan %s" % run_fingerprint]),
                ("an older file of another job", {"job": "/elsewhere/other.json", "plan": None}, ["/elsewhere/other.json"]),
                ("an older file of this job", {"plan": None}, None)]:
            forged = dict(s, **{k: v for k, v in change.items() if v is not None})
            for k, v in change.items():
                if v is None:
                    forged.pop(k)
            fj = env.path("forged.json")
            with open(fj, "w") as f:
                json.dump(forged, f)
            rc, out, err = env.fanfold_run("report", run_dir, "-q", "--scale", fj, "-o", env.path("forged.html"))
            if needles is None:
                # Intent: a scale file from before the fingerprint was kept is read when its job is the run's.
                checks.check(rc == 0, "report --scale, %s: exit %d: %s" % (label, rc, lib.tail(err)))
                continue
            # Intent: figures of another job or plan are refused (exit 2), the message naming both sides.
            checks.check(rc == 2 and all(n in err for n in needles + [fj, run_dir]),
                         "report --scale, %s: exit %d, stderr %s" % (label, rc, lib.tail(err)))

        # Intent: more workers than cores (std::thread::hardware_concurrency) is warned about.
        cores = os.cpu_count() or 1
        small = os.path.join(env.tmp, "small")
        env.generate(small, "--shards", 3, "--records", 50, "--seed", 3)
        small_job = lib.write_job(env.path("small.json"), dict(JOB, inputs={"files": [os.path.join(small, "*.ndjson.zst")]}))
        rc, out, err = env.fanfold_run("scale", small_job, "--workers", "%d" % (cores + 1), timeout=300)
        checks.check(rc == 0 and ("%d workers exceed the %d cores" % (cores + 1, cores)) in err,
                     "no warning for %d workers on %d cores (exit %d): %s" % (cores + 1, cores, rc, lib.tail(err)))
        # Intent: a 1-worker baseline is added when the list lacks one.
        checks.check("adding a 1-worker run" in err and len(out.strip().splitlines()) == 3,
                     "baseline not added: %s / %s" % (out, lib.tail(err)))
        checks.check(os.listdir(scratch) == [], "scratch left behind: %s" % os.listdir(scratch))
    checks.exit()


if __name__ == "__main__":
    main()
