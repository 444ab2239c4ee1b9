"""fanfold-gen, checked with outside tools: the zstd and gzip decoders, the
json and csv modules and datetime. Same flags give the same bytes (also with
threads), the manifest's counts match what the stdlib parses, the committed
demo data is what its README command regenerates, records are time-ordered
inside their hour, and the CSV/TSV flattening carries the NDJSON values.
"""

import datetime
import json
import os
import subprocess
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402
import reference as ref  # noqa: E402

# The commands in demo_data/README.md (keep in sync).
DEMO_SETS = {
    "lamps": ["--shards", 48, "--records", 2000, "--seed", 7],
    "lamps-csv": ["--shards", 24, "--records", 2000, "--seed", 7, "--format", "csv", "--compress", "gz",
                  "--start", "2026-03-02T12"],
}


def files_of(d):
    return sorted(f for f in os.listdir(d) if f != "manifest.json")


def read_all(d):
    return {f: open(os.path.join(d, f), "rb").read() for f in files_of(d)}


def flatten(rec):
    """The CSV row the generator should write for an NDJSON record (README)."""
    def text(v):
        if v is ref.MISSING or v is None:
            return ref.MISSING
        return v if isinstance(v, str) else json.dumps(v)
    readings = rec.get("readings", [])
    out = {
        "ts": text(rec.get("ts", ref.MISSING)), "ts_ms": text(rec.get("ts_ms", ref.MISSING)),
        "lamp": rec["lamp"], "district": rec["district"], "event": rec["event"],
        "power_w": text(rec.get("power_w", ref.MISSING)), "latency_ms": text(rec.get("latency_ms", ref.MISSING)),
        "fw_version": rec["fw"]["version"], "fw_channel": rec["fw"]["channel"],
        "reading_0": text(readings[0]) if len(readings) > 0 else ref.MISSING,
        "reading_1": text(readings[1]) if len(readings) > 1 else ref.MISSING,
        "fault": text(rec.get("fault", ref.MISSING)),
    }
    return {k: v for k, v in out.items() if v is not ref.MISSING}


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_generator")
    with lib.Env(args) as env:
        flags = ["--shards", 12, "--records", 400, "--seed", 5, "--bad-rate", 0.02, "--lamps", 200]
        m1 = env.generate(os.path.join(env.tmp, "a"), *flags)
        m2 = env.generate(os.path.join(env.tmp, "b"), *flags, "--threads", 3)
        # Intent: same flags => identical bytes, whatever the thread count.
        checks.check(read_all(os.path.join(env.tmp, "a")) == read_all(os.path.join(env.tmp, "b")) and m1 == m2,
                     "two runs with the same flags (1 vs 3 threads) differ")
        other_seed = [6 if prev == "--seed" else f for prev, f in zip([None] + flags, flags)]
        m3 = env.generate(os.path.join(env.tmp, "c"), *other_seed)
        # Intent: another seed gives other data.
        checks.check(read_all(os.path.join(env.tmp, "a")) != read_all(os.path.join(env.tmp, "c")), "seed is ignored")
        del m3

        a = os.path.join(env.tmp, "a")
        # Intent: every shard is a valid zstd frame (Debian zstd -t).
        rc = subprocess.run(["zstd", "-tq"] + [os.path.join(a, f) for f in files_of(a)]).returncode
        checks.check(rc == 0, "zstd -t rejects a generated shard")
        # Intent: one shard per hour, named by the hour, from --start.
        want_names = ["lamps-2026-03-01T%02d.ndjson.zst" % h for h in range(12)]
        checks.check(files_of(a) == want_names, "shard names %s" % files_of(a)[:3])
        for entry in m1["files"]:
            path = os.path.join(a, entry["name"])
            recs, bad = ref.load_shard(path)
            # Intent: manifest counts == what json.loads accepts/rejects.
            checks.check((len(recs), bad) == (entry["records"], entry["malformed"]),
                         "%s: stdlib parse %d/%d, manifest %d/%d"
                         % (entry["name"], len(recs), bad, entry["records"], entry["malformed"]))
            hour = datetime.datetime.strptime(entry["name"][6:19], "%Y-%m-%dT%H").replace(
                tzinfo=datetime.timezone.utc).timestamp()
            ts = [ref.coalesce(ref.time_of(r.get("ts", ref.MISSING)), ref.time_ms_of(r.get("ts_ms", ref.MISSING)))
                  for r in recs]
            # Intent: instants lie in the shard's hour and strictly increase (datetime.fromisoformat).
            checks.check(all(t is not None and hour <= t < hour + 3600 for t in ts),
                         "%s: a record outside its hour" % entry["name"])
            checks.check(all(x < y for x, y in zip(ts, ts[1:])), "%s: instants not strictly increasing" % entry["name"])
            # Intent: fault codes appear on fault events only, and every fault event has one.
            checks.check(all((r["event"] == "fault") == isinstance(r.get("fault"), str) for r in recs),
                         "%s: fault field on a non-fault event or missing on a fault" % entry["name"])
        kinds = {}
        for f in files_of(a):
            for r in ref.load_shard(os.path.join(a, f))[0]:
                kinds[r["event"]] = kinds.get(r["event"], 0) + 1
                for key in ("ts", "ts_ms", "power_w"):
                    v = r.get(key, ref.MISSING)
                    kinds["%s:%s" % (key, type(v).__name__)] = kinds.get("%s:%s" % (key, type(v).__name__), 0) + 1
        total = m1["totals"]["records"]
        # Intent: the mix the README promises: heartbeats dominate, all six kinds, every power_w shape.
        checks.check(kinds.get("heartbeat", 0) > 0.7 * total, "heartbeats are not dominant: %r" % kinds)
        for k in ("switch_on", "switch_off", "dim", "fault", "reboot", "ts_ms:int", "power_w:NoneType",
                  "power_w:str", "power_w:_Missing", "power_w:float"):
            checks.check(kinds.get(k, 0) > 0, "no %s in the generated mix: %r" % (k, kinds))

        # Intent: CSV and TSV carry the same records as NDJSON from the same seed, flattened.
        for fmt in ("csv", "tsv"):
            d = os.path.join(env.tmp, fmt)
            env.generate(d, *flags, "--format", fmt, "--compress", "gz" if fmt == "csv" else "none")
            for f_nd, f_x in zip(files_of(a), files_of(d)):
                nd, _ = ref.load_shard(os.path.join(a, f_nd))
                xs, _ = ref.load_shard(os.path.join(d, f_x))
                checks.check([flatten(r) for r in nd] == xs, "%s: %s rows differ from NDJSON" % (f_x, fmt))

        # Intent: the committed demo data is exactly what demo_data/README.md's commands produce.
        for name, gen_flags in DEMO_SETS.items():
            committed = os.path.join(env.src, "demo_data", name)
            fresh = os.path.join(env.tmp, "demo", name)
            man = env.generate(fresh, *gen_flags)
            with open(os.path.join(committed, "manifest.json")) as f:
                checks.check(json.load(f) == man, "demo_data/%s/manifest.json differs from a fresh run" % name)
            checks.check(files_of(committed) == files_of(fresh), "demo_data/%s file list differs" % name)
            same_text = all(ref.read_shard_bytes(os.path.join(committed, f)) == ref.read_shard_bytes(os.path.join(fresh, f))
                            for f in files_of(fresh) if os.path.exists(os.path.join(committed, f)))
            checks.check(same_text, "demo_data/%s content differs from a fresh run" % name)

        # Intent: --tags adds a "tag" drawn from N values and changes nothing else (json
        # module); --lean keeps the lamp, the tag and numeric power only; both are
        # deterministic across thread counts.
        t = os.path.join(env.tmp, "tags")
        mt = env.generate(t, *flags, "--tags", 300)
        for f_a, f_t in zip(files_of(a), files_of(t)):
            plain, _ = ref.load_shard(os.path.join(a, f_a))
            tagged, _ = ref.load_shard(os.path.join(t, f_t))
            tags = [r.pop("tag", None) for r in tagged]
            checks.check(plain == tagged, "%s: --tags changed another field" % f_t)
            checks.check(all(isinstance(x, str) and x.startswith("T-") and 0 <= int(x[2:]) < 300 for x in tags),
                         "%s: a tag outside T-0000000000..T-0000000299" % f_t)
        all_tags = {r["tag"] for f in files_of(t) for r in ref.load_shard(os.path.join(t, f))[0]}
        # 4,800 draws from 300 values: every value is drawn (missing one has probability ~300*e^-16).
        checks.check(len(all_tags) == 300, "%d distinct tags of 300" % len(all_tags))
        checks.check(mt["settings"].get("tags") == 300 and "--tags 300" in mt["command"], "manifest lacks --tags")
        lean = os.path.join(env.tmp, "lean")
        env.generate(lean, *flags, "--tags", 300, "--lean", "--threads", 2)
        lean2 = os.path.join(env.tmp, "lean2")
        env.generate(lean2, *flags, "--tags", 300, "--lean")
        checks.check(read_all(lean) == read_all(lean2), "--lean differs between 1 and 2 threads")
        for f_t, f_l in zip(files_of(t), files_of(lean)):
            tagged, _ = ref.load_shard(os.path.join(t, f_t))
            slim, _ = ref.load_shard(os.path.join(lean, f_l))
            want = [{k: r[k] for k in ("lamp", "tag", "power_w") if k in r and (k != "power_w" or type(r[k]) is float)}
                    for r in tagged]
            checks.check(slim == want, "%s: --lean records are not the full records' lamp, tag and power" % f_l)
        rc, _, err = env.run([env.gen, "--out", env.path("x", "z"), "--tags", "5", "--format", "csv"])
        checks.check(rc == 2 and "--tags" in err, "--tags with csv: exit %d, %s" % (rc, err))

        # Intent: bad flags are usage errors (exit 2), with the flag named.
        rc, _, err = env.run([env.gen, "--out", env.path("x", "y"), "--start", "2026-13-01T00"])
        checks.check(rc == 2 and "--start" in err, "bad --start: exit %d, %s" % (rc, err))
        rc, _, err = env.run([env.gen, "--out", env.path("x", "y"), "--bad-rate", "1.5"])
        checks.check(rc == 2 and "--bad-rate" in err, "bad --bad-rate: exit %d, %s" % (rc, err))
    checks.exit()


if __name__ == "__main__":
    main()
