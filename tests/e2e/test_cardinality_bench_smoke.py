"""The cardinality benchmark still works: bench/cardinality-bench --quick
generates tiny tagged data sets, runs each grouped by 100 lamps and by many
tags at -j 1 and -j 2, and checks its own results (exactly 100 lamp groups,
the same bytes at every worker count). Exits non-zero when a check fails; a
missed target is only reported.
"""

import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402


def main():
    args = lib.parse_args(__doc__.split("\n")[0])
    checks = lib.Checks("test_cardinality_bench_smoke")
    rc, out, err = lib.run_bench_smoke(args, "cardinality-bench")
    checks.check(rc == 0, "cardinality-bench --quick exit 0 (got %d):\n%s\n%s" % (rc, lib.tail(out, 3000), lib.tail(err)))
    last = out.strip().splitlines()[-1] if out.strip() else "{}"
    try:
        figures = json.loads(last)
    except ValueError:
        figures = {}
    rows = figures.get("rows", [])
    checks.check(figures.get("checks_failed") == 0 and {r["row"] for r in rows} == {"issue", "1m", "10m"},
                 "cardinality-bench --quick's JSON line: %r" % last[:500])
    # Intent: the many-key runs really have many groups (more than the 100-key runs' 100).
    checks.check(all(r["groups"] > 10000 for r in rows), "a many-key row has few groups: %r" % rows)
    checks.exit()


if __name__ == "__main__":
    main()
