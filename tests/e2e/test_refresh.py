"""`fanfold refresh RUN_DIR` (docs/run-directory.md, "What `refresh` does"):

* hourly files added, removed, modified (a line appended), and added and
  removed together: after each change the refresh's result file is
  byte-identical to a `--fresh` run over the same files; the shards it
  reused, computed and dropped are exactly the counts this script predicts
  from the file lists (path, size, mtime_ns by os.stat), in summary.json and
  in the journal's generation event; the dropped files are named on stderr
  and in summary.json; the counts and sums equal an independent sqlite3
  computation (Python's sqlite3 module over the records Python's json module
  reads from the current files);
* a planted partial of a dropped shard (another run directory's pack whose
  entry for a live slot holds the dropped file's partial) never contributes:
  it is discarded by name and the bytes stay those of `--fresh`;
* an edit of the job's output alone (emit order and limit, a rows step) reruns
  with every partial reused: no attempt in the journal after the generation
  event, summary.json's processed bytes 0, and the output changes as asked;
* the job's inputs narrowed: the files no longer matched are dropped and
  named as such (Python's fnmatch predicts which), the result is --fresh's;
* a cut file that grew is computed again whole (all its chunks);
* a refresh while another process holds the run directory's lock is refused
  with a clear message (exit status 3);
* `run` on the run directory of the same plan suggests `refresh`; of another
  plan, says so and offers only `--fresh`.
"""

import fcntl
import fnmatch
import json
import os
import shutil
import sqlite3

import e2e_lib as lib
import reference

HOURS = 14


def records(paths):
    """(district, power_w) of every record Python's json module reads as an object; power_w as
    reference.usable_number() gives it, as fanfold's sum skips other values."""
    out = []
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
                out.append((d if isinstance(d, str) else None, reference.usable_number(r.get("power_w"))))
    return out


def sqlite_reference(paths):
    """{district: (count, sum of power_w)} by sqlite3: count(*) and total() per group."""
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE e (district TEXT, power_w REAL)")
    db.executemany("INSERT INTO e VALUES (?, ?)", records(paths))
    return {d: (n, w) for d, n, w in db.execute("SELECT district, count(*), total(power_w) FROM e GROUP BY district")}


def identities(data):
    out = {}
    for name in os.listdir(data):
        if name.endswith(".ndjson"):
            p = os.path.join(data, name)
            st = os.stat(p)
            out[p] = (st.st_size, st.st_mtime_ns)
    return out


def predict(before, after):
    """(reused, computed, dropped, dropped paths) of a refresh from the run's file list to the new one."""
    reused = sum(1 for p, ident in after.items() if before.get(p) == ident)
    dropped = sorted(p for p in before if p not in after)
    return reused, len(after) - reused, len(dropped), dropped


def journal_events(run_dir):
    with open(os.path.join(run_dir, "journal.ndjson")) as f:
        return [json.loads(line) for line in f if line.strip()]


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_refresh")
    with lib.Env(args) as env:
        pool = os.path.dirname(env.path("incoming", "x"))
        data = os.path.dirname(env.path("logs", "x"))
        env.generate(pool, "--shards", HOURS, "--records", 150, "--seed", 41, "--compress", "none")
        hours = sorted(f for f in os.listdir(pool) if f.endswith(".ndjson"))
        c.check(len(hours) == HOURS, "generated %d hours, want %d" % (len(hours), HOURS))

        def add(i):
            shutil.copy(os.path.join(pool, hours[i]), os.path.join(data, hours[i]))

        for i in range(8):
            add(i)
        job_doc = {
            "inputs": {"files": [os.path.join(data, "*.ndjson")]},
            "group": ["{/district}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/power_w}"}],
            "emit": {"format": "csv"},
        }
        job = lib.write_job(env.path("job.json"), job_doc)
        run_dir = env.path("runs", "r")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", run_dir, "-o", env.path("out0.csv"), "-j", 2)
        c.check(rc == 0, "first run: exit %d: %s" % (rc, lib.tail(err)))
        known = identities(data)

        # `run` again on the same plan suggests refresh.
        rc, _, err = env.fanfold_run("run", job, "--run-dir", run_dir)
        c.check(rc == 2 and "fanfold refresh " + run_dir in err, "run on a finished run: exit %d: %s" % (rc, lib.tail(err)))

        other = lib.write_job(env.path("other.json"), dict(job_doc, measures=job_doc["measures"] + [
            {"name": "top", "fn": "max", "of": "{/power_w}"}]))
        rc, _, err = env.fanfold_run("run", other, "--run-dir", run_dir)
        c.check(rc == 2 and "of another plan" in err and "--fresh" in err and "fanfold refresh" not in err,
                "run of another plan on the run directory: exit %d: %s" % (rc, lib.tail(err)))

        step = [0]

        def refresh_and_check(label, expect_warning=None, predicted=None):
            step[0] += 1
            now = identities(data)
            reused, computed, dropped, gone = predicted or predict(known, now)
            out = env.path("refresh%d.csv" % step[0])
            rc, _, err = env.fanfold_run("refresh", run_dir, "-o", out, "-j", 2)
            c.check(rc == 0, "%s: refresh exit %d: %s" % (label, rc, lib.tail(err)))
            fresh = env.path("fresh%d.csv" % step[0])
            rc, _, ferr = env.fanfold_run("run", job, "--run-dir", env.path("runs", "fresh%d" % step[0]), "-o", fresh, "-q")
            c.check(rc == 0, "%s: fresh run exit %d: %s" % (label, rc, lib.tail(ferr)))
            with open(out, "rb") as a, open(fresh, "rb") as b:
                c.check(a.read() == b.read(), "%s: refresh output differs from --fresh" % label)
            with open(os.path.join(run_dir, "summary.json")) as f:
                summary = json.load(f)
            sh = summary["shards"]
            c.check((sh["reused"], sh["processed"], sh["dropped"]) == (reused, computed, dropped),
                    "%s: summary reused/processed/dropped %r, predicted %r" %
                    (label, (sh["reused"], sh["processed"], sh["dropped"]), (reused, computed, dropped)))
            c.check(summary["dropped"] == gone, "%s: summary.json dropped %r, want %r" % (label, summary["dropped"], gone))
            for p in gone:
                c.check(p in err, "%s: stderr does not name the dropped file %s" % (label, p))
            gen = [e for e in journal_events(run_dir) if e["event"] == "generation"][-1]
            c.check((gen["reused"], gen["computed"], gen["dropped"]) == (reused, computed, dropped)
                    and gen["generation"] == step[0] + 1 and summary["generation"] == step[0] + 1,
                    "%s: journal generation event %r, predicted %r" % (label, gen, (reused, computed, dropped)))
            if expect_warning:
                c.check(expect_warning in err, "%s: no '%s' on stderr: %s" % (label, expect_warning, lib.tail(err)))
            want = sqlite_reference(sorted(now))
            rows = lib.read_rows(out, "csv")
            got = {r["district"]: (r["n"], r["w"]) for r in rows}
            c.check(set(got) == set(want), "%s: groups %r, sqlite3 %r" % (label, sorted(got, key=str), sorted(want, key=str)))
            for d, (n, w) in want.items():
                if d in got:
                    c.check(got[d][0] == n and lib.rel_close(got[d][1], w, 1e-9),
                            "%s: %r: fanfold %r, sqlite3 count(*), total() %r" % (label, d, got[d], (n, w)))
            known.clear()
            known.update(now)

        add(8)
        add(9)
        refresh_and_check("added two hours")
        os.remove(os.path.join(data, hours[3]))
        refresh_and_check("removed one hour")
        with open(os.path.join(data, hours[5]), "ab") as f:
            f.write(b'{"ts":"2026-03-01T05:59:59.000Z","district":"Quillmarsh","power_w":61.5}\n')
        refresh_and_check("appended a line to one hour")
        add(10)
        add(11)
        os.remove(os.path.join(data, hours[0]))
        os.remove(os.path.join(data, hours[1]))
        refresh_and_check("added two, removed two")

        # A planted partial of the dropped hour 0: another run directory over
        # [incoming/h12, incoming/h13, logs/h00] puts hour 0 at slot 2, which
        # hour 2 holds here; its pack, planted as the newest, must not count.
        with open(os.path.join(run_dir, "run.json")) as f:
            manifest = json.load(f)
        slot_of = {s["path"]: s["slot"] for s in manifest["shards"]}
        c.check(slot_of.get(os.path.join(data, hours[2])) == 2, "hour 2 keeps slot 2: %r" % slot_of)
        add(0)
        planted_job = lib.write_job(env.path("planted.json"), dict(job_doc, inputs={"files": [
            os.path.join(pool, hours[12]), os.path.join(pool, hours[13]), os.path.join(data, hours[0])]}))
        rc, _, err = env.fanfold_run("run", planted_job, "--run-dir", env.path("runs", "planted"), "-q", "-o",
                                     env.path("planted.csv"))
        c.check(rc == 0, "planting run: exit %d: %s" % (rc, lib.tail(err)))
        os.remove(os.path.join(data, hours[0]))
        shutil.copy(os.path.join(env.path("runs", "planted"), "partials", "pack-000001.ffpk"),
                    os.path.join(run_dir, "partials", "pack-999999.ffpk"))
        n = len(identities(data))
        refresh_and_check("planted partial of a dropped hour", expect_warning="belongs to another shard",
                          predicted=(n - 1, 1, 0, []))

        # Output-only edits: order, limit and a rows step; no worker starts.
        edited = dict(job_doc, rows={"add": [{"name": "mean_w", "expr": "w / n"}]},
                      emit={"format": "csv", "order": [{"by": "n", "desc": True}], "limit": 3})
        lib.write_job(job, edited)
        out = env.path("edited.csv")
        rc, _, err = env.fanfold_run("refresh", run_dir, "-o", out)
        c.check(rc == 0 and "changed in what the plan does not cover" in err, "output-only edit: exit %d: %s" % (rc, lib.tail(err)))
        events = journal_events(run_dir)
        last_gen = max(i for i, e in enumerate(events) if e["event"] == "generation")
        attempts = [e for e in events[last_gen:] if e["event"] == "attempt"]
        starts = [e for e in events[last_gen:] if e["event"] == "start"]
        c.check(not attempts and starts and starts[0]["pending"] == 0,
                "output-only edit: %d attempts after the generation event, start %r" % (len(attempts), starts))
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        c.check(summary["processed"]["bytes"]["compressed"] == 0 and summary["shards"]["processed"] == 0,
                "output-only edit: summary processed %r" % summary["processed"])
        rows = lib.read_rows(out, "csv")
        want = sqlite_reference(sorted(identities(data)))
        top = sorted(want.items(), key=lambda kv: -kv[1][0])[:3]
        c.check([r["n"] for r in rows] == [n for _, (n, _) in top] and list(rows[0]) == ["district", "n", "w", "mean_w"],
                "output-only edit: rows %r, sqlite3's top three by count %r" % (rows, top))
        for r in rows:
            c.check(lib.rel_close(r["mean_w"], r["w"] / r["n"], 1e-12), "mean_w %r" % r)

        # `report` lists every generation with what it computed and dropped,
        # as the journal's generation events say.
        rc, out_text, err = env.run([env.fanfold, "report", run_dir, "-o", env.path("report.html")])
        gens = [e for e in journal_events(run_dir) if e["event"] == "generation"]
        c.check(rc == 0 and len(gens) == step[0] + 1, "report: exit %d, %d generation events: %s" % (rc, len(gens), err))
        for g in gens:
            want = "generation %d, " % g["generation"]
            line = next((l for l in out_text.splitlines() if l.startswith(want)), "")
            c.check("%d reused, %d computed, %d dropped" % (g["reused"], g["computed"], g["dropped"]) in line
                    and all(os.path.basename(p) in line for p in g["computed_paths"] + g["dropped_paths"]),
                    "report line for generation %d: %r, journal %r" % (g["generation"], line, g))
        with open(env.path("report.html")) as f:
            c.check('id="generations"' in f.read(), "report.html has no generations section")

        # A cut file that grew: every chunk is computed again (the file's size
        # is part of each chunk's identity), and the result is --fresh's.
        big_dir = os.path.dirname(env.path("big", "x"))
        big = os.path.join(big_dir, "month.ndjson")
        with open(big, "wb") as f:
            for h in hours[:8]:
                f.write(open(os.path.join(pool, h), "rb").read())
        big_job = lib.write_job(env.path("big.json"), dict(job_doc, inputs={
            "files": [os.path.join(big_dir, "*.ndjson")], "chunk_bytes": 65536}))
        big_rd = env.path("runs", "big")
        rc, _, err = env.fanfold_run("run", big_job, "--run-dir", big_rd, "-q", "-o", env.path("big0.csv"))
        c.check(rc == 0, "chunked run: exit %d: %s" % (rc, lib.tail(err)))
        with open(big, "ab") as f:
            for h in hours[8:10]:
                f.write(open(os.path.join(pool, h), "rb").read())
        chunks = -(-os.path.getsize(big) // 65536)
        rc, _, err = env.fanfold_run("refresh", big_rd, "-q", "-o", env.path("big1.csv"))
        c.check(rc == 0, "chunked refresh: exit %d: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("run", big_job, "--run-dir", env.path("runs", "bigfresh"), "-q", "-o",
                                     env.path("big2.csv"))
        with open(env.path("big1.csv"), "rb") as a, open(env.path("big2.csv"), "rb") as b:
            c.check(a.read() == b.read(), "chunked refresh: output differs from --fresh")
        with open(os.path.join(big_rd, "summary.json")) as f:
            sh = json.load(f)["shards"]
        c.check((sh["total"], sh["reused"], sh["processed"], sh["dropped"]) == (chunks, 0, chunks, 0),
                "chunked refresh: shards %r, predicted %d chunks all computed" % (sh, chunks))
        want = sqlite_reference([big])
        got = {r["district"]: r["n"] for r in lib.read_rows(env.path("big1.csv"), "csv")}
        c.check(got == {d: n for d, (n, _) in want.items()}, "chunked refresh: counts %r, sqlite3 %r" % (got, want))

        # The job's inputs narrowed (same plan): the files no longer matched
        # are dropped and named as such, not as gone.
        narrowed = dict(edited, inputs={"files": [os.path.join(data, "*T1[0-9].ndjson")]})
        lib.write_job(job, narrowed)
        now = identities(data)
        kept = {p for p in now if fnmatch.fnmatchcase(os.path.basename(p), "*T1[0-9].ndjson")}
        rc, _, err = env.fanfold_run("refresh", run_dir, "-o", env.path("narrowed.csv"))
        c.check(rc == 0 and "no longer matches the job's inputs" in err,
                "narrowed inputs: exit %d: %s" % (rc, lib.tail(err)))
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        c.check(summary["shards"]["dropped"] == len(now) - len(kept) and summary["shards"]["reused"] == len(kept)
                and summary["dropped"] == sorted(set(now) - kept),
                "narrowed inputs: summary %r, predicted %d dropped, %d reused" % (summary["shards"], len(now) - len(kept), len(kept)))
        rc, _, err = env.fanfold_run("run", job, "--run-dir", env.path("runs", "narrowed-fresh"), "-q", "-o",
                                     env.path("narrowed-fresh.csv"))
        with open(env.path("narrowed.csv"), "rb") as a, open(env.path("narrowed-fresh.csv"), "rb") as b:
            c.check(rc == 0 and a.read() == b.read(), "narrowed inputs: output differs from --fresh")

        # The lock held by another process: refused, nothing changed.
        with open(os.path.join(run_dir, "lock"), "a") as held:
            fcntl.flock(held, fcntl.LOCK_EX)
            rc, _, err = env.fanfold_run("refresh", run_dir)
            fcntl.flock(held, fcntl.LOCK_UN)
        c.check(rc == 3 and "in use by another fanfold process" in err, "locked refresh: exit %d: %s" % (rc, lib.tail(err)))
    c.exit()


if __name__ == "__main__":
    main()
