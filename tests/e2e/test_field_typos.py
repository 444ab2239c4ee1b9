"""Misspelt fields are caught before the run and at its end (docs/job-file.md,
"Fields the data does not have"; docs/run-directory.md, summary.json):

* `check` samples the first records: a JSON Pointer in none of them is a
  warning with the nearest names seen, exit status 0; a field that is only
  rare (absent from the sample, present later) is warned about too, and the
  run's end then stays silent about it;
* `run` warns the same way before any work, and at its end warns about every
  field absent from every record; summary.json's field_presence gives, per
  field, the records that had it, equal to the count Python's json module
  makes from the same files (RFC 6901 pointers resolved by hand below);
* `resume` of a finished run reuses every partial, and its counts are the
  same (they travel in the partials);
* a filter that keeps no record is named in the summary and summary.json;
* a CSV column missing from the header: exit status 2 from `check` and from
  `run`, and `run` creates no run directory (no work done);
* a huge first shard (gzip) does not make the sample slow: it reads 1,000
  records of it, not all; a first shard that cannot be read is a warning.
"""

import gzip
import json
import os
import time

import e2e_lib as lib


def resolve(doc, pointer):
    """True iff RFC 6901 `pointer` leads to a value in doc (null counts)."""
    for token in pointer.split("/")[1:]:
        token = token.replace("~1", "/").replace("~0", "~")
        if isinstance(doc, dict):
            if token not in doc:
                return False
            doc = doc[token]
        elif isinstance(doc, list):
            if not token.isdigit() or (token != "0" and token.startswith("0")) or int(token) >= len(doc):
                return False
            doc = doc[int(token)]
        else:
            return False
    return True


def records_of(path):
    """The well-formed records of an NDJSON shard (plain or gzip), by Python's json."""
    opener = gzip.open if path.endswith(".gz") else open
    out = []
    with opener(path, "rb") as f:
        for line in f:
            try:
                v = json.loads(line)
            except ValueError:
                continue
            if isinstance(v, dict):
                out.append(v)
    return out


def write_shards(env):
    """Three shards: 1,200 records without /rare, then a gzip shard and a plain
    one where /rare appears; nested objects, nulls, arrays, a malformed line."""
    d = os.path.dirname(env.path("data", "x"))
    lines0 = []
    for i in range(1200):
        rec = {"feeder": "F-%d" % (i % 7), "kw": i * 0.5, "meta": {"site": "S%d" % (i % 3), "tags": ["a", "b"]}}
        if i % 10 == 0:
            rec["kw"] = None
        if i % 4 == 0:
            del rec["meta"]
        lines0.append(json.dumps(rec))
    lines0.insert(17, '{"feeder": "F-9", "kw":')  # malformed
    with open(os.path.join(d, "s0.ndjson"), "w") as f:
        f.write("\n".join(lines0) + "\n")
    lines1 = [json.dumps({"feeder": "F-%d" % i, "kw": i, "rare": {"code": i}}) for i in range(30)]
    with gzip.open(os.path.join(d, "s1.ndjson.gz"), "wt") as f:
        f.write("\n".join(lines1) + "\n")
    lines2 = [json.dumps({"feeder": "F-1", "meta": {"site": "S1"}}) for _ in range(5)]
    with open(os.path.join(d, "s2.ndjson"), "w") as f:
        f.write("\n".join(lines2) + "\n")
    return d, [os.path.join(d, n) for n in ("s0.ndjson", "s1.ndjson.gz", "s2.ndjson")]


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_field_typos")
    with lib.Env(args) as env:
        data, files = write_shards(env)
        pointers = ["/feeder", "/kw", "/meta/site", "/meta/sitee", "/rare/code"]
        job = {"inputs": {"files": [os.path.join(data, "s*.ndjson*")]},
               "group": ["{/feeder}", "{/meta/sitee}"],
               "measures": [{"name": "n", "fn": "count"}, {"name": "kw", "fn": "sum", "of": "{/kw}"},
                            {"name": "sites", "fn": "distinct", "of": "{/meta/site}"},
                            {"name": "codes", "fn": "distinct", "of": "{/rare/code}"}],
               "emit": {"format": "csv"}}
        path = lib.write_job(env.path("typo.json"), job)

        # check: warnings for the typo and for the rare field, exit 0.
        rc, out, err = env.run([env.fanfold, "check", path])
        c.check(rc == 0, "check exits %d: %s" % (rc, lib.tail(err)))
        c.check("/group/1: field {/meta/sitee} is in none of the 1,000 records sampled from the first of 3 shards "
                "(did you mean {/meta/site}?)" in err, "check: no warning for {/meta/sitee}: %s" % lib.tail(err))
        c.check("/measures/3/of: field {/rare/code} is in none of the 1,000 records" in err,
                "check: no warning for the rare field: %s" % lib.tail(err))
        c.check("sampled: 1,000 records from the first of 3 shards; 2 fields in none of them" in out,
                "check: the sampled line is missing: %s" % lib.tail(out))

        # run: the same warnings first, then only the typo at the end.
        run_dir = env.path("runs", "typo")
        rc, out, err = env.fanfold_run("run", path, "--run-dir", run_dir, "-o", env.path("typo.csv"))
        c.check(rc == 0, "run exits %d: %s" % (rc, lib.tail(err)))
        before, _, after = err.partition("run directory:")
        c.check("field {/meta/sitee} is in none of the 1,000 records sampled" in before,
                "run: no warning before the run: %s" % lib.tail(err))
        records = [r for f in files for r in records_of(f)]
        want = {p: sum(resolve(r, p) for r in records) for p in pointers}
        c.check(want["/meta/sitee"] == 0 and want["/rare/code"] == 30, "the data is not as the test meant: %s" % want)
        c.check("/group/1: field {/meta/sitee} was in none of the %s well-formed records (did you mean {/meta/site}?)"
                % format(len(records), ",") in after, "run: no end-of-run warning: %s" % lib.tail(err))
        c.check("{/rare/code} was in none" not in after, "run: the rare field was warned about at the end")
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        # Outside reference: Python's json module and RFC 6901 resolution (above).
        c.check(summary.get("field_presence") == want,
                "summary.json field_presence %s, Python counts %s" % (summary.get("field_presence"), want))
        kinds = [(w.get("kind"), w.get("field")) for w in summary.get("warnings", [])]
        c.check(kinds == [("field_absent", "/meta/sitee")], "summary.json warnings: %s" % summary.get("warnings"))

        # resume of the finished run: every partial reused, the same counts.
        rc, out, err = env.run([env.fanfold, "resume", run_dir, "-o", env.path("again.csv")])
        c.check(rc == 0, "resume exits %d: %s" % (rc, lib.tail(err)))
        with open(os.path.join(run_dir, "journal.ndjson")) as f:
            starts = [e for e in map(json.loads, f) if e.get("event") == "start"]
        c.check(starts[-1].get("mode") == "resume" and starts[-1].get("pending") == 0,
                "resume processed shards again: %s" % starts[-1])
        with open(os.path.join(run_dir, "summary.json")) as f:
            again = json.load(f)
        c.check(again.get("field_presence") == summary.get("field_presence"),
                "resume's field_presence %s differs from the run's" % again.get("field_presence"))
        c.check("(did you mean {/meta/site}?)" in err, "resume: the end-of-run warning lacks its suggestion")

        # A filter that keeps no record.
        none = dict(job, keep="{/feeder} == 'nobody'", group=["{/feeder}"])
        none_path = lib.write_job(env.path("none.json"), none)
        none_dir = env.path("runs", "none")
        rc, out, err = env.fanfold_run("run", none_path, "--run-dir", none_dir, "-o", env.path("none.csv"))
        c.check(rc == 0 and "/keep: the filter kept none of the %s well-formed records" % format(len(records), ",")
                in err, "filter: exit %d, no warning: %s" % (rc, lib.tail(err)))
        with open(os.path.join(none_dir, "summary.json")) as f:
            kinds = [w.get("kind") for w in json.load(f).get("warnings", [])]
        c.check("filter_kept_none" in kinds, "summary.json lacks filter_kept_none: %s" % kinds)

        # A CSV column missing from the header: exit 2 before any work.
        with gzip.open(env.path("csv", "a.csv.gz"), "wt") as f:
            f.write("feeder,kw\nF-1,3\n")
        csv_job = lib.write_job(env.path("csv.json"), {
            "inputs": {"files": [env.path("csv", "a.csv.gz")]},
            "measures": [{"name": "s", "fn": "sum", "of": "{kv}"}]})
        rc, _, err = env.run([env.fanfold, "check", csv_job])
        c.check(rc == 2 and "column {kv} is not in the header of shard 0" in err and "(did you mean {kw}?)" in err,
                "CSV check: exit %d: %s" % (rc, lib.tail(err)))
        csv_dir = env.path("runs", "csv")
        rc, _, err = env.fanfold_run("run", csv_job, "--run-dir", csv_dir)
        c.check(rc == 2 and "(did you mean {kw}?)" in err, "CSV run: exit %d: %s" % (rc, lib.tail(err)))
        c.check(not os.path.exists(csv_dir), "CSV run: the run directory was created before the error")

        # A first shard that cannot be read (named .gz, not gzip): a warning, and the
        # sample goes on to the next shard.
        with open(env.path("bad", "a.ndjson.gz"), "w") as f:
            f.write('{"feeder": "F-1"}\n')
        with open(env.path("bad", "b.ndjson"), "w") as f:
            f.write('{"feeder": "F-2"}\n')
        bad_job = lib.write_job(env.path("bad.json"), {
            "inputs": {"files": [env.path("bad", "*.ndjson*")]},
            "group": ["{/feeder}"], "measures": [{"name": "n", "fn": "count"}]})
        rc, out, err = env.run([env.fanfold, "check", bad_job])
        c.check(rc == 0 and "warning: cannot read shard 0 '" in err and "a.ndjson.gz' for the field check: " in err,
                "unreadable shard: exit %d: %s" % (rc, lib.tail(err)))
        c.check("sampled: 1 record from the job's 2 shards; every field seen" in out,
                "unreadable shard: the sampled line: %s" % lib.tail(out))

        # A huge first shard (gzip, 60 MB of NDJSON): the sample reads 1,000 records, quickly.
        big = env.path("big", "a.ndjson.gz")
        line = json.dumps({"feeder": "F-1", "pad": "x" * 500}) + "\n"
        with gzip.open(big, "wt", compresslevel=1) as f:
            f.write(line * (60_000_000 // len(line)))
        with open(env.path("big", "b.ndjson"), "w") as f:
            f.write(line)
        big_job = lib.write_job(env.path("big.json"), {
            "inputs": {"files": [env.path("big", "*.ndjson*")]},
            "group": ["{/feedr}"], "measures": [{"name": "n", "fn": "count"}]})
        t0 = time.monotonic()
        rc, out, err = env.run([env.fanfold, "check", big_job])
        took = time.monotonic() - t0
        c.check(rc == 0 and "sampled: 1,000 records from the first of 2 shards" in out,
                "huge shard: exit %d: %s %s" % (rc, lib.tail(out), lib.tail(err)))
        c.check("(did you mean {/feeder}?)" in err, "huge shard: no suggestion: %s" % lib.tail(err))
        # A loose bound (the machine is shared); the line above shows the sample stopped.
        c.check(took < 5, "huge shard: check took %.1f s" % took)
    c.exit()


if __name__ == "__main__":
    main()
