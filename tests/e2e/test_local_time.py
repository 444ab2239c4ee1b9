"""Local time through whole runs: records stamped around the 2026
daylight-saving transitions of Europe/Berlin and America/New_York (ISO text
with Z, with offsets +05, +0530, +05:30 and -04:00, and epoch numbers),
split over shards, grouped by Berlin's local day (including its 23- and
25-hour days), by New York's local hour and weekday, and by 15-minute
buckets in Asia/Kolkata, at -j 1 and -j 2. The reference is Python 3.11's
datetime.fromisoformat and zoneinfo, which read the same tz database
(/usr/share/zoneinfo); both worker counts give byte-identical output.
"""

import json
import os
import random
import sys
from datetime import datetime, timedelta, timezone
from zoneinfo import ZoneInfo

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

BERLIN, NEW_YORK, KOLKATA = ZoneInfo("Europe/Berlin"), ZoneInfo("America/New_York"), ZoneInfo("Asia/Kolkata")
# Offsets the timestamps are written with: none (Z), whole hours as "+05",
# "+0530", "+05:30" and a negative "-04:00".
OFFSETS = [None, (5, 0, "%+03d"), (5, 30, "compact"), (5, 30, "colon"), (-4, 0, "colon")]


def stamp(rnd, t):
    """t (epoch seconds) written one of several ways."""
    form = rnd.randrange(len(OFFSETS) + 1)
    if form == len(OFFSETS):
        return t  # a number
    utc = datetime.fromtimestamp(t, timezone.utc)
    if OFFSETS[form] is None:
        return utc.strftime("%Y-%m-%dT%H:%M:%SZ")
    h, m, style = OFFSETS[form]
    local = utc + timedelta(hours=h, minutes=m if h >= 0 else -m)
    sign = "+" if h >= 0 else "-"
    if style == "compact":
        off = "%s%02d%02d" % (sign, abs(h), m)
    elif style == "colon":
        off = "%s%02d:%02d" % (sign, abs(h), m)
    else:
        off = "%s%02d" % (sign, abs(h))
    return local.strftime("%Y-%m-%dT%H:%M:%S") + off


def epoch(ts):
    """Python's reading of a stamp: fromisoformat (3.11 takes Z, +05, +0530, +05:30)."""
    return ts if isinstance(ts, int) else int(datetime.fromisoformat(ts).timestamp())


def make_records(rnd):
    # Around Berlin's 2026-03-29 and 2026-10-25 and New York's 2026-03-08 and
    # 2026-11-01 transitions: three days either side, and the nights themselves.
    centres = [1774746000, 1792890000, 1772953200, 1793512800]
    out = []
    for c in centres:
        for _ in range(1500):
            out.append(c + rnd.randrange(-3 * 86400, 3 * 86400))
        for _ in range(500):
            out.append(c + rnd.randrange(-3 * 3600, 3 * 3600))
    return [{"ts": stamp(rnd, t), "v": rnd.randrange(100)} for t in out]


def local_hour(t, tz):
    """The hour bucket's label: the local hour's start, fold kept, so a repeated hour keeps its offset."""
    d = datetime.fromtimestamp(t, tz).replace(minute=0, second=0)
    return d.isoformat(timespec="minutes")


def quarter_hour(t, tz):
    d = datetime.fromtimestamp(t, tz)
    return d.replace(minute=d.minute // 15 * 15, second=0).isoformat(timespec="minutes")


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_local_time")
    rnd = random.Random(20261025)
    with lib.Env(args) as env:
        records = make_records(rnd)
        rnd.shuffle(records)
        files = []
        for i in range(4):
            files.append(env.path("shard%d.ndjson" % i))
            with open(files[-1], "w") as f:
                for r in records[i::4]:
                    f.write(json.dumps(r) + "\n")

        days, hours, quarters = {}, {}, {}
        for r in records:
            t = epoch(r["ts"])
            day = datetime.fromtimestamp(t, BERLIN).date().isoformat()
            n, s = days.get(day, (0, 0))
            days[day] = (n + 1, s + r["v"])
            key = (local_hour(t, NEW_YORK), datetime.fromtimestamp(t, NEW_YORK).isoweekday())
            hours[key] = hours.get(key, 0) + 1
            q = quarter_hour(t, KOLKATA)
            quarters[q] = quarters.get(q, 0) + 1

        jobs = {
            "day": {"inputs": {"files": files},
                    "derive": [{"name": "t", "expr": "time({/ts})"},
                               {"name": "day", "expr": "period_start(t, 'day', 'Europe/Berlin')"}],
                    "group": ["day"],
                    "measures": [{"name": "n", "fn": "count"}, {"name": "v", "fn": "sum", "of": "{/v}"}],
                    "emit": {"format": "json"}},
            "hour": {"inputs": {"files": files},
                     "derive": [{"name": "hour", "expr": "period_start({/ts}, 'hour', 'America/New_York')"},
                                {"name": "wd", "expr": "weekday({/ts}, 'America/New_York')"}],
                     "group": ["hour", "wd"], "measures": [{"name": "n", "fn": "count"}],
                     "emit": {"format": "json"}},
            "quarter": {"inputs": {"files": files},
                        "derive": [{"name": "q", "expr": "period_start({/ts}, '15 minutes', 'Asia/Kolkata')"}],
                        "group": ["q"], "measures": [{"name": "n", "fn": "count"}],
                        "emit": {"format": "json"}},
        }
        outputs = {}
        for name, job in jobs.items():
            path = lib.write_job(env.path(name + ".json"), job)
            for workers in ("1", "2"):
                out = env.path("%s_j%s.json" % (name, workers))
                rc, _, err = env.fanfold_run("run", path, "-q", "-j", workers, "-o", out)
                c.check(rc == 0, "%s -j %s: exit %d: %s" % (name, workers, rc, lib.tail(err)))
                with open(out, "rb") as f:
                    outputs[(name, workers)] = f.read()
            # Intent: the result does not depend on the worker count.
            c.check(outputs[(name, "1")] == outputs[(name, "2")], "%s: -j 1 and -j 2 differ" % name)

        rows = json.loads(outputs[("day", "2")])
        got = {r["day"]: (r["n"], r["v"]) for r in rows}
        # Intent: counts and sums per Berlin local day are Python zoneinfo's.
        c.check(got == days, "per Berlin day: %r, want Python's %r" % (sorted(got.items())[:5], sorted(days.items())[:5]))
        # Intent: the 23- and 25-hour days hold every record between their local midnights
        # (Python: 2026-03-29 00:00 and 2026-03-30 00:00 Berlin are 23 hours apart; 10-25/10-26 are 25).
        for day, length in (("2026-03-29", 23), ("2026-10-25", 25)):
            start = datetime.fromisoformat(day).replace(tzinfo=BERLIN)
            end = start + timedelta(days=1)
            c.check((end.timestamp() - start.timestamp()) / 3600 == length, "%s is not %d hours long" % (day, length))
            inside = sum(1 for r in records if start.timestamp() <= epoch(r["ts"]) < end.timestamp())
            c.check(got.get(day, (0,))[0] == inside, "%s: %r records, want %d" % (day, got.get(day), inside))

        rows = json.loads(outputs[("hour", "1")])
        got = {(r["hour"], r["wd"]): r["n"] for r in rows}
        # Intent: New York hour buckets and weekdays are Python's; the repeated 01:00 hour
        # of 2026-11-01 is two groups (-04:00 and -05:00).
        c.check(got == hours, "per New York hour: %d groups, want Python's %d; first differences %r" % (
            len(got), len(hours), sorted(set(got.items()) ^ set(hours.items()))[:4]))
        c.check(("2026-11-01T01:00-04:00", 7) in got and ("2026-11-01T01:00-05:00", 7) in got,
                "the repeated hour is not two groups: %r" % sorted(k for k in got if k[0].startswith("2026-11-01T0")))
        nov1 = [k for k in got if k[0].startswith("2026-11-01")]
        c.check(len(nov1) == 25, "2026-11-01 in New York has %d hour groups, want 25" % len(nov1))

        rows = json.loads(outputs[("quarter", "2")])
        got = {r["q"]: r["n"] for r in rows}
        # Intent: 15-minute buckets of a half-hour zone are Python's.
        c.check(got == quarters, "per Kolkata quarter hour: %d groups, want Python's %d" % (len(got), len(quarters)))
    c.exit()


if __name__ == "__main__":
    main()
