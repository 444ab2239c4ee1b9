"""The refresh benchmark still works: bench/refresh-bench --smoke generates
25 tiny hourly shards, refreshes after one new shard and after an
output-only edit, and checks its own counters (exactly the new shard's bytes
read; no attempt and no byte after the output-only edit) and that every
refresh's result is byte-identical to a --fresh run. Exits non-zero when a
check fails; a missed speed target is only reported.
"""

import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402


def main():
    args = lib.parse_args(__doc__.split("\n")[0])
    checks = lib.Checks("test_refresh_bench_smoke")
    rc, out, err = lib.run_bench_smoke(args, "refresh-bench")
    checks.check(rc == 0, "refresh-bench --smoke exit 0 (got %d):\n%s\n%s" % (rc, lib.tail(out, 3000), lib.tail(err)))
    last = out.strip().splitlines()[-1] if out.strip() else "{}"
    try:
        figures = json.loads(last)
    except ValueError:
        figures = {}
    checks.check(figures.get("checks_failed") == 0 and len(figures.get("refresh_s", [])) == 1,
                 "refresh-bench --smoke's JSON line: %r" % last)
    checks.exit()


if __name__ == "__main__":
    main()
