"""Exact 64-bit integers as keys, through the whole run: records grouped by
an id around 2^53, 2^63 and 2^64 - 1 (NDJSON and CSV, split over shards and
workers) give one group per distinct id, printed with every digit in JSON,
CSV and the table; 5 and 5.0 are one group; an integer beyond 64 bits and
1e400 are numbers, not malformed records; filters and derived fields compute
exactly. The reference is Python's arbitrary-precision int and its json
module (json.loads keeps integers exact and reads 1e400 as float('inf')).
"""

import csv
import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

# The ids of the issue, then the 64-bit edges and negatives.
IDS = [9007199254740993, 9007199254740992, 18446744073709551615, 1,
       2**63, 2**63 - 1, -2**63, -2**63 + 1, -9007199254740993]


def python_groups(lines):
    """Count per id as Python's json and dict see them (5 and 5.0 are one key);
    an int beyond 64 bits is its nearest double, float(v) (the documented rule)."""
    counts = {}
    for line in lines:
        v = json.loads(line).get("id")
        if type(v) is int and not -2**63 <= v < 2**64:
            v = float(v)
        counts[v] = counts.get(v, 0) + 1
    return counts


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_integer_keys")
    with lib.Env(args) as env:
        # Two shards, each id in both, one id written as 5 and as 5.0.
        lines_a = ['{"id":%d}' % i for i in IDS] + ['{"id":5}', '{"id":1e400}', '{"id":-1e400}']
        lines_b = ['{"id":%d,"x":[1,{"y":2}]}' % i for i in reversed(IDS)] + \
                  ['{"id":5.0}', '{"id":123456789012345678901234567890}']
        files = []
        for name, lines in (("a.ndjson", lines_a), ("b.ndjson", lines_b)):
            files.append(env.path(name))
            with open(files[-1], "w") as f:
                f.write("\n".join(lines) + "\n")
        want = python_groups(lines_a + lines_b)
        job = lib.write_job(env.path("ids.json"), {
            "inputs": {"files": files}, "group": ["{/id}"],
            "measures": [{"name": "n", "fn": "count"}], "emit": {"format": "json"}})

        for workers in ("1", "2"):
            # Intent: one group per distinct id (Python's dict of json.loads values), every digit kept,
            # 5 and 5.0 together, and no line malformed (Python's json reads every one of them).
            rc, out, err = env.fanfold_run("run", job, "-j", workers, "-o", env.path("ids%s.json" % workers))
            c.check(rc == 0, "-j %s: exit %d: %s" % (workers, rc, lib.tail(err)))
            with open(env.path("ids%s.json" % workers)) as f:
                rows = json.load(f)
            got = {}
            for r in rows:
                key = r["id"]
                if key == "inf":
                    key = float("inf")
                elif key == "-inf":
                    key = float("-inf")
                got[key] = r["n"]
            c.check(got == want, "-j %s: groups %r, want Python's %r" % (workers, got, want))
            c.check(all(type(r["id"]) is int for r in rows if r["id"] in IDS),
                    "-j %s: an id printed as a float: %r" % (workers, rows))
            malformed = lib.summary_malformed_total(err)
            c.check(malformed in (None, 0), "-j %s: %r malformed records reported: %s" % (workers, malformed, err))

        # Intent: CSV and the table print each id's exact digits (Python's str(int)).
        job = lib.write_job(env.path("ids_plain.json"), {
            "inputs": {"files": files}, "group": ["{/id}"], "measures": [{"name": "n", "fn": "count"}]})
        # --digits rounds doubles only: an integer keeps every digit.
        rc, _, err = env.fanfold_run("run", job, "-q", "--digits", "2", "-o", env.path("ids.csv"))
        with open(env.path("ids.csv"), newline="") as f:
            csv_ids = {r["id"] for r in csv.DictReader(f)}
        c.check(rc == 0 and {str(i) for i in IDS} <= csv_ids, "CSV ids %r" % sorted(csv_ids))
        c.check(format(float(123456789012345678901234567890), ".2g") in csv_ids,
                "CSV --digits 2: the double key is not rounded as Python's format(x, '.2g'): %r" % sorted(csv_ids))
        rc, _, err = env.fanfold_run("run", job, "-q", "-o", env.path("ids.txt"))
        with open(env.path("ids.txt")) as f:
            table_ids = {line.split()[0] for line in f.read().splitlines()[2:] if line.strip()}
        c.check(rc == 0 and {str(i) for i in IDS} <= table_ids, "table ids %r" % sorted(table_ids))

        # Intent: CSV cells that are integer text group by their text and compare exactly in a filter.
        data = env.path("ids.csv.in", "ids.csv")
        with open(data, "w", newline="") as f:
            w = csv.writer(f)
            w.writerow(["id", "v"])
            for i in IDS:
                w.writerow([i, i])
        csv_job = lib.write_job(env.path("csv_job.json"), {
            "inputs": {"files": [data], "format": "csv"}, "keep": "{v} > 9007199254740992",
            "derive": [{"name": "next", "expr": "{v} + 1"}], "group": ["{id}", "next"],
            "measures": [{"name": "n", "fn": "count"}], "emit": {"format": "json"}})
        rc, _, err = env.fanfold_run("run", csv_job, "-q", "-o", env.path("csv_out.json"))
        with open(env.path("csv_out.json")) as f:
            rows = json.load(f)
        got = sorted((r["id"], r["next"]) for r in rows)
        # Python: int arithmetic; past 2**64 - 1 the sum is its nearest double, float(i + 1).
        want_rows = sorted((str(i), i + 1 if i + 1 < 2**64 else float(i + 1)) for i in IDS if i > 9007199254740992)
        c.check(rc == 0 and got == want_rows, "CSV filter/derive: exit %d, %r, want %r; %s" % (rc, got, want_rows, err))
    c.exit()


if __name__ == "__main__":
    main()
