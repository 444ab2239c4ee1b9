"""top past its limit: the run says its counts became lower bounds instead of
staying silent (stderr warning and summary.json "inexact_groups"), and within
the limit it is exact — checked against collections.Counter (Python stdlib).
"""

import collections
import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_top_limit")
    with lib.Env(args) as env:
        data = env.path("data")
        env.generate(data, "--shards", 6, "--records", 400, "--seed", 19, "--compress", "none", "--bad-rate", 0)
        counter = collections.Counter()
        for name in sorted(os.listdir(data)):
            if name.endswith(".ndjson"):
                with open(os.path.join(data, name)) as f:
                    for line in f:
                        counter[json.loads(line)["event"]] += 1
        kinds = len(counter)
        for limit, expect_warning in ((kinds, False), (2, True)):
            job = lib.write_job(env.path("job%d.json" % limit), {
                "inputs": {"files": ["data/*.ndjson"]},
                "measures": [{"name": "ev", "fn": "top", "of": "{/event}", "k": 2, "limit": max(limit, 2)}],
                "emit": {"format": "json"},
            })
            rd = env.path("runs", "l%d" % limit)
            out = env.path("out%d.json" % limit)
            rc, _, err = env.fanfold_run("run", job, "-o", out, "--run-dir", rd)
            c.check(rc == 0, "limit %d: exit 0: %s" % (limit, lib.tail(err)))
            warned = "its counts there are lower bounds" in err
            c.check(warned == expect_warning, "limit %d: warning %s" % (limit, "shown" if expect_warning else "absent"))
            with open(os.path.join(rd, "summary.json")) as f:
                inexact = json.load(f).get("inexact_groups", {})
            c.check(("ev" in inexact) == expect_warning, "limit %d: summary inexact_groups %s" % (limit, inexact))
            if not expect_warning:
                with open(out) as f:
                    got = [(r["value"], r["count"]) for r in json.load(f)[0]["ev"]]
                # Reference: collections.Counter, ties by value ascending as docs/measures.md says.
                want = sorted(counter.items(), key=lambda kv: (-kv[1], kv[0]))[:2]
                c.check(got == want, "within the limit top equals Counter: %s vs %s" % (got, want))
    c.exit()


if __name__ == "__main__":
    main()
