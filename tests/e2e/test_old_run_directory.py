"""A run directory of an older partial-state format (docs/partial-state.md,
"Versions"):

* `resume` over it stops before any work with exit status 2 and says why
  (the run's format version and the one this fanfold reads, named from
  run.json's plan text) and what to do (`run ... --fresh`), instead of
  claiming the job file changed; it writes no result;
* doing what it says works: the fresh run's count equals the records
  counted by Python's json module, and a later `resume` accepts the
  directory;
* a single saved partial of the old version in a current run directory is
  named (its pack file, its version, the one read) and recomputed.
"""

import json
import os
import re

import e2e_lib as lib


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_old_run_directory")
    with lib.Env(args) as env:
        data = env.path("data", "a.ndjson")
        records = ['{"id": %d}' % i for i in (1, 9007199254740993, 18446744073709551615)]
        with open(data, "w") as f:
            f.write("\n".join(records) + "\n")
        want = sum(isinstance(json.loads(r), dict) for r in records)  # Python's json module
        job = lib.write_job(env.path("job.json"), {
            "inputs": {"files": [data]},
            "measures": [{"name": "n", "fn": "count"}],
            "emit": {"format": "csv"},
        })
        run_dir = env.path("runs", "old")
        rc, _, err = env.fanfold_run("run", job, "--run-dir", run_dir, "-q", "-o", env.path("first.csv"))
        c.check(rc == 0, "first run: exit %d: %s" % (rc, lib.tail(err)))

        # Make it look as an earlier fanfold left it: the previous codec in
        # its plan text (hence another plan fingerprint), and unfinished.
        manifest_path = os.path.join(run_dir, "run.json")
        with open(manifest_path) as f:
            manifest = json.load(f)
        m = re.match(r"fanfold-plan codec=(\d+)\n", manifest["plan_text"])
        if not c.check(m is not None, "run.json's plan text does not start with its codec: %r" % manifest["plan_text"]):
            c.exit()
        current = int(m.group(1))
        old = current - 1
        manifest["plan_text"] = manifest["plan_text"].replace("codec=%d\n" % current, "codec=%d\n" % old, 1)
        manifest["plan"] = "0123456789abcdef"
        with open(manifest_path, "w") as f:
            json.dump(manifest, f)
        os.remove(os.path.join(run_dir, "summary.json"))

        out = env.path("resumed.csv")
        rc, stdout, err = env.fanfold_run("resume", run_dir, "-o", out)
        c.check(rc == 2, "resume of a version-%d run directory: exit %d, want 2: %s" % (old, rc, lib.tail(err)))
        for needle in ("cannot resume '%s'" % run_dir,
                       "partial states are in format version %d" % old,
                       "this fanfold reads version %d only" % current,
                       "fanfold run %s --run-dir %s --fresh" % (job, run_dir)):
            c.check(needle in err, "resume's message lacks %r: %s" % (needle, lib.tail(err)))
        c.check("changed since the run started" not in err, "resume blames the job file: %s" % lib.tail(err))
        c.check(not os.path.exists(out) and stdout == "", "resume wrote a result although it refused")

        # The advice works.
        rc, _, err = env.fanfold_run("run", job, "--run-dir", run_dir, "--fresh", "-q", "-o", env.path("fresh.csv"))
        c.check(rc == 0, "run --fresh over the old directory: exit %d: %s" % (rc, lib.tail(err)))
        rows = lib.read_rows(env.path("fresh.csv"), "csv")
        c.check(len(rows) == 1 and rows[0]["n"] == want, "count %r, Python's json counts %d" % (rows, want))
        rc, _, err = env.fanfold_run("resume", run_dir, "-q", "-o", env.path("again.csv"))
        c.check(rc == 0, "resume after the fresh run: exit %d: %s" % (rc, lib.tail(err)))

        # One saved partial of the old version inside a current run directory
        # (the version is read before the checksum, and a pack's frame hash
        # covers only the frame): resume names its pack file and both
        # versions, and recomputes the shard.
        packs = sorted(f for f in os.listdir(os.path.join(run_dir, "partials")) if f.endswith(".ffpk"))
        pack = os.path.join(run_dir, "partials", packs[-1]) if packs else ""
        if c.check(pack != "", "no pack file in %s" % run_dir):
            with open(pack, "rb") as f:
                blob = bytearray(f.read())
            at = blob.find(b"FFPS")
            c.check(at >= 0 and blob[at + 4] == current, "no version-%d partial found in %s" % (current, pack))
            blob[at + 4:at + 6] = old.to_bytes(2, "little")
            with open(pack, "wb") as f:
                f.write(bytes(blob))
            rc, _, err = env.fanfold_run("resume", run_dir, "-o", env.path("mixed.csv"))
            c.check(rc == 0, "resume over an old-version partial: exit %d: %s" % (rc, lib.tail(err)))
            needle = ("discarding the saved partial of shard 0 in '%s' (partial state format version %d; "
                      "this fanfold reads version %d only); recomputing it" % (pack, old, current))
            c.check(needle in err, "resume's warning lacks %r: %s" % (needle, lib.tail(err)))
            rows = lib.read_rows(env.path("mixed.csv"), "csv")
            c.check(len(rows) == 1 and rows[0]["n"] == want, "recomputed count %r, Python's json counts %d" % (rows, want))
    c.exit()


if __name__ == "__main__":
    main()
