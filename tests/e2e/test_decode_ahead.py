"""Decompression ahead of parsing (docs/decode-ahead.md) through whole runs.
Three NDJSON shards large enough to be read in blocks (zstd, gzip, plain) and
one small one; the job run with "decode_ahead" "on", "off" and "auto" at
-j 1, -j 2 and --in-process gives byte-identical results, equal to Python's
own count and sum over the same records; summary.json says what was asked and
what the rule decided (docs/job-file.md: "auto" threads iff the workers are
fewer than the machine's hardware threads, os.cpu_count() here). A truncated
zstd shard fails with the same message under "on" and "off".
"""

import gzip
import json
import os
import random
import subprocess
import sys

sys.dont_write_bytecode = True
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402

ZONES = ["Ashgrove", "Tinmoor", "Wexley Flats", "Gullcrest"]


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("test_decode_ahead")
    with lib.Env(args) as env:
        rng = random.Random(5)
        shards = []
        for s, n in enumerate((40000, 40000, 40000, 50)):
            shards.append(["{\"zone\": %s, \"w\": %d, \"pad\": %s}" % (
                json.dumps(rng.choice(ZONES)), rng.randrange(0, 1000),
                json.dumps("".join(rng.choice("abcdefghij") for _ in range(rng.randrange(0, 40))))) for _ in range(n)])
        files = []
        for s, lines in enumerate(shards):
            p = env.path("in", "s%d.ndjson" % s)
            with open(p, "w") as f:
                f.write("\n".join(lines) + "\n")
            files.append(p)
        subprocess.run(["zstd", "-q", "--rm", files[0]], check=True)
        files[0] += ".zst"
        with open(files[1], "rb") as f, gzip.open(files[1] + ".gz", "wb") as g:
            g.write(f.read())
        os.remove(files[1])
        files[1] += ".gz"
        # Intent: the three big shards are past the 256 KiB size from which blocks are used.
        for p in files[:3]:
            c.check(os.path.getsize(p) >= 256 << 10, "%s is only %d bytes" % (p, os.path.getsize(p)))

        # The reference: Python's own sums over the records.
        want = {}
        for lines in shards:
            for line in lines:
                r = json.loads(line)
                n, w = want.get(r["zone"], (0, 0))
                want[r["zone"]] = (n + 1, w + r["w"])

        outputs = {}
        cores = os.cpu_count() or 1
        for choice in ("on", "off", "auto"):
            job = lib.write_job(env.path("job-%s.json" % choice), {
                "inputs": {"files": files, "decode_ahead": choice}, "group": ["{/zone}"],
                "measures": [{"name": "n", "fn": "count"}, {"name": "w", "fn": "sum", "of": "{/w}"}],
                "emit": {"format": "csv"}})
            for mode in (["-j", "1"], ["-j", "2"], ["--in-process"]):
                label = "%s %s" % (choice, " ".join(mode))
                run_dir = env.path("runs", (choice + "".join(mode)).replace("-", ""))
                rc, out, err = env.fanfold_run("run", job, *mode, "--run-dir", run_dir, "-q")
                if not c.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
                    continue
                outputs[label] = out
                with open(os.path.join(run_dir, "summary.json")) as f:
                    summary = json.load(f)
                ahead = summary.get("decode_ahead", {})
                workers = summary["workers"]
                expected = choice == "on" or (choice == "auto" and workers < cores)
                c.check(ahead == {"asked": choice, "threaded": expected},
                        "%s: summary.json decode_ahead %r (workers %d, cores %d)" % (label, ahead, workers, cores))
        # Intent: identical bytes whichever way the shards were decompressed.
        first = next(iter(outputs.values()), None)
        for label, out in outputs.items():
            c.check(out == first, "%s: output differs from the first run's" % label)
        if first is not None:
            got = {}
            for line in first.strip().split("\n")[1:]:
                zone, n, w = line.rsplit(",", 2)
                got[zone.strip('"')] = (int(n), int(float(w)))
            c.check(got == want, "result %r, Python says %r" % (got, want))

        # Intent: a damaged shard fails the same way threaded or not.
        with open(files[0], "rb") as f:
            data = f.read()
        cut = env.path("bad", "cut.ndjson.zst")
        with open(cut, "wb") as f:
            f.write(data[: len(data) * 2 // 3])
        messages = []
        for choice in ("on", "off"):
            job = lib.write_job(env.path("bad-%s.json" % choice), {
                "inputs": {"files": [cut], "decode_ahead": choice},
                "measures": [{"name": "n", "fn": "count"}]})
            rc, out, err = env.fanfold_run("run", job, "-j", "1", "-q")
            c.check(rc != 0 and "truncated zstd frame" in err, "bad %s: exit %d: %s" % (choice, rc, lib.tail(err)))
            messages.append([l for l in err.splitlines() if "truncated zstd frame" in l])
        c.check(messages[0] == messages[1], "the messages differ: %r" % messages)
    c.exit()


if __name__ == "__main__":
    main()
