"""Byte-identical results whatever the worker count and dispatch order.

Every job in jobs/ and a generated set of 300 shards run at -j 1, 2, 3 and 8
and with the test-only dispatch switch (reverse, shuffled); every output must
be byte-identical to the -j 1 output. The in-process transport (no worker
processes) must agree too. Also checks that no shared-memory segment of ours
is left in /dev/shm afterwards and that chunked uncompressed files give the
same answer as the whole file.
"""

import glob
import json
import os
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402




def outputs_for(env, checks, job, name, variants):
    """Runs job under each (label, argv extra, env extra); returns {label: bytes}."""
    outs = {}
    for label, extra, env_extra in variants:
        old = {k: os.environ.get(k) for k in env_extra}
        os.environ.update(env_extra)
        try:
            # stdout holds every result (a job of several reductions: each under its title).
            rc, out, err = env.fanfold_run("run", job, "-q", "-o", "-", *extra, timeout=300)
        finally:
            for k, v in old.items():
                if v is None:
                    os.environ.pop(k, None)
                else:
                    os.environ[k] = v
        if checks.check(rc == 0, "%s %s: exit 0 (got %d): %s" % (name, label, rc, lib.tail(err))):
            outs[label] = out.encode("utf-8")
    return outs


VARIANTS = [
    ("j1", ["-j", "1"], {}),
    ("j2", ["-j", "2"], {}),
    ("j3", ["-j", "3"], {}),
    ("j8", ["-j", "8"], {}),
    ("reverse-j3", ["-j", "3"], {"FANFOLD_TEST_ONLY_DISPATCH": "reverse"}),
    ("shuffle-j2", ["-j", "2"], {"FANFOLD_TEST_ONLY_DISPATCH": "shuffle:12345"}),
    ("shuffle-j8", ["-j", "8"], {"FANFOLD_TEST_ONLY_DISPATCH": "shuffle:99"}),
    ("in-process", ["--in-process"], {}),
]


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_determinism")
    with lib.Env(args) as env:
        before = lib.leaked_segments()
        jobs = sorted(glob.glob(os.path.join(env.src, "jobs", "*.json")))
        checks.check(len(jobs) >= 4, "at least four example jobs")
        for job in jobs:
            name = os.path.splitext(os.path.basename(job))[0]
            outs = outputs_for(env, checks, job, name, VARIANTS)
            base = outs.get("j1")
            for label, data in outs.items():
                # Intent: the merge in shard order makes every schedule give the same bytes.
                checks.check(data == base, "%s: %s output identical to -j 1" % (name, label))

        # Hundreds of shards: 300 small generated NDJSON shards, gzip and zstd mixed.
        data = env.path("gen", "x")
        os.makedirs(os.path.dirname(data), exist_ok=True)
        env.generate(env.path("gen", "zst"), "--shards", 150, "--records", 60, "--seed", 77, "--compress", "zst")
        env.generate(env.path("gen", "gz"), "--shards", 150, "--records", 60, "--seed", 78, "--compress", "gz",
                     "--start", "2026-04-01T00")
        job = lib.write_job(env.path("gen", "job.json"), {
            "inputs": {"files": ["zst/*.ndjson.zst", "gz/*.ndjson.gz"]},
            "derive": [{"name": "day", "expr": "period_start(coalesce(time({/ts}), time_ms({/ts_ms})), 'day')"}],
            "group": ["day", "{/district}"],
            "measures": [
                {"name": "n", "fn": "count"},
                {"name": "w", "fn": "sum", "of": "{/power_w}"},
                {"name": "m", "fn": "mean", "of": "{/latency_ms}"},
                {"name": "sd", "fn": "stddev", "of": "{/latency_ms}"},
                {"name": "q", "fn": "ddsketch", "of": "{/latency_ms}", "at": [0.5, 0.99]},
                {"name": "first_fw", "fn": "at_lowest", "of": "{/fw/version}", "by": "{/ts}"},
            ],
            "emit": {"format": "csv"},
        })
        outs = outputs_for(env, checks, job, "generated300", VARIANTS)
        for label, data in outs.items():
            checks.check(data == outs.get("j1"), "generated300: %s output identical to -j 1" % label)

        # Chunked uncompressed input equals the whole-file answer (cuts never depend on -j).
        plain = env.path("gen", "plain")
        env.generate(plain, "--shards", 2, "--records", 30000, "--seed", 5, "--compress", "none")
        base_job = {
            "inputs": {"files": ["plain/*.ndjson"]},
            "group": ["{/district}"],
            "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/power_w}"},
                         {"name": "lamps", "fn": "distinct", "of": "{/lamp}"}],
            "emit": {"format": "csv"},
        }
        whole = lib.write_job(env.path("gen", "whole.json"), base_job)
        chunked_spec = json.loads(json.dumps(base_job))
        chunked_spec["inputs"]["chunk_bytes"] = 200000
        chunked = lib.write_job(env.path("gen", "chunked.json"), chunked_spec)
        rc, check_out, _ = env.fanfold_run("check", chunked)
        checks.check(rc == 0 and check_out.count("[bytes ") > 10, "chunked job lists byte-range shards")
        w = outputs_for(env, checks, whole, "whole", VARIANTS[:1])
        c = outputs_for(env, checks, chunked, "chunked", VARIANTS[:4])
        for label, data in c.items():
            # Intent: every record lands in exactly one chunk, so counts and sums agree.
            checks.check(data.splitlines()[1:] and
                         [l.split(b",")[:2] + l.split(b",")[3:] for l in data.splitlines()] ==
                         [l.split(b",")[:2] + l.split(b",")[3:] for l in w["j1"].splitlines()],
                         "chunked %s: counts and distinct lamps equal the whole-file run" % label)
            checks.check(data == c.get("j1"), "chunked %s identical to chunked -j 1" % label)

        # Intent: shared-memory hygiene after normal runs.
        new_leaks = sorted(set(lib.leaked_segments()) - set(before))
        checks.check(not new_leaks, "no fanfold segment left in /dev/shm (found %s)" % new_leaks)
    checks.exit()


if __name__ == "__main__":
    main()
