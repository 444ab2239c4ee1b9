"""`resume` follows the shard files (docs/run-directory.md):

* a shard whose file was deleted is never answered from its old partial: the
  shard fails (exit status 1), its file is named, and the result covers the
  other shards exactly (record counts recomputed by Python's json module from
  the files that remain);
* a file changed after its run is recomputed once: the next resume reuses it
  (run.json records the new identity);
* the run directory keeps a copy of the job file: `resume` uses it, and says
  so, when the original is gone or changed;
* `resume` without --attempts uses the run's own (recorded in run.json), and
  --attempts on `resume` overrides it (a worker crash injected on every first
  attempt: the shard fails with 1 attempt, succeeds with 2).
"""

import json
import os

import e2e_lib as lib

SHARDS = 6
GONE = 2
TOUCHED = 4


def count_records(path):
    """Records of one plain NDJSON shard: each line that parses as a JSON object (Python json;
    invalid UTF-8 raises, as it makes a record malformed in fanfold)."""
    n = 0
    with open(path, "rb") as f:
        for line in f:
            try:
                n += isinstance(json.loads(line), dict)
            except ValueError:
                pass
    return n


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_resume_files")
    with lib.Env(args) as env:
        data = env.path("data", "x")
        data = os.path.dirname(data)
        env.generate(data, "--shards", SHARDS, "--records", 300, "--seed", 23, "--compress", "none")
        files = sorted(os.path.join(data, f) for f in os.listdir(data) if f.endswith(".ndjson"))
        c.check(len(files) == SHARDS, "generated %d shards, want %d" % (len(files), SHARDS))
        job = lib.write_job(env.path("job.json"), {
            "inputs": {"files": [os.path.join(data, "*.ndjson")]},
            "group": [],
            "measures": [{"name": "n", "fn": "count"}],
            "emit": {"format": "csv"},
        })
        run_dir = env.path("runs", "r")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", run_dir, "-o", env.path("out0.csv"))
        c.check(rc == 0, "first run: exit %d: %s" % (rc, lib.tail(err)))

        # A deleted shard file fails its shard; its old partial is not reused.
        gone = files[GONE]
        os.remove(gone)
        rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("out1.csv"))
        c.check(rc == 1, "resume after a deleted shard: exit %d, want 1: %s" % (rc, lib.tail(err)))
        c.check(gone in err, "resume does not name the deleted file %s: %s" % (gone, lib.tail(err)))
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        c.check(summary["shards"]["failed"] == 1 and summary["shards"]["done"] == SHARDS - 1,
                "summary.json after the deletion: %r" % summary["shards"])
        want = sum(count_records(f) for f in files if f != gone)
        rows = lib.read_rows(env.path("out1.csv"), "csv")
        c.check(len(rows) == 1 and rows[0]["n"] == want,
                "count over the remaining shards %r, Python's json counts %d" % (rows, want))

        # A touched file is recomputed once, then reused.
        st = os.stat(files[TOUCHED])
        os.utime(files[TOUCHED], ns=(st.st_atime_ns, st.st_mtime_ns + 5_000_000_000))
        rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("out2.csv"))
        c.check(rc == 1 and "changed since the run started" in err,
                "resume after a touch: exit %d (want 1, the deleted shard), recompute note: %s" % (rc, lib.tail(err)))
        rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("out3.csv"))
        c.check("changed since the run started" not in err,
                "the touched shard is recomputed again on the next resume: %s" % lib.tail(err))
        c.check("%d shards saved, 1 to process" % (SHARDS - 1) in err,
                "the next resume should reuse every shard but the deleted one: %s" % lib.tail(err))
        rows = lib.read_rows(env.path("out3.csv"), "csv")
        c.check(len(rows) == 1 and rows[0]["n"] == want, "count after the touch %r, want %d" % (rows, want))

        # The job file moved, then changed: resume uses the run's copy and says so.
        moved = env.path("elsewhere", "job.json")
        os.rename(job, moved)
        rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("out4.csv"))
        c.check(rc == 1 and "is gone; resuming with the run's copy" in err,
                "resume with the job file moved: exit %d (want 1, the deleted shard): %s" % (rc, lib.tail(err)))
        rows = lib.read_rows(env.path("out4.csv"), "csv")
        c.check(len(rows) == 1 and rows[0]["n"] == want, "count from the copy %r, want %d" % (rows, want))
        with open(moved) as f:
            changed = json.load(f)
        changed["measures"] = [{"name": "other", "fn": "count"}]
        lib.write_job(job, changed)
        rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("out5.csv"))
        c.check(rc == 1 and "changed since the run started; resuming with the run's copy" in err,
                "resume with the job file changed: exit %d: %s" % (rc, lib.tail(err)))
        rows = lib.read_rows(env.path("out5.csv"), "csv")
        c.check(len(rows) == 1 and rows[0].get("n") == want, "the changed job leaked into the resume: %r" % rows)

        # --attempts: the run's own by default, the flag's when given.
        run2 = env.path("runs", "a")
        os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:crash:shard=1,attempt=1,after=5"
        try:
            rc, _, err = env.fanfold_run("run", job, "--run-dir", run2, "--attempts", 1, "-o", env.path("a0.csv"))
            c.check(rc == 1, "run --attempts 1 with a crash: exit %d, want 1: %s" % (rc, lib.tail(err)))
            with open(os.path.join(run2, "run.json")) as f:
                c.check(json.load(f).get("attempts") == 1, "run.json does not record --attempts 1")
            rc, _, err = env.fanfold_run("resume", run2, "-o", env.path("a1.csv"))
            c.check(rc == 1 and "quarantined after 1 attempt" in err,
                    "resume without --attempts should keep the run's 1 attempt: exit %d: %s" % (rc, lib.tail(err)))
            rc, _, err = env.fanfold_run("resume", run2, "--attempts", 2, "-o", env.path("a2.csv"))
            c.check(rc == 0, "resume --attempts 2 should retry the crashed shard: exit %d: %s" % (rc, lib.tail(err)))
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
    c.exit()


if __name__ == "__main__":
    main()
