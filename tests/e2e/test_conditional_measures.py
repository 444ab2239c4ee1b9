"""Conditional counts and sums per group, through whole runs: a job sums
one_if(...) and branch(...) values per district and per power level (a
branch() with three tests and an otherwise value), and has measures with
their own filter ("only"), over four NDJSON shards with missing and null
events and power readings and integer ids past 2^53. The reference is
Python's sqlite3 module running the same question as
SUM(CASE WHEN ... THEN 1 ELSE 0 END), SUM(CASE WHEN ... THEN x ELSE 0 END)
and aggregates with FILTER (WHERE ...), with GROUP BY; fanfold's CSV at -j 1
and -j 2 must be byte-identical to each other and hold sqlite's numbers.
"""

import csv
import io
import json
import os
import random
import re
import sqlite3
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

DISTRICTS = ["Fennick Row", "Marrowick", "Northwick", "Sorrowvane", "Tansel Reach"]
EVENTS = ["heartbeat", "heartbeat", "heartbeat", "fault", "reboot"]


def make_records(rng, n):
    """Records with every kind of gap the semantics must handle: no event,
    a null event, no power, a null power; ids around 2^53 (exact sums only)."""
    out = []
    for i in range(n):
        r = {"district": rng.choice(DISTRICTS), "id": 2**53 + rng.randrange(10**6), "i": i}
        roll = rng.random()
        if roll < 0.05:
            pass  # no event
        elif roll < 0.08:
            r["event"] = None
        else:
            r["event"] = rng.choice(EVENTS)
        roll = rng.random()
        if roll < 0.05:
            pass  # no power reading
        elif roll < 0.08:
            r["power_w"] = None
        else:
            r["power_w"] = rng.randrange(0, 90)  # whole watts: sums compare exactly
        out.append(r)
    return out


# Python's sqlite3: the same question in SQL. power_w >= 60 etc. is NULL for a
# NULL power, so CASE goes on to the next WHEN, as branch() goes on to its next test.
LEVEL_SQL = ("CASE WHEN power_w >= 60 THEN 'high' WHEN power_w >= 30 THEN 'mid' "
             "WHEN power_w IS NOT NULL THEN 'low' ELSE 'none' END")
QUERY = """
SELECT district, %s AS level,
       COUNT(*) AS events,
       SUM(CASE WHEN event = 'fault' THEN 1 ELSE 0 END) AS faults,
       SUM(CASE WHEN event IN ('fault', 'reboot') AND power_w > 50 THEN 1 ELSE 0 END) AS hot_trouble,
       SUM(CASE WHEN event = 'fault' THEN id ELSE 0 END) AS fault_ids,
       SUM(CASE WHEN event = 'fault' THEN power_w ELSE 0 END) AS fault_w,
       COUNT(*) FILTER (WHERE event = 'fault') AS fault_events,
       SUM(power_w) FILTER (WHERE event = 'fault') AS fault_w_only,
       MAX(power_w) FILTER (WHERE event = 'reboot') AS reboot_max_w
FROM r GROUP BY 1, 2 ORDER BY 1, 2
""" % LEVEL_SQL

JOB_MEASURES = [
    {"name": "events", "fn": "count"},
    {"name": "faults", "fn": "sum", "of": "one_if({/event} == 'fault')"},
    {"name": "hot_trouble", "fn": "sum", "of": "one_if({/event} in ['fault', 'reboot'] and {/power_w} > 50)"},
    {"name": "fault_ids", "fn": "sum", "of": "branch({/event} == 'fault', {/id}, 0)"},
    {"name": "fault_w", "fn": "sum", "of": "branch({/event} == 'fault', {/power_w}, 0)"},
    {"name": "fault_events", "fn": "count", "only": "{/event} == 'fault'"},
    {"name": "fault_w_only", "fn": "sum", "of": "{/power_w}", "only": "{/event} == 'fault'"},
    {"name": "reboot_max_w", "fn": "max", "of": "{/power_w}", "only": "{/event} == 'reboot'"},
]


def sqlite_rows(records):
    db = sqlite3.connect(":memory:")
    db.execute("CREATE TABLE r (district TEXT, event TEXT, power_w INTEGER, id INTEGER)")
    db.executemany("INSERT INTO r VALUES (?, ?, ?, ?)",
                   [(r["district"], r.get("event"), r.get("power_w"), r["id"]) for r in records])
    return [tuple(row) for row in db.execute(QUERY)]


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_conditional_measures")
    with lib.Env(args) as env:
        rng = random.Random(12)
        records = make_records(rng, 6000)
        files = []
        for s in range(4):
            files.append(env.path("in", "shard%d.ndjson" % s))
            with open(files[-1], "w") as f:
                for r in records[s::4]:
                    f.write(json.dumps(r) + "\n")
        job = lib.write_job(env.path("cond.json"), {
            "inputs": {"files": files},
            "derive": [{"name": "level", "expr": "branch({/power_w} >= 60, 'high', {/power_w} >= 30, 'mid', "
                                                 "has({/power_w}), 'low', 'none')"}],
            "group": ["{/district}", "level"],
            "measures": JOB_MEASURES,
            "emit": {"format": "csv", "order": [{"by": "district"}, {"by": "level"}]}})
        want = sqlite_rows(records)
        # Intent: the data does exercise the cases (faults, gaps, every level, a filtered sum over nothing).
        c.check(len(want) == len(DISTRICTS) * 4 and all(row[3] > 0 for row in want)
                and any(row[8] is None for row in want),
                "the generated data lacks a case: %r" % want)

        # Intent: `check` shows each measure's own filter in the plan it prints.
        rc, out, err = env.run([env.fanfold, "check", job])
        c.check(rc == 0 and "  measure: fault_w_only = sum({/power_w}), only where {/event} == 'fault'\n" in out
                and "  measure: fault_events = count, only where {/event} == 'fault'\n" in out,
                "check output lacks the only filters (exit %d): %s %s" % (rc, out, lib.tail(err)))

        outputs = {}
        for workers in ("1", "2"):
            out_path = env.path("out%s.csv" % workers)
            rc, _, err = env.fanfold_run("run", job, "-j", workers, "-o", out_path)
            if not c.check(rc == 0, "-j %s: exit %d: %s" % (workers, rc, lib.tail(err))):
                continue
            with open(out_path, "rb") as f:
                outputs[workers] = f.read()
            rows = list(csv.reader(io.StringIO(outputs[workers].decode("utf-8"), newline="")))
            header, body = rows[0], rows[1:]
            c.check(header == ["district", "level", "events", "faults", "hot_trouble", "fault_ids", "fault_w",
                              "fault_events", "fault_w_only", "reboot_max_w"],
                    "-j %s: header %r" % (workers, header))
            # Intent: every group and every conditional count and sum is sqlite3's
            # (SUM(CASE WHEN ... THEN 1 ELSE 0 END), GROUP BY district, level), integers exact;
            # a filtered sum or max over no value is empty, as sqlite's NULL.
            got = [(r[0], r[1]) + tuple(int(x) if x != "" else None for x in r[2:]) for r in body]
            c.check(got == want, "-j %s: rows differ from sqlite3's:\n%r\nvs\n%r" % (workers, got[:4], want[:4]))
            # Intent: a fault without a power reading makes branch() give missing, which sum
            # skips and the summary counts (Python: faults whose power_w is None or absent).
            no_power = sum(1 for r in records if r.get("event") == "fault" and r.get("power_w") is None)
            m = re.search(r'measure "fault_w" skipped (\d+) values', err)
            c.check(m is not None and int(m.group(1)) == no_power,
                    "-j %s: summary should count %d skipped fault_w values: %s" % (workers, no_power, lib.tail(err)))
            c.check(not re.search(r'measure "(faults|hot_trouble|fault_ids)" skipped', err),
                    "-j %s: one_if() or a branch over ids skipped values: %s" % (workers, lib.tail(err)))
            # Intent: records an "only" filter leaves out are not the measure's input, so they are
            # not skipped values: the filtered sum skips exactly the faults without power.
            m = re.search(r'measure "fault_w_only" skipped (\d+) values', err)
            c.check(m is not None and int(m.group(1)) == no_power,
                    "-j %s: fault_w_only should skip %d values: %s" % (workers, no_power, lib.tail(err)))
        # Intent: the result does not depend on the worker count, byte for byte.
        c.check(len(outputs) == 2 and outputs["1"] == outputs["2"], "-j 1 and -j 2 outputs differ")
    c.exit()


if __name__ == "__main__":
    main()
