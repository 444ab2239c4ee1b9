"""The benchmark still works: bench/run-bench --smoke generates tiny data
sets, runs every measurement once (floor, fanfold at several worker counts,
the hand-written Python script, tiny shards, memory, merge_bench) and checks
that fanfold agrees with the Python standard-library script (exact counts,
sums to 1e-9, sketches within their published bounds). Exits non-zero when a
check fails; missed speed targets are only reported.
"""

import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402


def main():
    args = lib.parse_args(__doc__.split("\n")[0])
    checks = lib.Checks("test_bench_smoke")
    rc, out, err = lib.run_bench_smoke(args, "run-bench")
    # A smoke run that passes ends with this line (bench/run-bench).
    checks.check(rc == 0, "run-bench --smoke exit 0 (got %d):\n%s\n%s" % (rc, lib.tail(out, 3000), lib.tail(err)))
    checks.check("smoke: all checks passed" in out, "run-bench --smoke reports all checks passed")
    checks.check("FAIL:" not in out, "no FAIL line in the smoke report")
    checks.exit()


if __name__ == "__main__":
    main()
