"""Output a user can read: -o FILE's extension picks the format; --digits,
emit.digits and a measure's shown_digits round CSV and table numbers as Python's format(x, '.Ng') does
(Python stdlib, the reference here), while JSON, NDJSON and the run
directory's copy of the result keep every digit (read back with float() and
json, Python stdlib); the table tells a null key from the empty string.
"""

import csv
import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

RECORDS = [{"k": "a", "x": 0.125}, {"k": "b", "x": 2.675}, {"k": "c", "x": 1234567.5},
           {"k": "", "x": 0.1 + 0.2}, {"k": None, "x": 1}, {"x": 3}]
# min of x per key; None stands for the one group of the missing and the null key.
LOWEST = {"a": 0.125, "b": 2.675, "c": 1234567.5, "": 0.1 + 0.2, None: 1}


def read_csv(path):
    with open(path, newline="") as f:
        return list(csv.DictReader(f))


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_output_readable")
    with lib.Env(args) as env:
        data = env.path("d.ndjson")
        with open(data, "w") as f:
            for r in RECORDS:
                f.write(json.dumps(r) + "\n")
        job = {"inputs": {"files": [data]}, "group": ["{/k}"],
               "measures": [{"name": "lo", "fn": "min", "of": "{/x}"}, {"name": "n", "fn": "count"}]}
        plain = lib.write_job(env.path("plain.json"), job)

        # Intent: -o x.csv writes CSV for a job without emit.format, rounded by --digits to
        # exactly Python's format(x, '.2g'); counts (integers) are not rounded.
        rd = env.path("run-csv")
        rc, _, err = env.fanfold_run("run", plain, "-q", "--digits", "2", "-o", env.path("x.csv"), "--run-dir", rd)
        c.check(rc == 0, "run -o x.csv --digits 2: exit %d: %s" % (rc, lib.tail(err)))
        rows = read_csv(env.path("x.csv"))
        got = {r["k"]: r["lo"] for r in rows if r["k"] != ""}
        want = {k: format(v, ".2g") for k, v in LOWEST.items() if k}
        c.check(got == want, "--digits 2: %r, want Python's %r" % (got, want))
        c.check(sorted(int(r["n"]) for r in rows) == [1, 1, 1, 1, 2], "counts %r" % rows)
        # Intent: the run directory's copy keeps every digit (float() gives back each double exactly).
        full = read_csv(os.path.join(rd, "result.csv"))
        c.check(sorted(float(r["lo"]) for r in full) == sorted(LOWEST.values()),
                "run directory copy lost digits: %r" % full)

        # Intent: emit.digits rounds the same way, and --digits overrides it.
        three = lib.write_job(env.path("three.json"), dict(job, emit={"format": "csv", "digits": 3}))
        for extra, n in (([], 3), (["--digits", "5"], 5)):
            rc, _, err = env.fanfold_run("run", three, "-q", "-o", env.path("d.out"), *extra)
            rows = read_csv(env.path("d.out"))
            got = {r["k"]: r["lo"] for r in rows if r["k"]}
            want = {k: format(v, ".%dg" % n) for k, v in LOWEST.items() if k}
            c.check(rc == 0 and got == want, "digits %d (%r): exit %d, %r, want %r" % (n, extra, rc, got, want))

        # Intent: a measure's shown_digits rounds its own columns over emit.digits (another measure keeps
        # emit.digits), and --digits overrides both; texts are Python's format(x, '.Ng').
        per = dict(job, measures=[{"name": "lo", "fn": "min", "of": "{/x}", "shown_digits": 2},
                                  {"name": "hi", "fn": "max", "of": "{/x}"}, {"name": "n", "fn": "count"}],
                   emit={"format": "csv", "digits": 4})
        per_job = lib.write_job(env.path("per.json"), per)
        for extra, lo_n, hi_n in (([], 2, 4), (["--digits", "6"], 6, 6)):
            rc, _, err = env.fanfold_run("run", per_job, "-q", "-o", env.path("p.out"), *extra)
            rows = read_csv(env.path("p.out")) if rc == 0 else []
            got = {r["k"]: (r["lo"], r["hi"]) for r in rows if r["k"]}
            want = {k: (format(v, ".%dg" % lo_n), format(v, ".%dg" % hi_n)) for k, v in LOWEST.items() if k}
            c.check(rc == 0 and got == want, "shown_digits (%r): exit %d, %r, want %r: %s"
                    % (extra, rc, got, want, lib.tail(err)))

        # Intent: -o x.jsonl writes NDJSON with every digit, --digits or not; null is null, "" is "".
        rc, _, err = env.fanfold_run("run", plain, "-q", "--digits", "2", "-o", env.path("x.jsonl"))
        with open(env.path("x.jsonl")) as f:
            objs = [json.loads(line) for line in f]
        c.check(rc == 0 and {o["k"]: o["lo"] for o in objs} == LOWEST, "NDJSON: exit %d, %r" % (rc, objs))

        # Intent: -o x.txt writes the aligned table: the null/missing key reads (null), "" stays blank.
        rc, _, err = env.fanfold_run("run", plain, "-q", "-o", env.path("x.txt"))
        with open(env.path("x.txt")) as f:
            lines = f.read().splitlines()
        c.check(rc == 0 and lines[0].split() == ["k", "lo", "n"] and lines[2].split() == ["(null)", "1", "2"]
                and lines[3].split() == [repr(0.1 + 0.2), "1"] and lines[3].startswith(" "),
                "table: exit %d, %r" % (rc, lines))

        # Intent: an extension that contradicts the job's emit.format is a usage error; none keeps the job's.
        rc, out, err = env.fanfold_run("run", three, "-q", "-o", env.path("y.json"))
        c.check(rc == 2 and 'asks for "json" but the job\'s emit.format is "csv"' in err
                and not os.path.exists(env.path("y.json")), "clash: exit %d: %s" % (rc, lib.tail(err)))
        rc, out, err = env.fanfold_run("run", three, "-q", "-o", env.path("y.out"))
        c.check(rc == 0 and read_csv(env.path("y.out"))[0]["k"] == "", "no extension: exit %d: %s" % (rc, lib.tail(err)))
    c.exit()


if __name__ == "__main__":
    main()
