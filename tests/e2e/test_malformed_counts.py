"""Malformed records are skipped and counted exactly: hand-written shards with
known broken lines, generated shards (NDJSON plain/gz/zst, CSV, TSV) with the
generator's manifest as the count to match, the line numbers named on
stderr, "bad_record_limit" turning a too-broken shard into a failed one
(exit status 1) while the other shards still count, and
"check_unread_values": the same counts either way for structural breaks,
more malformed lines with it where only a value no field reads is misspelled
(the rule of docs/job-file.md, "Malformed NDJSON lines").
"""

import gzip
import json
import os
import re
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402
import reference as ref  # noqa: E402

GOOD = '{"ts":"2026-03-01T00:%02d:00Z","lamp":"L-%05d","district":"Quillmoor","event":"heartbeat","power_w":%d}'
BROKEN = [
    b'{"ts":"2026-03-01T00:59:00Z","lamp":"L-00001"',        # truncated object
    b'"ts":"2026-03-01T00:59:00Z","lamp":"L-00002"}',         # missing opening brace
    b'#\xff\xfe\x80 not json at all',                          # garbage bytes, invalid UTF-8
    b'{"ts":"2026-03-01T00:59:00Z",,"lamp":"L-00003"}',       # doubled comma
]


def good_lines(n, start=0):
    return [(GOOD % (i % 60, start + i, 10 + i)).encode() for i in range(n)]


def write(path, lines, final_newline=True, compress=None):
    data = b"\n".join(lines) + (b"\n" if final_newline else b"")
    if compress == "gz":
        data = gzip.compress(data, mtime=0)
    os.makedirs(os.path.dirname(path), exist_ok=True)
    with open(path, "wb") as f:
        f.write(data)
    return path


def count_job(files, extra_inputs=None):
    inputs = {"files": files}
    inputs.update(extra_inputs or {})
    return {"about": "e2e: count records", "inputs": inputs,
            "measures": [{"name": "n", "fn": "count"}], "emit": {"format": "json"}}


def global_count(path):
    rows = lib.read_rows(path, "json")
    return rows[0].get("n") if len(rows) == 1 else rows


SAMPLE = re.compile(r"malformed record: (\S+) line (\d+)")


def check_samples(checks, label, err, files):
    """Every "malformed record: FILE line N" on stderr names a line that the
    Python reference (json module / csv module) also rejects."""
    bad_lines = {}
    for f in files:
        data = ref.read_shard_bytes(f)
        lines = ref.split_lines(data)
        if ".csv" in f or ".tsv" in f:
            sep = "\t" if ".tsv" in f else ","
            # Our CSV shards have no quoted line breaks, so a row is a line;
            # line 1 is the header.
            bad = {i for i, line in enumerate(lines[1:], start=2)
                   if ref.parse_csv(lines[0] + b"\n" + line + b"\n", sep)[1]}
        else:
            bad = {i for i, line in enumerate(lines, start=1) if ref.parse_ndjson(line)[1]}
        bad_lines[os.path.basename(f)] = bad
    named = 0
    for path, line in SAMPLE.findall(err):
        name = os.path.basename(path.rstrip(":"))
        if name in bad_lines:
            named += 1
            checks.check(int(line) in bad_lines[name], "%s: stderr names %s line %s, which the reference parses fine"
                         % (label, name, line))
    return named


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_malformed_counts")
    with lib.Env(args) as env:
        d = os.path.join(env.tmp, "hand")
        # a: 10 good, 3 broken, the last good line has no final newline.
        a = write(os.path.join(d, "a.ndjson"),
                  good_lines(4) + BROKEN[:1] + good_lines(3, 100) + BROKEN[1:3] + good_lines(3, 200),
                  final_newline=False)
        # b: 5 good, 1 broken, gzip.
        b = write(os.path.join(d, "b.ndjson.gz"), good_lines(2, 300) + BROKEN[3:] + good_lines(3, 400), compress="gz")
        job = lib.write_job(env.path("hand.json"), count_job([os.path.join(d, "*.ndjson*")]))
        out = env.path("hand.out")
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", out)
        if checks.check(rc == 0, "hand-written shards: exit %d: %s" % (rc, lib.tail(err))):
            # Intent: 15 well-formed records counted, the unterminated last line included.
            checks.check(global_count(out) == 15, "hand-written shards: count %r, want 15" % global_count(out))
            # Intent: exactly the 4 broken lines are counted as malformed.
            checks.check(lib.summary_malformed_total(err) == 4,
                         "hand-written shards: summary malformed %r, want 4" % lib.summary_malformed_total(err))
            # Intent: the sampled line numbers point at broken lines (a: 5, 9, 10; b: 3).
            named = check_samples(checks, "hand-written", err, [a, b])
            checks.check(named >= 1, "hand-written: no 'malformed record: FILE line N' samples on stderr")

        # Generated shards in every format/compression, 5 % broken lines.
        variants = [("ndjson", "none"), ("ndjson", "gz"), ("ndjson", "zst"), ("csv", "gz"), ("tsv", "none")]
        for fmt, comp in variants:
            gdir = os.path.join(env.tmp, "gen-%s-%s" % (fmt, comp))
            man = env.generate(gdir, "--shards", 6, "--records", 300, "--seed", 77, "--bad-rate", 0.05,
                               "--format", fmt, "--compress", comp)
            files = [os.path.join(gdir, e["name"]) for e in man["files"]]
            job = lib.write_job(env.path("gen-%s-%s.json" % (fmt, comp)), count_job(files))
            out = env.path("gen-%s-%s.out" % (fmt, comp))
            label = "generated %s/%s" % (fmt, comp)
            rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", out)
            if not checks.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
                continue
            # Intent: well-formed records == the generator's manifest (exact).
            checks.check(global_count(out) == man["totals"]["records"],
                         "%s: count %r, manifest %d" % (label, global_count(out), man["totals"]["records"]))
            # Intent: malformed total in the summary == the generator's manifest (exact).
            checks.check(lib.summary_malformed_total(err) == man["totals"]["malformed"],
                         "%s: summary malformed %r, manifest %d"
                         % (label, lib.summary_malformed_total(err), man["totals"]["malformed"]))
            # Intent: harness sanity: the stdlib reference agrees with the manifest.
            checks.check(sum(ref.load_shard(f)[1] for f in files) == man["totals"]["malformed"],
                         "%s: reference parse disagrees with the manifest" % label)
            check_samples(checks, label, err, files)
            if fmt == "ndjson":
                # Intent: the generator's broken lines are structural, so checking every value
                # finds exactly the same ones (the manifest's counts again).
                job = lib.write_job(env.path("gen-%s-%s-every.json" % (fmt, comp)),
                                    count_job(files, {"check_unread_values": True}))
                rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", out + ".every")
                if checks.check(rc == 0, "%s, every value: exit %d: %s" % (label, rc, lib.tail(err))):
                    checks.check(global_count(out + ".every") == man["totals"]["records"] and
                                 lib.summary_malformed_total(err) == man["totals"]["malformed"],
                                 "%s, every value: count %r, malformed %r, manifest %d, %d"
                                 % (label, global_count(out + ".every"), lib.summary_malformed_total(err),
                                    man["totals"]["records"], man["totals"]["malformed"]))

        # Intent: "check_unread_values" through a whole run (job file, plan, workers, reader).
        # The hand-written broken lines are structural: the same 4 either way. Lines whose only
        # error is the spelling of a number or literal no field reads are records by default and
        # malformed with the option, exactly where Python's json module refuses them.
        d = os.path.join(env.tmp, "unread")
        unread_bad = [b'{"lamp":"L-1","x":tru}', b'{"lamp":"L-2","readings":[01,2]}',
                      b'{"lamp":"L-3","x":{"y":nul}}', b'{"lamp":"L-4","x":1.}']
        u = write(os.path.join(d, "u.ndjson"), good_lines(5) + BROKEN + unread_bad + good_lines(2, 500))
        by_python = ref.parse_ndjson(open(u, "rb").read())
        for every, want_records in ((False, 7 + len(unread_bad)), (True, len(by_python[0]))):
            job = {"inputs": {"files": [u], "check_unread_values": every}, "group": ["{/lamp}"],
                   "measures": [{"name": "n", "fn": "count"}], "emit": {"format": "json"}}
            path = lib.write_job(env.path("unread-%s.json" % every), job)
            out = env.path("unread-%s.out" % every)
            rc, _, err = env.fanfold_run("run", path, "-j", args.workers, "-o", out)
            label = "check_unread_values %s" % every
            if checks.check(rc == 0, "%s: exit %d: %s" % (label, rc, lib.tail(err))):
                got = sum(r["n"] for r in lib.read_rows(out, "json"))
                checks.check(got == want_records, "%s: %r records, want %d" % (label, got, want_records))
                want_bad = 4 + len(unread_bad) - (0 if every else len(unread_bad))
                checks.check(lib.summary_malformed_total(err) == want_bad,
                             "%s: summary malformed %r, want %d" % (label, lib.summary_malformed_total(err), want_bad))
        checks.check(len(by_python[0]) == 7 and by_python[1] == 8, "python reference: %d records, %d malformed, want 7, 8"
                     % (len(by_python[0]), by_python[1]))

        # Intent: in a file cut into chunks ("chunk_bytes"), a malformed line in a
        # later chunk is named with the chunk's first byte, and its line number,
        # counted from there, is the broken line (found here by Python from the
        # bytes: the records whose first byte is at or after the chunk start).
        d = os.path.join(env.tmp, "chunked")
        lines = good_lines(900) + BROKEN[:1] + good_lines(900, 1000)
        cut = write(os.path.join(d, "cut.ndjson"), lines)
        data = open(cut, "rb").read()
        chunk = 65536
        broken_at = data.index(BROKEN[0])
        chunk_start = broken_at - broken_at % chunk
        checks.check(chunk_start > 0, "chunked: the broken line should fall in a later chunk")
        starts = [0] + [i + 1 for i, byte in enumerate(data) if byte == 0x0A and i + 1 < len(data)]
        in_chunk = [st for st in starts if st >= chunk_start]
        want_line = in_chunk.index(broken_at) + 1
        job = lib.write_job(env.path("chunked.json"), count_job([cut], {"chunk_bytes": chunk}))
        rd = env.path("chunked-run")
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", env.path("chunked.out"), "--run-dir", rd)
        if checks.check(rc == 0, "chunked: exit %d: %s" % (rc, lib.tail(err))):
            named = "malformed record: %s (the chunk from byte %d) line %d" % (os.path.realpath(cut), chunk_start, want_line)
            checks.check(named + ":" in err or named + ", column " in err,
                         "chunked: stderr lacks %r: %s" % (named, lib.tail(err)))
            with open(os.path.join(rd, "summary.json")) as f:
                samples = json.load(f)["malformed_samples"]
            checks.check([(x.get("chunk_offset"), x["line"]) for x in samples] == [(chunk_start, want_line)],
                         "chunked: summary.json samples %r, want chunk_offset %d line %d"
                         % (samples, chunk_start, want_line))

        # bad_record_limit: malformed / (records + malformed) above the limit fails the shard.
        d = os.path.join(env.tmp, "limit")
        ok1 = write(os.path.join(d, "ok1.ndjson"), good_lines(20) + BROKEN[:1])                 # 1/21 = 4.8 %
        edge = write(os.path.join(d, "edge.ndjson"), good_lines(3, 50) + BROKEN[1:2])           # 1/4 = 25 %, not above
        bad = write(os.path.join(d, "toobad.ndjson"), good_lines(10, 100) + BROKEN[:3])         # 3/13 = 23 % > 20 %
        del ok1, edge
        job = lib.write_job(env.path("limit20.json"),
                            count_job([os.path.join(d, "ok1.ndjson"), bad], {"bad_record_limit": 0.2}))
        out = env.path("limit20.out")
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", out)
        # Intent: a shard past bad_record_limit fails: exit status 1, and stderr names it.
        checks.check(rc == 1, "bad_record_limit 0.2: exit %d, want 1: %s" % (rc, lib.tail(err)))
        checks.check("toobad.ndjson" in err, "bad_record_limit: stderr does not name toobad.ndjson: %s" % lib.tail(err))
        # Intent: the shard within the limit still counts (20 records), the failed one not at all.
        if checks.check(os.path.exists(out), "bad_record_limit: no result written"):
            checks.check(global_count(out) == 20, "bad_record_limit: count %r, want 20" % global_count(out))
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-q", "--fresh", "-o", out)
        # Intent: -q still says which shard failed and why (the exit status 1 alone does not),
        # and only that: no summary, no notes.
        lines = err.splitlines()
        checks.check(rc == 1 and len(lines) == 1 and lines[0].startswith("fanfold: shard ")
                     and "toobad.ndjson' failed: " in lines[0],
                     "-q: exit %d, want 1 and one line naming the failed shard: %s" % (rc, lib.tail(err)))

        job = lib.write_job(env.path("limit25.json"),
                            count_job([os.path.join(d, "edge.ndjson")], {"bad_record_limit": 0.25}))
        out = env.path("limit25.out")
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", out)
        # Intent: exactly at the limit (1 of 4 lines = 0.25, spec: fails only when it exceeds) passes.
        checks.check(rc == 0, "bad_record_limit 0.25 with 1 of 4 lines broken: exit %d, want 0: %s"
                     % (rc, lib.tail(err)))

        job = lib.write_job(env.path("limit0.json"),
                            count_job([os.path.join(d, "ok1.ndjson")], {"bad_record_limit": 0}))
        rc, _, err = env.fanfold_run("run", job, "-j", args.workers, "-o", env.path("limit0.out"))
        # Intent: limit 0 tolerates no malformed line at all.
        checks.check(rc == 1, "bad_record_limit 0 with one broken line: exit %d, want 1: %s" % (rc, lib.tail(err)))
    checks.exit()


if __name__ == "__main__":
    main()
