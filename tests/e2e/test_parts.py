"""`fanfold run JOB --part I/N` and `fanfold merge DIR...` (docs/run-directory.md, "Parts";
README, "Running on a cluster"):

* for N = 1, 3 and 7 the parts, merged, give output byte-identical to one `run` of the whole job
  (and summary.json's records, bytes, malformed samples and field presence equal to its),
  and the merged counts and sums equal an independent sqlite3 computation (Python's sqlite3
  module, count(*) and total() per group, over the records Python's json module reads);
* the parts' shards are contiguous in the sorted shard list and cover it exactly once
  (checked from each part's run.json against the whole run's);
* --part refuses 0/3, 4/3, 1/0 and malformed text with exit status 2 and a message;
* merge refuses overlapping parts (one part given twice), a missing part, a part of another plan,
  a part cut from a shard list whose identities disagree (a file changed between part runs), an
  unfinished part and a part whose last session failed a shard, each with exit status 2 and a message naming the directory.
"""

import json
import os
import sqlite3

import e2e_lib as lib
import reference


def sqlite_reference(paths):
    """{district: (count, sum of power_w)} by sqlite3: count(*) and total() per group."""
    rows = []
    for p in paths:
        with open(p, "rb") as f:
            for line in f:
                try:
                    r = json.loads(line)
                except ValueError:
                    continue
                if not isinstance(r, dict):
                    continue
                d = r.get("district")
                rows.append((d if isinstance(d, str) else None, reference.usable_number(r.get("power_w"))))
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE e (district TEXT, power_w REAL)")
    db.executemany("INSERT INTO e VALUES (?, ?)", rows)
    return {d: (n, w) for d, n, w in db.execute("SELECT district, count(*), total(power_w) FROM e GROUP BY district")}


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_parts")
    with lib.Env(args) as env:
        data = os.path.dirname(env.path("logs", "x"))
        env.generate(data, "--shards", 10, "--records", 120, "--seed", 77, "--compress", "none")
        files = sorted(os.path.join(data, f) for f in os.listdir(data) if f.endswith(".ndjson"))
        job_doc = {
            "inputs": {"files": [os.path.join(data, "*.ndjson")]},
            "group": ["{/district}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/power_w}"},
                         {"name": "w_mean", "fn": "mean", "of": "{/power_w}"}],
            "emit": {"format": "csv"},
        }
        job = lib.write_job(env.path("job.json"), job_doc)
        whole_out = env.path("whole.csv")
        whole_dir = env.path("runs", "whole")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", whole_dir, "-o", whole_out, "-j", 2)
        c.check(rc == 0, "whole run: exit %d: %s" % (rc, lib.tail(err)))
        with open(whole_out, "rb") as f:
            whole = f.read()
        with open(os.path.join(whole_dir, "run.json")) as f:
            whole_shards = [(s["path"], s["size"], s["mtime_ns"]) for s in json.load(f)["shards"]]

        want = sqlite_reference(files)
        rows = lib.read_rows(whole_out, "csv")
        got = {r["district"]: (r["n"], r["w"]) for r in rows}
        c.check(set(got) == set(want), "groups %r, sqlite3 %r" % (sorted(got, key=str), sorted(want, key=str)))
        for d, (n, w) in want.items():
            if d in got:
                c.check(got[d][0] == n and lib.rel_close(got[d][1], w, 1e-9),
                        "%r: fanfold %r, sqlite3 count(*), total() %r" % (d, got[d], (n, w)))

        def run_parts(n, tag, job_path=job):
            dirs = []
            for i in range(1, n + 1):
                d = env.path("runs", "%s-%d-of-%d" % (tag, i, n))
                rc, _, err = env.fanfold_run("run", job_path, "--part", "%d/%d" % (i, n), "--run-dir", d,
                                             "-o", env.path("%s-part-%d-of-%d.csv" % (tag, i, n)), "-j", 1, "-q")
                c.check(rc == 0, "%s part %d/%d: exit %d: %s" % (tag, i, n, rc, lib.tail(err)))
                dirs.append(d)
            return dirs

        parts7 = None
        for n in (1, 3, 7):
            dirs = run_parts(n, "p")
            if n == 7:
                parts7 = dirs
            covered = []
            for i, d in enumerate(dirs, 1):
                with open(os.path.join(d, "run.json")) as f:
                    m = json.load(f)
                c.check(m["part"]["number"] == i and m["part"]["of"] == n and
                        m["part"]["total_shards"] == len(whole_shards) and m["part"]["first_shard"] == len(covered),
                        "part %d/%d: run.json part %r" % (i, n, m["part"]))
                covered += [(s["path"], s["size"], s["mtime_ns"]) for s in m["shards"]]
            c.check(covered == whole_shards, "N=%d: the parts' shards are not the whole list in order" % n)
            out = env.path("merged-%d.csv" % n)
            # Given in reverse order: merge orders the parts itself.
            rc, _, err = env.fanfold_run("merge", *reversed(dirs), "--run-dir", env.path("runs", "merged-%d" % n),
                                         "-o", out)
            c.check(rc == 0, "merge N=%d: exit %d: %s" % (n, rc, lib.tail(err)))
            if rc == 0:
                with open(out, "rb") as f:
                    c.check(f.read() == whole, "merge N=%d: output differs from one run of the whole job" % n)
                with open(os.path.join(env.path("runs", "merged-%d" % n), "summary.json")) as f:
                    ms = json.load(f)
                with open(os.path.join(whole_dir, "summary.json")) as f:
                    ws = json.load(f)
                for k in ("records", "bytes", "malformed_samples", "field_presence"):
                    c.check(ms.get(k) == ws.get(k), "merge N=%d: summary.json %s %r, the whole run's %r" %
                            (n, k, ms.get(k), ws.get(k)))
                c.check(ms["shards"]["reused"] == len(whole_shards) and ms["shards"]["processed"] == 0,
                        "merge N=%d: summary.json shards %r" % (n, ms["shards"]))

        # With 10 shards of about equal size, 3 parts hold 3 or 4 shards each.
        sizes = []
        for i in range(1, 4):
            with open(os.path.join(env.path("runs", "p-%d-of-3" % i), "run.json")) as f:
                sizes.append(len(json.load(f)["shards"]))
        c.check(sorted(sizes) == [3, 3, 4], "3 parts of 10 similar shards hold %r shards" % sizes)

        for bad, what in (("0/3", "numbered from 1"), ("4/3", "must be 1 to 3"), ("1/0", "1 to"),
                          ("two/3", "expected I/N"), ("1-3", "expected I/N"), ("", "expected I/N")):
            rc, _, err = env.fanfold_run("run", job, "--part", bad)
            c.check(rc == 2 and what in err, "--part %r: exit %d, want 2 and %r: %s" % (bad, rc, what, lib.tail(err)))

        merged = env.path("runs", "refused")
        # Overlapping: part 2 given twice.
        rc, _, err = env.fanfold_run("merge", parts7[0], parts7[1], parts7[1], *parts7[2:], "--run-dir", merged)
        c.check(rc == 2 and "overlap" in err and parts7[1] in err,
                "merge with a part twice: exit %d: %s" % (rc, lib.tail(err)))
        # Missing: part 5 left out.
        rc, _, err = env.fanfold_run("merge", *(parts7[:4] + parts7[5:]), "--run-dir", merged)
        c.check(rc == 2 and "part 5/7 of 7 is missing" in err, "merge without part 5: exit %d: %s" % (rc, lib.tail(err)))
        # Another plan: part 2 of a job with another measure.
        other = lib.write_job(env.path("other.json"), dict(job_doc, measures=job_doc["measures"] + [
            {"name": "top", "fn": "max", "of": "{/power_w}"}]))
        other_dirs = run_parts(3, "other", other)
        p3 = [env.path("runs", "p-%d-of-3" % i) for i in range(1, 4)]
        rc, _, err = env.fanfold_run("merge", p3[0], other_dirs[1], p3[2], "--run-dir", merged)
        c.check(rc == 2 and "different jobs" in err and other_dirs[1] in err,
                "merge with a part of another plan: exit %d: %s" % (rc, lib.tail(err)))
        # A shard whose identity disagrees: a file changed between part runs.
        with open(files[-1], "ab") as f:
            f.write(b'{"ts":"2026-03-01T05:59:59.000Z","district":"Quillmarsh","power_w":61.5}\n')
        late = env.path("runs", "late-3-of-3")
        rc, _, err = env.fanfold_run("run", job, "--part", "3/3", "--run-dir", late, "-q", "-o", env.path("late.csv"))
        c.check(rc == 0, "late part 3/3: exit %d: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("merge", p3[0], p3[1], late, "--run-dir", merged)
        c.check(rc == 2 and "another shard list" in err and late in err,
                "merge with a shard identity that disagrees: exit %d: %s" % (rc, lib.tail(err)))
        # Unfinished: a part whose summary.json is gone (as if killed before the end).
        os.remove(os.path.join(p3[1], "summary.json"))
        rc, _, err = env.fanfold_run("merge", *p3, "--run-dir", merged)
        c.check(rc == 2 and "unfinished" in err and p3[1] in err and "fanfold resume" in err,
                "merge with an unfinished part: exit %d: %s" % (rc, lib.tail(err)))
        # A part whose last session failed a shard (its file gone): refused, although the shard's
        # old partial is still in the part's packs.
        small = os.path.dirname(env.path("small", "x"))
        for f in files[:2]:
            with open(f, "rb") as src, open(os.path.join(small, os.path.basename(f)), "wb") as dst:
                dst.write(src.read())
        small_job = lib.write_job(env.path("small.json"), dict(job_doc, inputs={"files": [os.path.join(small, "*.ndjson")]}))
        small_dirs = run_parts(2, "small", small_job)
        os.remove(os.path.join(small, os.path.basename(files[1])))
        rc, _, err = env.fanfold_run("resume", small_dirs[1], "-o", env.path("small-resumed.csv"))
        c.check(rc == 1, "resume of a part whose file is gone: exit %d, want 1: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("merge", *small_dirs, "--run-dir", merged)
        c.check(rc == 2 and "1 failed shard" in err and small_dirs[1] in err,
                "merge with a part that failed a shard: exit %d: %s" % (rc, lib.tail(err)))
        # refresh of a part is refused; resume of a part works.
        rc, _, err = env.fanfold_run("refresh", p3[0])
        c.check(rc == 2 and "refresh cuts no parts" in err, "refresh of a part: exit %d: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("resume", p3[1], "-o", env.path("resumed.csv"))
        c.check(rc == 0, "resume of a part: exit %d: %s" % (rc, lib.tail(err)))
    c.exit()


if __name__ == "__main__":
    main()
