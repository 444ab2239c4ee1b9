"""The HTML report in a real browser: headless Chromium (Debian package
`chromium`) loads the page from `fanfold report`, takes a screenshot and
dumps the DOM after its script ran. Checked: no console message and no
uncaught error (Chromium's own log, and an error hook injected into a copy
of the page), the page's script finished (data-ready), no two chart labels
overlap and no failed attempt's bar is thinner than 5 px as laid out, one timeline bar per
shard attempt of the journal (failed and retried ones included), the
summary numbers equal summary.json, and nothing is fetched from outside.
Chromium missing is a failure, not a skip: CI installs it (.ci/install-deps).
"""

import html.parser
import json
import os
import re
import shutil
import subprocess
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

JOB = {
    "about": "e2e: report in a browser",
    "inputs": {"files": []},
    "derive": [{"name": "hour", "expr": "period_start(coalesce(time({/ts}), time_ms({/ts_ms})), 'hour')"}],
    "group": ["hour", "{/district}"],
    "measures": [{"name": "n", "fn": "count"}, {"name": "watts", "fn": "mean", "of": "{/power_w}"}],
    "emit": {"format": "json"},
}
SHARDS = 24
TRUNCATED = 6  # fails: its zstd frame is cut in half
CRASHED = 9    # its worker is killed on the first attempt; the retry succeeds

# Records errors and console output into the document, where --dump-dom shows them.
HOOK = """<script>(function(){var d=document.documentElement;function note(k,m){d.setAttribute(k,(d.getAttribute(k)||'')+m+';');}
window.addEventListener('error',function(e){note('data-test-errors',e.message||'error');},true);
window.addEventListener('unhandledrejection',function(e){note('data-test-errors','rejection');});
['error','warn','log'].forEach(function(f){var o=console[f];console[f]=function(){note('data-test-console',f);return o.apply(console,arguments);};});
window.addEventListener('load',function(){var n=0;document.querySelectorAll('svg').forEach(function(svg){
var t=Array.prototype.slice.call(svg.querySelectorAll('text.marker-label,text.series-label,text.point-label'));
var r=t.map(function(e){return e.getBoundingClientRect();});
for(var i=0;i<r.length;i++)for(var j=i+1;j<r.length;j++){var a=r[i],b=r[j];
if(a.left<b.right&&b.left<a.right&&a.top<b.bottom&&b.top<a.bottom)note('data-test-overlaps',t[i].textContent+' / '+t[j].textContent);}
var f=svg.querySelectorAll('rect.bar.failed,rect.bar.died,rect.bar.timed-out,rect.bar.rejected');
f.forEach(function(e){var b=e.getBoundingClientRect();if(b.width<5)note('data-test-thin',e.getAttribute('data-attempt')+':'+b.width);});
n+=t.length;});d.setAttribute('data-test-labels',n);});})();</script>"""

CHROMIUM_FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
                  "--disable-background-networking", "--disable-component-update", "--disable-sync",
                  "--hide-scrollbars", "--enable-logging=stderr", "--v=0"]


class DomScan(html.parser.HTMLParser):
    """Collects data-attempt ids, data-summary values/texts and the root's attributes."""

    def __init__(self):
        super().__init__()
        self.attempts = []
        self.summary = {}
        self.root = {}
        self.external = []
        self._open = None

    def handle_starttag(self, tag, attrs):
        a = dict(attrs)
        if tag == "html":
            self.root = a
        if "data-attempt" in a:
            self.attempts.append((a["data-attempt"], a.get("data-outcome")))
        for k in ("src", "href"):
            if k in a and not a[k].startswith("#"):
                self.external.append((tag, a[k]))
        if "data-summary" in a:
            self._open = [a["data-summary"], a.get("data-value"), ""]

    def handle_data(self, data):
        if self._open is not None:
            self._open[2] += data

    def handle_endtag(self, tag):
        if self._open is not None and tag == "span":
            key, value, text = self._open
            self.summary[key] = (value, text.strip())
            self._open = None


def chromium(env, args, timeout=120):
    """Runs Chromium with a fresh profile; returns (exit status, stdout, stderr)."""
    profile = env.path("chromium-profile-%d" % len(os.listdir(env.tmp)), "x")
    profile = os.path.dirname(profile)
    shutil.rmtree(profile, ignore_errors=True)
    os.makedirs(profile)
    binary = shutil.which("chromium") or shutil.which("chromium-browser")
    return env.run([binary] + CHROMIUM_FLAGS + ["--user-data-dir=" + profile] + args, timeout=timeout)


def summary_value(summary, key):
    v = summary
    for part in key.split("."):
        v = v[part]
    return v


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_report_browser")
    with lib.Env(args) as env:
        # Intent: the browser is there (CI installs it; a missing one must not pass as a skip).
        if not checks.check(shutil.which("chromium") or shutil.which("chromium-browser"),
                            "chromium is not installed (Debian package 'chromium'; .ci/install-deps installs it)"):
            checks.exit()
        data = os.path.join(env.tmp, "data")
        env.generate(data, "--shards", SHARDS, "--records", 1500, "--seed", 17, "--bad-rate", 0.004, "--spread", 0.7)
        files = sorted(os.path.join(data, f) for f in os.listdir(data) if f.endswith(".ndjson.zst"))
        with open(files[TRUNCATED], "r+b") as f:
            f.truncate(os.path.getsize(files[TRUNCATED]) // 2)
        job_path = lib.write_job(env.path("job.json"), dict(JOB, inputs={"files": [os.path.join(data, "*.ndjson.zst")]}))
        run_dir = env.path("runs", "b")
        os.environ["FANFOLD_TEST_ONLY_FAULTS"] = "inject:crash:shard=%d,attempt=1,after=20" % CRASHED
        try:
            rc, _, err = env.fanfold_run("run", job_path, "-j", 2, "--run-dir", run_dir, "-o", env.path("out.json"))
        finally:
            del os.environ["FANFOLD_TEST_ONLY_FAULTS"]
        checks.check(rc == 1, "run with a truncated shard: exit %d, want 1: %s" % (rc, lib.tail(err)))
        page = env.path("report.html")
        rc, out, err = env.fanfold_run("report", run_dir, "-o", page)
        if not checks.check(rc == 0 and os.path.exists(page), "report: exit %d: %s" % (rc, lib.tail(err))):
            checks.exit()
        with open(page, encoding="utf-8") as f:
            source = f.read()
        with open(os.path.join(run_dir, "summary.json")) as f:
            summary = json.load(f)
        with open(os.path.join(run_dir, "journal.ndjson")) as f:
            journal = [json.loads(l) for l in f if l.strip()]
        want = sorted("%d.%d" % (e["shard"], e["attempt"]) for e in journal if e["event"] == "attempt")
        # Harness sanity: the journal holds the failure and the retry this test set up.
        checks.check(len(want) == SHARDS + 1 and "%d.2" % CRASHED in want,
                     "journal attempts %d (want %d) or no retry of shard %d" % (len(want), SHARDS + 1, CRASHED))

        # ---- screenshot, with Chromium's log on stderr
        shot = env.path("report.png")
        rc, _, log = chromium(env, ["--screenshot=" + shot, "--window-size=1400,2000", "file://" + page])
        checks.check(rc == 0, "chromium --screenshot exited %d: %s" % (rc, lib.tail(log)))
        ok_png = os.path.exists(shot) and open(shot, "rb").read(8) == b"\x89PNG\r\n\x1a\n"
        # Intent: a real picture came out (a blank 1400x2000 PNG compresses to a few KB).
        checks.check(ok_png and os.path.getsize(shot) > 30000, "screenshot missing or nearly empty: %s"
                     % (os.path.getsize(shot) if os.path.exists(shot) else "none"))
        # Intent: no console message or uncaught error from the page (Chromium logs them as CONSOLE lines).
        bad = [l for l in log.splitlines() if "CONSOLE" in l or "Uncaught" in l]
        checks.check(not bad, "console output while loading the report: %s" % bad[:5])

        # ---- DOM after the page's script ran, from a copy with an error hook
        hooked = env.path("hooked.html")
        with open(hooked, "w", encoding="utf-8") as f:
            f.write(source.replace("<head>", "<head>" + HOOK, 1))
        rc, dom, log = chromium(env, ["--dump-dom", "--window-size=1400,2000", "file://" + hooked])
        checks.check(rc == 0 and "<html" in dom, "chromium --dump-dom exited %d: %s" % (rc, lib.tail(log)))
        scan = DomScan()
        scan.feed(dom)
        # Intent: the hook saw no error and no console call, and the page's own script ran to its end.
        checks.check("data-test-errors" not in scan.root, "page errors: %r" % scan.root.get("data-test-errors"))
        checks.check("data-test-console" not in scan.root, "console calls: %r" % scan.root.get("data-test-console"))
        checks.check(scan.root.get("data-ready") == "1", "the page's script did not finish (no data-ready)")
        # Intent: no two chart labels overlap as the browser lays them out (real fonts), and every bar of an
        # attempt that did not finish its shard is at least 5 px wide on screen.
        checks.check(int(scan.root.get("data-test-labels", "0")) >= 2, "no chart labels found: %r" % scan.root.get("data-test-labels"))
        checks.check("data-test-overlaps" not in scan.root, "overlapping chart labels: %r" % scan.root.get("data-test-overlaps"))
        checks.check("data-test-thin" not in scan.root, "failed or retried bars too thin to see: %r" % scan.root.get("data-test-thin"))
        # Intent: one timeline bar per journal attempt, no more, no less, with the outcomes marked.
        got = sorted(a for a, _ in scan.attempts)
        checks.check(got == want, "timeline bars %d vs journal attempts %d; only in page %s, only in journal %s"
                     % (len(got), len(want), sorted(set(got) - set(want))[:5], sorted(set(want) - set(got))[:5]))
        outcomes = dict(scan.attempts)
        checks.check(outcomes.get("%d.1" % CRASHED) == "died" and outcomes.get("%d.1" % TRUNCATED) == "failed",
                     "outcomes of the crashed/truncated shards: %r / %r"
                     % (outcomes.get("%d.1" % CRASHED), outcomes.get("%d.1" % TRUNCATED)))
        # Intent: every summary number on the page equals summary.json (value and visible text).
        keys = ["shards.total", "shards.done", "shards.failed", "shards.reused", "shards.retries", "records.read",
                "records.kept", "records.malformed", "bytes.compressed", "bytes.decompressed", "wall_seconds", "workers"]
        for key in keys:
            if not checks.check(key in scan.summary, "summary number %s missing from the page" % key):
                continue
            raw, text = scan.summary[key]
            want_v = summary_value(summary, key)
            if key == "wall_seconds":
                checks.check(abs(float(raw) - want_v) <= 1e-9 * max(1, want_v) and text == "%.2f s" % want_v,
                             "wall_seconds on the page %r / %r, summary.json %r" % (raw, text, want_v))
            elif key.startswith("bytes."):
                checks.check(int(raw) == want_v and text == "%.1f MB" % (want_v / 1e6),
                             "%s on the page %r / %r, summary.json %r" % (key, raw, text, want_v))
            else:
                checks.check(int(raw) == want_v and text == format(want_v, ","),
                             "%s on the page %r / %r, summary.json %r" % (key, raw, text, want_v))
        checks.check(summary["shards"]["failed"] == 1 and summary["shards"]["retries"] == 1,
                     "summary.json: failed %r retries %r (want 1 and 1)" % (summary["shards"]["failed"], summary["shards"]["retries"]))
        # Intent: self-contained — nothing to fetch (no src/href but in-page anchors, no @import, no url(http...)).
        checks.check(not scan.external and "@import" not in source and not re.search(r"url\(\s*['\"]?https?:", source),
                     "external references: %s" % scan.external[:5])
        # Intent: the failed shard is named with its reason.
        checks.check(os.path.basename(files[TRUNCATED]) in source and "truncated" in source,
                     "the failed shard or its reason is missing from the page")
    checks.exit()


if __name__ == "__main__":
    main()
