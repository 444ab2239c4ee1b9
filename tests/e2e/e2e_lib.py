"""Shared helpers of the end-to-end tests: arguments, a scratch directory,
running the real binaries with a timeout, reading their output and stderr
summary, and comparing result rows with reference.py's expectations.

Each test script is run by CTest as
    python3 tests/e2e/test_x.py --bin-dir DIR --source-dir REPO
and exits 0 on success, 1 with a list of failed checks otherwise.
"""

import argparse
import json
import csv
import io
import math
import os
import re
import shutil
import subprocess
import sys
import tempfile

import reference as ref


def parse_args(description):
    p = argparse.ArgumentParser(description=description)
    p.add_argument("--bin-dir", required=True, help="directory with fanfold, fanfold-worker, fanfold-gen")
    p.add_argument("--source-dir", required=True, help="repository root")
    p.add_argument("--keep", action="store_true", help="keep the scratch directory")
    p.add_argument("-j", "--workers", type=int, default=2, help="worker count for fanfold run")
    return p.parse_args()


class Checks:
    """Collects failed checks so that one run reports all of them."""

    def __init__(self, name):
        self.name = name
        self.failures = []
        self.passed = 0

    def check(self, ok, what):
        if ok:
            self.passed += 1
        else:
            self.failures.append(what)
            print("FAIL: " + what, file=sys.stderr)
        return ok

    def fail(self, what):
        return self.check(False, what)

    def exit(self):
        if self.failures:
            print("%s: %d check(s) failed, %d passed" % (self.name, len(self.failures), self.passed),
                  file=sys.stderr)
            sys.exit(1)
        print("%s: all %d checks passed" % (self.name, self.passed))
        sys.exit(0)


class Env:
    """Paths of the binaries and a scratch directory removed at the end."""

    def __init__(self, args):
        self.args = args
        self.bin_dir = os.path.abspath(args.bin_dir)
        self.src = os.path.abspath(args.source_dir)
        self.fanfold = os.path.join(self.bin_dir, "fanfold")
        self.gen = os.path.join(self.bin_dir, "fanfold-gen")
        self.tmp = tempfile.mkdtemp(prefix="fanfold-e2e-")

    def __enter__(self):
        for b in (self.fanfold, self.gen):
            if not os.access(b, os.X_OK):
                print("FAIL: binary not found or not executable: %s" % b, file=sys.stderr)
                sys.exit(1)
        return self

    def __exit__(self, *exc):
        if self.args.keep:
            print("scratch directory kept: " + self.tmp, file=sys.stderr)
        else:
            shutil.rmtree(self.tmp, ignore_errors=True)
        return False

    def path(self, *parts):
        p = os.path.join(self.tmp, *parts)
        os.makedirs(os.path.dirname(p), exist_ok=True)
        return p

    def run(self, argv, timeout=300, cwd=None):
        """Runs argv; returns (exit status, stdout text, stderr text).
        A hang is reported as status -9 with a note on stderr."""
        try:
            done = subprocess.run(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE,
                                  timeout=timeout, cwd=cwd or self.tmp)
        except subprocess.TimeoutExpired as e:
            return -9, (e.stdout or b"").decode("utf-8", "replace"), \
                (e.stderr or b"").decode("utf-8", "replace") + "\n[timed out after %ds]" % timeout
        return done.returncode, done.stdout.decode("utf-8", "replace"), done.stderr.decode("utf-8", "replace")

    def fanfold_run(self, *argv, timeout=300):
        argv = [str(a) for a in argv]
        # Each `run` gets its own run directory unless the test names one, so
        # that running a job twice is never refused as "already run".
        if argv and argv[0] == "run" and "--run-dir" not in argv:
            self._runs = getattr(self, "_runs", 0) + 1
            argv += ["--run-dir", os.path.join(self.tmp, "runs", "r%d" % self._runs)]
        return self.run([self.fanfold] + argv, timeout=timeout)

    def generate(self, out_dir, *flags):
        """Runs fanfold-gen; returns its manifest (dict). Exits the test on failure."""
        rc, _, err = self.run([self.gen, "--out", out_dir] + [str(f) for f in flags], timeout=300)
        if rc != 0:
            print("FAIL: fanfold-gen exited %d: %s" % (rc, err), file=sys.stderr)
            sys.exit(1)
        with open(os.path.join(out_dir, "manifest.json")) as f:
            return json.load(f)


def leaked_segments():
    """fanfold segments in /dev/shm whose owner (the pid in the name) is dead:
    leaks. Segments of live coordinators (other tests running in parallel)
    are not ours to judge."""
    out = []
    for f in os.listdir("/dev/shm"):
        parts = f.split("-")
        if f.startswith("fanfold-") and len(parts) >= 3 and parts[1].isdigit():
            # The owner is checked after the listing, so a coordinator of a
            # parallel test may have removed its segment and exited in
            # between: only a segment still there once its owner is gone is
            # a leak (coordinators remove theirs before they exit).
            if not os.path.exists("/proc/" + parts[1]) and os.path.exists(os.path.join("/dev/shm", f)):
                out.append(f)
    return sorted(out)


def child_pids(pid):
    """The pids of pid's children (Linux /proc), [] once it is gone."""
    try:
        with open("/proc/%d/task/%d/children" % (pid, pid)) as f:
            return [int(x) for x in f.read().split()]
    except OSError:
        return []


def worker_pids(pid):
    """The pids of pid's children that run fanfold-worker (by /proc/PID/cmdline). Not every child
    is a worker: under AddressSanitizer the exit-time leak check clones a tracer that a test must
    not kill (LeakSanitizer then waits for it forever)."""
    out = []
    for k in child_pids(pid):
        try:
            with open("/proc/%d/cmdline" % k, "rb") as f:
                argv0 = f.read().split(b"\0")[0]
        except OSError:
            continue
        if os.path.basename(argv0) == b"fanfold-worker":
            out.append(k)
    return out


def process_alive(pid):
    """True iff pid exists and is not a zombie (Linux /proc)."""
    try:
        with open("/proc/%d/stat" % pid) as f:
            return f.read().split()[2] != "Z"
    except OSError:
        return False


def signal_at_output_stage(p, sig, timeout=300):
    """Reads a `fanfold run --log-level debug` process's stderr and sends it
    sig once its log says the output stage starts; waits for it. Returns
    (whether sig was sent, exit code)."""
    sent = False
    for line in p.stderr:
        if not sent and b"before the output stage" in line:
            p.send_signal(sig)
            sent = True
    return sent, p.wait(timeout=timeout)


def run_bench_smoke(args, script_name):
    """Runs bench/SCRIPT_NAME --smoke against args' build; returns (exit status, stdout, stderr),
    exit status -9 after 300 s."""
    script = os.path.join(os.path.abspath(args.source_dir), "bench", script_name)
    argv = [sys.executable, script, "--smoke", "--bin-dir", os.path.abspath(args.bin_dir)]
    try:
        done = subprocess.run(argv, stdout=subprocess.PIPE, stderr=subprocess.PIPE, timeout=300)
        return done.returncode, done.stdout.decode("utf-8", "replace"), done.stderr.decode("utf-8", "replace")
    except subprocess.TimeoutExpired:
        return -9, "", "timed out after 300 s"


def write_job(path, job):
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "w") as f:
        json.dump(job, f, indent=2)
    return path


def tail(text, n=1500):
    return text if len(text) <= n else "..." + text[-n:]


# ---------------------------------------------------------------- output

def read_rows(path, fmt):
    """Rows of a result file as a list of dicts. JSON/NDJSON keep types; CSV
    cells are parsed back (empty = None, numbers as float, top lists from
    their compact JSON text)."""
    with open(path, "rb") as f:
        data = f.read().decode("utf-8")
    if fmt == "json":
        return json.loads(data)
    if fmt == "ndjson":
        return [json.loads(line) for line in data.splitlines() if line.strip()]
    if fmt == "csv":
        rows = []
        reader = csv.DictReader(io.StringIO(data, newline=""))
        for r in reader:
            row = {}
            for k, v in r.items():
                if v == "":
                    row[k] = None
                elif v.startswith("["):
                    row[k] = json.loads(v)
                else:
                    n = ref.num(v)
                    row[k] = n if n is not None else v
            rows.append(row)
        return rows
    raise ValueError("cannot read output format %r" % fmt)


# "166 malformed" first; "malformed: 166" only where no count precedes the word.
_MALFORMED_PATTERNS = [
    re.compile(r"(\d[\d,_]*)\s+malformed", re.I),
    re.compile(r"malformed[ :=]+(\d[\d,_]*)", re.I),
]


def summary_malformed_total(stderr):
    """The run's total malformed-record count as printed in the stderr
    summary, or None if no line mentions one. Takes the last line that
    mentions "malformed" with a number and does not name a shard file
    (assumed: the summary's total line comes last)."""
    found = None
    for line in stderr.splitlines():
        if re.search(r"\.(ndjson|jsonl|csv|tsv)(\.zst|\.gz)?\b", line):
            continue
        for pat in _MALFORMED_PATTERNS:
            m = pat.search(line)
            if m:
                found = int(re.sub(r"[,_]", "", m.group(1)))
                break
    return found


# ---------------------------------------------------------------- comparing

def rel_close(a, b, rel):
    if a == b:
        return True
    return abs(a - b) <= rel * max(abs(a), abs(b))


def key_of(row, group_columns):
    out = []
    for c in group_columns:
        v = row.get(c)
        if isinstance(v, (int, float)) and not isinstance(v, bool):
            v = float(v)
        out.append(v)
    return tuple(out)


def norm_key(key):
    return tuple(float(v) if isinstance(v, (int, float)) and not isinstance(v, bool) else v for v in key)


def compare_cell(checks, where, fn, actual, expected):
    """One output cell against the reference, with the tolerance of its fn."""
    if isinstance(expected, tuple) and expected and expected[0] == "ddsketch":
        _, lo, hi, alpha = expected
        # DDSketch (Masson et al. 2019): relative error <= alpha against a data
        # value at the requested rank; lo/hi bracket that rank.
        ok = isinstance(actual, (int, float)) and (
            min(lo * (1 - alpha), lo * (1 + alpha)) - 1e-12 <= actual <= max(hi * (1 + alpha), hi * (1 - alpha)) + 1e-12)
        return checks.check(ok, "%s: ddsketch %r outside [%r, %r] widened by alpha %r"
                            % (where, actual, lo, hi, alpha))
    if isinstance(expected, tuple) and expected and expected[0] == "hyperloglog":
        _, exact, p = expected
        # HyperLogLog (Flajolet et al. 2007): standard error 1.04/sqrt(2^p); allow 4 of them.
        bound = 4 * 1.04 / math.sqrt(2 ** p) * exact
        ok = isinstance(actual, (int, float)) and abs(actual - exact) <= max(bound, 0.5)
        return checks.check(ok, "%s: hyperloglog %r vs exact %d (4 SE = %.2f)" % (where, actual, exact, bound))
    if isinstance(expected, tuple) and expected and expected[0] == "top":
        _, counts, k = expected
        return compare_top(checks, where, actual, counts, k)
    if fn in ("count", "count_present", "distinct"):
        # exact integers (Python len/Counter reference)
        return checks.check(isinstance(actual, (int, float)) and actual == expected,
                            "%s: %s %r, reference %r" % (where, fn, actual, expected))
    if fn in ("at_lowest", "at_highest"):
        return checks.check(actual == expected, "%s: %s %r, reference %r" % (where, fn, actual, expected))
    if expected is None:
        # An empty numeric group: null (sum may also read 0).
        ok = actual is None or (fn == "sum" and actual == 0)
        return checks.check(ok, "%s: %s %r, reference has no values" % (where, fn, actual))
    if not isinstance(actual, (int, float)) or isinstance(actual, bool):
        return checks.fail("%s: %s %r is not a number (reference %r)" % (where, fn, actual, expected))
    if fn in ("min", "max"):
        # exact: the chosen value is one of the inputs
        return checks.check(actual == expected, "%s: %s %r, reference %r" % (where, fn, actual, expected))
    if fn == "quantile":
        # Type 7 per statistics.quantiles(method='inclusive'); the two formulas
        # round differently in the last bits, so 1e-12 relative.
        return checks.check(rel_close(actual, expected, 1e-12),
                            "%s: quantile %r, type-7 reference %r" % (where, actual, expected))
    # sum vs math.fsum, mean/variance/stddev vs statistics: 1e-9 relative.
    return checks.check(rel_close(actual, expected, 1e-9),
                        "%s: %s %r, reference %r" % (where, fn, actual, expected))


def compare_top(checks, where, actual, counts, k):
    """top: k (value, count) pairs, counts exact (collections.Counter), in
    descending count order, and no omitted value counted more often."""
    if not isinstance(actual, list):
        return checks.fail("%s: top is %r, expected a list" % (where, actual))
    want = min(k, len(counts))
    ok = len(actual) == want
    prev = None
    for item in actual:
        if not isinstance(item, dict) or "value" not in item or "count" not in item:
            return checks.fail("%s: top item %r lacks value/count" % (where, item))
        ok &= counts.get(item["value"]) == item["count"]
        ok &= prev is None or prev >= item["count"]
        prev = item["count"]
    if actual and len(actual) == want:
        listed = {item["value"] for item in actual}
        smallest = min(item["count"] for item in actual)
        ok &= all(c <= smallest for v, c in counts.items() if v not in listed)
    return checks.check(ok, "%s: top %r vs Counter.most_common %r" % (where, actual, counts.most_common(k + 2)))


def compare_results(checks, label, rows, expected, job, order=None, limit=None):
    """Checks rows (fanfold output) against reference.evaluate() output:
    the same groups (or the expected first `limit` in order), in order, and
    every measure column within its tolerance."""
    group_columns = job.group_columns()
    expected = {norm_key(k): v for k, v in expected.items()}
    want_keys = ref.order_rows(expected, group_columns, order, limit)
    got_keys = [key_of(r, group_columns) for r in rows]
    checks.check(got_keys == want_keys,
                 "%s: group keys/order differ: got %d rows, reference %d; first differences: %s"
                 % (label, len(got_keys), len(want_keys), _first_diffs(got_keys, want_keys)))
    for row in rows:
        key = key_of(row, group_columns)
        exp = expected.get(key)
        if exp is None:
            continue
        for m in job.measures:
            for c in m.columns():
                if c not in row:
                    checks.fail("%s %r: output has no column %r (has %s)" % (label, key, c, sorted(row)))
                    continue
                compare_cell(checks, "%s %r %s" % (label, key, c), m.fn, row[c], exp[c])


def _first_diffs(a, b, n=3):
    out = []
    for i in range(max(len(a), len(b))):
        x = a[i] if i < len(a) else "<none>"
        y = b[i] if i < len(b) else "<none>"
        if x != y:
            out.append("#%d got %r want %r" % (i, x, y))
            if len(out) >= n:
                break
    return "; ".join(out) or "none"
