"""Progress and logging on stderr: plain timestamped lines when stderr is not
a terminal (or --progress=plain), a live line redrawn with carriage returns
on a pseudo-terminal (Python's pty module) and erased at the end, NO_COLOR
honoured, --quiet silent, --log-level filtering, and progress never on
stdout.
"""

import fcntl
import os
import pty
import re
import select
import struct
import subprocess
import sys
import termios
import time

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

JOB = {
    "about": "e2e: progress on stderr",
    "inputs": {"files": []},
    "derive": [{"name": "hour", "expr": "period_start(coalesce(time({/ts}), time_ms({/ts_ms})), 'hour')"}],
    "group": ["hour", "{/district}"],
    "measures": [{"name": "n", "fn": "count"}, {"name": "lat", "fn": "quantile", "of": "{/latency_ms}", "at": [0.5]}],
    "emit": {"format": "csv"},
}

PLAIN = re.compile(r"^fanfold: \d{4}-\d\d-\d\dT\d\d:\d\d:\d\dZ progress: (\d+)/(\d+) shards, \S+ records/s, "
                   r"[\d.]+ MB/s, elapsed \d+:\d\d, ETA (\d+:\d\d|--:--), (\d+) failed, (\d+) retried$")


def run_on_pty(argv, env, cols=160, timeout=120):
    """Runs argv with stderr on a pseudo-terminal `cols` wide and stdout on a
    pipe. Returns (exit status, stdout bytes, terminal bytes, seconds)."""
    master, slave = pty.openpty()
    fcntl.ioctl(slave, termios.TIOCSWINSZ, struct.pack("HHHH", 40, cols, 0, 0))
    t0 = time.time()
    p = subprocess.Popen(argv, stdout=subprocess.PIPE, stderr=slave, stdin=subprocess.DEVNULL, env=env)
    os.close(slave)
    term = b""
    out = b""
    fds = {master: "term", p.stdout.fileno(): "out"}
    deadline = time.time() + timeout
    while fds and time.time() < deadline:
        r, _, _ = select.select(list(fds), [], [], 0.2)
        for fd in r:
            try:
                chunk = os.read(fd, 65536)
            except OSError:  # EIO on the pty once the child side is closed
                chunk = b""
            if not chunk:
                del fds[fd]
            elif fds[fd] == "term":
                term += chunk
            else:
                out += chunk
    if fds:
        p.kill()
    p.wait()
    os.close(master)
    return p.returncode, out, term, time.time() - t0


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_progress")
    with lib.Env(args) as env:
        data = os.path.join(env.tmp, "data")
        env.generate(data, "--shards", 24, "--records", 3000, "--seed", 99, "--bad-rate", 0.001)
        job = dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.zst")]})
        job_path = lib.write_job(env.path("job.json"), job)

        # A worker that pauses 0.8 s on one shard makes every run long enough to
        # show progress, however fast the machine (test-only fault injection).
        stall = {"FANFOLD_TEST_ONLY_FAULTS": "inject:stall:shard=5,ms=800"}

        # ---- plain lines on a pipe, every 0.1 s
        os.environ.update(stall)
        try:
            rc, out, err = env.fanfold_run("run", job_path, "-j", 1, "--progress=plain", "--progress-every", "0.1",
                                           "-o", "-")
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
        checks.check(rc == 0, "plain run: exit %d: %s" % (rc, lib.tail(err)))
        plain = [l for l in err.splitlines() if " progress: " in l]
        # Intent: not a TTY + plain: timestamped lines, each in the documented shape.
        checks.check(len(plain) >= 4, "expected at least 4 plain progress lines, got %d: %s" % (len(plain), lib.tail(err)))
        for line in plain:
            checks.check(PLAIN.match(line) is not None, "plain progress line has an unexpected shape: %r" % line)
        # Intent: the last line (written at the end) says every shard is done.
        m = PLAIN.match(plain[-1]) if plain else None
        checks.check(m is not None and m.group(1) == m.group(2) == "24",
                     "last progress line should read 24/24 shards: %r" % (plain[-1] if plain else None))
        # Intent: shard counts never go down from line to line.
        done = [int(PLAIN.match(l).group(1)) for l in plain if PLAIN.match(l)]
        checks.check(done == sorted(done), "progress went backwards: %s" % done)
        # Intent: no carriage returns (no live line) and no colour off a terminal.
        checks.check("\r" not in err and "\x1b[" not in err, "plain stderr holds \\r or escape codes")
        # Intent: progress never goes to stdout, which carries the CSV result only.
        checks.check("progress" not in out and out.startswith("hour,district,n,lat_p50"),
                     "stdout is not just the CSV: %s" % lib.tail(out, 300))
        # Intent: the existing summary notes keep their text.
        checks.check("24 of 24 shards done" in err and " malformed" in err, "summary line missing: %s" % lib.tail(err))

        # ---- default (auto) on a pipe: plain, every 5 s, so a short run prints none
        rc, out, err = env.fanfold_run("run", job_path, "-j", 2, "-o", env.path("auto.csv"))
        checks.check(rc == 0 and "\r" not in err, "auto run on a pipe: exit %d or a live line: %r" % (rc, err[-300:]))

        # ---- --quiet: nothing on stderr
        rc, out, err = env.fanfold_run("run", job_path, "-j", 2, "--quiet", "-o", env.path("q.csv"))
        checks.check(rc == 0 and err == "", "--quiet run wrote to stderr (exit %d): %r" % (rc, err[:300]))

        # ---- --log-level
        rc, out, err = env.fanfold_run("run", job_path, "-j", 2, "--log-level", "warning", "-o", env.path("w.csv"))
        # Intent: warning level drops the info notes (summary, run directory).
        checks.check(rc == 0 and "shards done" not in err, "--log-level warning still shows notes: %s" % lib.tail(err))
        rc, out, err = env.fanfold_run("run", job_path, "-j", 2, "--log-level", "debug", "-o", env.path("d.csv"))
        checks.check(rc == 0 and re.search(r"fanfold: debug: shard \d+ attempt 1 on worker \d: done after", err),
                     "--log-level debug shows no per-attempt lines: %s" % lib.tail(err))
        rc, out, err = env.fanfold_run("run", job_path, "--log-level", "loud")
        checks.check(rc == 2 and "--log-level" in err and "loud" in err, "bad --log-level: exit %d: %s" % (rc, err))
        rc, out, err = env.fanfold_run("run", job_path, "--progress", "sometimes")
        checks.check(rc == 2 and "--progress" in err and "sometimes" in err, "bad --progress: exit %d: %s" % (rc, err))

        # ---- a pseudo-terminal: the live line
        base_env = dict(os.environ, TERM="xterm", **stall)
        base_env.pop("NO_COLOR", None)
        argv = [env.fanfold, "run", job_path, "-j", "1", "--run-dir", env.path("runs", "pty1"), "-o", "-"]
        rc, out, term, secs = run_on_pty(argv, base_env)
        # The terminal turns each "\n" into "\r\n" (onlcr); undo that to see fanfold's own "\r"s.
        text = term.decode("utf-8", "replace").replace("\r\n", "\n")
        checks.check(rc == 0, "pty run: exit %d: %s" % (rc, lib.tail(text)))
        redraws = text.count("\r[")
        # Intent: the live line is redrawn in place (carriage return, no newline) more than once.
        checks.check(redraws >= 3, "expected >= 3 live redraws on the terminal in %.1f s, saw %d: %r"
                     % (secs, redraws, text[:400]))
        # Intent: at most four redraws a second (plus the first draw).
        checks.check(redraws <= 4 * secs + 2, "%d redraws in %.1f s: more than four a second" % (redraws, secs))
        checks.check("shards" in text and "rec/s" in text and "MB/s" in text and "ETA" in text, "live line lacks its fields: %r" % text[:300])
        # Intent: the line is erased before the summary: a \r, spaces, \r right before the first note after it.
        tail = text[text.rfind("\r["):]
        erased = re.search(r"\r +\r", tail)
        checks.check(erased is not None and "shards done" in tail[erased.end():] and "\r[" not in tail[1:],
                     "live line not erased before the summary: %r" % tail[-400:])
        # Intent: colour on a terminal without NO_COLOR (the bar in blue), and none on stdout.
        checks.check("\x1b[34m" in text, "no colour on a colour terminal: %r" % text[:200])
        checks.check(b"\r" not in out and out.startswith(b"hour,district"), "stdout polluted on a pty run: %r" % out[:200])

        no_color = dict(base_env, NO_COLOR="1")
        argv[argv.index("--run-dir") + 1] = env.path("runs", "pty2")
        rc, out, term, secs = run_on_pty(argv, no_color, cols=80)
        text = term.decode("utf-8", "replace").replace("\r\n", "\n")
        # Intent: NO_COLOR (no-color.org) removes every escape sequence; the live line stays.
        checks.check(rc == 0 and "\x1b[" not in text and "\r" in text, "NO_COLOR run: exit %d, escapes or no live line: %r"
                     % (rc, text[:300]))
        # Intent: on 80 columns every drawn line fits in 79 (a wrapped line cannot be redrawn) and keeps its ETA.
        live = [seg for seg in re.split(r"[\r\n]", text) if " shards  " in seg]
        checks.check(live and all(len(seg) <= 79 and "ETA" in seg for seg in live),
                     "live lines on 80 columns: %r" % live[:3])

        argv[argv.index("--run-dir") + 1] = env.path("runs", "pty3")
        rc, out, term, secs = run_on_pty(argv + ["--quiet"], base_env)
        # Intent: --quiet on a terminal: no live line either.
        checks.check(rc == 0 and term.strip() == b"", "--quiet on a pty wrote: %r" % term[:300])
    checks.exit()


if __name__ == "__main__":
    main()
