"""Golden tests for bad usage and bad job files (tests/golden/).

A case is tests/golden/NAME.expected: the expected exit status on the first
line, then one required stderr substring per line. Its command is either
NAME.args (one argument per line; {golden}, {src} and {tmp} are replaced by
the golden directory, the repository root and a scratch directory) or, when
there is no .args file,
the job file NAME.json, which is then run both as `fanfold check NAME.json`
and as `fanfold run NAME.json -o FILE` and must fail the same way.
"""

import glob
import os
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402


def read_expected(path):
    with open(path) as f:
        lines = [line.rstrip("\n") for line in f]
    return int(lines[0]), [s for s in lines[1:] if s.strip()]


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_cli_golden")
    with lib.Env(args) as env:
        golden = os.path.join(env.src, "tests", "golden")
        cases = sorted(glob.glob(os.path.join(golden, "*.expected")))
        # Intent: the golden set is present (a missing directory must not pass silently).
        checks.check(len(cases) >= 10, "expected at least 10 golden cases in %s, found %d" % (golden, len(cases)))
        for exp_path in cases:
            name = os.path.basename(exp_path)[: -len(".expected")]
            want_rc, needles = read_expected(exp_path)
            args_path = os.path.join(golden, name + ".args")
            runs = []
            if os.path.exists(args_path):
                with open(args_path) as f:
                    argv = [a.rstrip("\n").replace("{golden}", golden).replace("{src}", env.src)
                            .replace("{tmp}", env.tmp)
                            for a in f if a.rstrip("\n") != ""]
                runs.append(argv)
            else:
                job = os.path.join(golden, name + ".json")
                if not checks.check(os.path.exists(job), "%s: neither %s.args nor %s.json exists" % (name, name, name)):
                    continue
                runs.append(["check", job])
                runs.append(["run", job, "-o", env.path(name, "out")])
            for argv in runs:
                label = "%s (fanfold %s)" % (name, argv[0] if argv else "")
                rc, out, err = env.fanfold_run(*argv, timeout=60)
                # Intent: the exit status is the one the spec gives this failure (2 = bad usage/job).
                checks.check(rc == want_rc, "%s: exit %d, want %d; stderr: %s" % (label, rc, want_rc, lib.tail(err, 400)))
                # Intent: the message names the location and what was expected.
                for needle in needles:
                    checks.check(needle in err, "%s: stderr lacks %r; stderr was: %s" % (label, needle, lib.tail(err, 400)))
                # Intent: errors and warnings go to stderr only; stdout carries data, and
                # there is none but the plan of a `check` that passed.
                checks.check(out == "" or (want_rc == 0 and argv[0] == "check"),
                             "%s: stdout not empty: %s" % (label, lib.tail(out, 200)))
    checks.exit()


if __name__ == "__main__":
    main()
