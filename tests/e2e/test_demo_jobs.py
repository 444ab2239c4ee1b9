"""Every example job in jobs/ against the committed demo data:
`fanfold check` and `fanfold run` succeed, the run's malformed count equals
the generator's manifest, and every result cell equals an independent
Python-stdlib computation (reference.py) written out by hand per job below.
"""

import csv
import glob
import json
import os
import sys

sys.dont_write_bytecode = True  # keep the source tree clean
sys.path.insert(0, os.path.dirname(os.path.abspath(__file__)))
import e2e_lib as lib  # noqa: E402
import reference as ref  # noqa: E402
from reference import Measure as M, RefJob, ptr, col, coalesce, time_of, time_ms_of  # noqa: E402


# ---- the jobs, re-stated as Python (one lambda per expression of the job file)

def t_json(r):  # coalesce(time({/ts}), time_ms({/ts_ms}))
    return coalesce(time_of(ptr(r, "/ts")), time_ms_of(ptr(r, "/ts_ms")))


def t_csv(r):  # coalesce(time({ts}), time_ms({ts_ms}))
    return coalesce(time_of(col(r, "ts")), time_ms_of(col(r, "ts_ms")))


def p(pointer):
    return lambda r: ptr(r, pointer)


def c(name):
    return lambda r: col(r, name)


def one_if(test):  # one_if(test): 1 when the test holds, else 0 (docs/expressions.md)
    return 1 if test else 0


def ratio(a, b):  # a / b in a rows step: null when a side is null or b is 0 (docs/job-file.md)
    return None if a is None or b is None or b == 0 else a / b


def is_fault(r):  # {/event} == 'fault'
    return ptr(r, "/event") == "fault"


def lamp_table():
    """demo_data/lamp_models.csv read with Python's csv module: {lamp_id: (model, installed year)}."""
    path = os.path.join(os.path.dirname(os.path.abspath(__file__)), "..", "..", "demo_data", "lamp_models.csv")
    with open(path, newline="") as f:
        return {row["lamp_id"]: (row["model"], int(row["installed"])) for row in csv.DictReader(f)}


LAMPS = lamp_table()


def lamp_field(r, i):  # a field of the lamp table row whose lamp_id == {/lamp}; None without one (left join)
    row = LAMPS.get(ptr(r, "/lamp"))
    return None if row is None else row[i]


def decade(r):  # installed - installed % 10, missing without a year
    year = lamp_field(r, 1)
    return None if year is None else year - year % 10


# Group column names follow docs/job-file.md: a derived field's name, the last
# token of a lone field reference ({/district} -> district), else the text.
REFS = {
    "district_hourly.json": RefJob(
        group=[("district", p("/district")), ("hour", lambda r: ref.period_start(t_json(r), "hour"))],
        measures=[
            M("events", "count"),
            M("power_sum_w", "sum", of=p("/power_w")),
            M("avg_w", "mean", of=p("/power_w")),
            M("peak_w", "max", of=p("/power_w")),
            M("lat", "quantile", of=p("/latency_ms"), at=[0.5, 0.9, 0.99]),
            M("lat_apx", "ddsketch", of=p("/latency_ms"), at=[0.99], alpha=0.01),
        ]),
    "fault_watch.json": RefJob(
        keep=lambda r: ptr(r, "/event") in ("fault", "reboot"),  # {/event} in ['fault', 'reboot']
        group=[("day", lambda r: ref.period_start(t_json(r), "day")), ("district", p("/district"))],
        measures=[
            M("incidents", "count"),
            M("faults", "count_present", of=p("/fault")),
            M("codes", "top", of=p("/fault"), k=3),
            M("lamps", "distinct", of=p("/lamp")),
            M("lamps_apx", "hyperloglog", of=p("/lamp"), precision=12),
            M("min_w", "min", of=p("/power_w")),
        ]),
    "firmware_rollout.json": RefJob(
        keep=lambda r: ptr(r, "/fw/channel") == "beta",  # {/fw/channel} == 'beta'
        group=[("lamp", p("/lamp"))],
        measures=[
            M("reports", "count"),
            M("first_fw", "at_lowest", of=p("/fw/version"), by=t_json),
            M("last_fw", "at_highest", of=p("/fw/version"), by=t_json),
            M("versions", "distinct", of=p("/fw/version")),
        ]),
    "night_profile.json": RefJob(
        # {/event} == 'heartbeat' and has({/readings/0})
        keep=lambda r: ptr(r, "/event") == "heartbeat" and ref.present(ptr(r, "/readings/0")),
        group=[("week", lambda r: ref.period_start(t_json(r), "week")), ("hod", lambda r: ref.clock_hour(t_json(r)))],
        measures=[
            M("heartbeats", "count"),
            M("temp_mean", "mean", of=p("/readings/0")),
            M("temp_sd", "stddev", of=p("/readings/0")),
            M("temp_min", "min", of=p("/readings/0")),
            M("temp_max", "max", of=p("/readings/0")),
            M("humidity_var", "variance", of=p("/readings/1")),
            M("power_med", "ddsketch", of=p("/power_w"), at=[0.5], alpha=0.02),
            M("lamps_apx", "hyperloglog", of=p("/lamp"), precision=10),
        ]),
    "fault_share.json": RefJob(
        # period_start(t, 'day', 'Europe/Berlin'): the local date per zoneinfo
        group=[("day", lambda r: ref.period_start(t_json(r), "day", "Europe/Berlin")), ("district", p("/district"))],
        measures=[
            M("events", "count"),
            M("faults", "sum", of=lambda r: one_if(is_fault(r))),
            M("fault_lat", "mean", of=p("/latency_ms"), only=is_fault),
            M("lat", "histogram", of=p("/latency_ms"), edges=[0, 10, 25, 50, 100, 250]),
        ],
        rows_add=[("fault_share", lambda row: ratio(row["faults"], row["events"]))],  # faults / events
        # events >= 1000 and fault_share >= 0.03 (a null share is not kept)
        rows_keep=lambda row: (row["events"] >= 1000
                               and row["fault_share"] is not None and row["fault_share"] >= 0.03)),
    # Two reductions over one read: REFS holds one RefJob per reduction, by name.
    "district_and_firmware.json": {
        "district_day": RefJob(
            group=[("day", lambda r: ref.period_start(t_json(r), "day")), ("district", p("/district"))],
            measures=[
                M("events", "count"),
                M("faults", "sum", of=lambda r: one_if(is_fault(r))),  # is_fault = one_if({/event} == 'fault')
                M("lat", "quantile", of=p("/latency_ms"), at=[0.95]),
            ]),
        "firmware": RefJob(
            keep=lambda r: ref.present(ptr(r, "/fw/version")),  # has({/fw/version})
            group=[("version", p("/fw/version"))],
            measures=[
                M("events", "count"),
                M("lamps", "distinct", of=p("/lamp")),
                M("faults", "sum", of=lambda r: one_if(is_fault(r))),
            ],
            rows_add=[("fault_share", lambda row: ratio(row["faults"], row["events"]))],  # faults / events
            rows_keep=lambda row: row["lamps"] >= 100),  # lamps >= 100
    },
    "lamp_models.json": RefJob(
        group=[("model", lambda r: lamp_field(r, 0)), ("decade", decade)],
        measures=[
            M("events", "count"),
            M("faults", "sum", of=lambda r: one_if(is_fault(r))),
            M("lamps", "distinct", of=p("/lamp")),
        ],
        rows_add=[("fault_share", lambda row: ratio(row["faults"], row["events"]))]),  # faults / events
    "csv_daily.json": RefJob(
        group=[("day", lambda r: ref.period_start(t_csv(r), "day")), ("weekday", lambda r: ref.weekday(t_csv(r))),
               ("fw_channel", c("fw_channel"))],
        measures=[
            M("events", "count"),
            M("faults", "count_present", of=c("fault")),
            M("power_sum_w", "sum", of=c("power_w")),
            M("power_var", "variance", of=c("power_w")),
            M("power_sd", "stddev", of=c("power_w")),
            M("latency_mean", "mean", of=c("latency_ms")),
            M("temp_min", "min", of=c("reading_0")),
            M("lamps", "distinct", of=c("lamp")),
            M("lamps_apx", "hyperloglog", of=c("lamp"), precision=14),
        ]),
}

# Every measure fn of the spec must appear in some example job.
ALL_FNS = {"count", "count_present", "sum", "mean", "variance", "stddev", "min", "max", "quantile",
           "ddsketch", "distinct", "hyperloglog", "top", "at_lowest", "at_highest", "histogram"}


def compare_exact_columns(checks, name, rows, expected, rjob):
    """Histogram slots and rows.add columns, which compare_results leaves out
    or compares with a tolerance, compared exactly: a slot is a count
    (bisect.bisect_right into the edges), and a ratio of two exact integers
    is one correctly rounded division in Python as in IEEE 754."""
    group_columns = rjob.group_columns()
    exact = [c for m in rjob.measures if m.fn == "histogram" for c in m.columns()]
    exact += [a for a, _ in rjob.rows_add]
    want = {lib.norm_key(k): v for k, v in expected.items()}
    for row in rows:
        key = lib.key_of(row, group_columns)
        exp = want.get(key)
        if exp is None:
            continue
        for c in exact:
            got = row.get(c, "<no column>")
            ok = got == exp[c] and isinstance(got, bool) == isinstance(exp[c], bool)
            checks.check(ok, "%s %r %s: %r, reference %r" % (name, key, c, got, exp[c]))


def check_table_digits(checks, name, job, table_path, rows):
    """shown_digits in the shipped table: the last column, when it is a
    rows.add column with shown_digits, reads as Python's format(x, '.Ng')
    of the JSON copy's full value (docs/job-file.md: printf %.*g)."""
    adds = job.get("rows", {}).get("add", [])
    if not adds or "shown_digits" not in adds[-1]:
        return
    col_name, digits = adds[-1]["name"], adds[-1]["shown_digits"]
    with open(table_path, encoding="utf-8") as f:
        lines = f.read().splitlines()
    # Header, dashes, then one line per row in the same order as the JSON copy.
    checks.check(len(lines) == len(rows) + 2 and lines[0].split()[-1] == col_name,
                 "%s: table has %d lines for %d rows, header ends %r" % (name, len(lines), len(rows), lines[:1]))
    for line, row in zip(lines[2:], rows):
        v = row.get(col_name)
        want = "" if v is None else (str(v) if isinstance(v, int) else format(v, ".%dg" % digits))
        got = line.split()[-1] if line.split() else ""
        checks.check(got == want, "%s: table %s %r, format(%r, '.%dg') is %r" % (name, col_name, got, v, digits, want))


def expand_inputs(job_path, job):
    """The job's shard files as the spec says: patterns relative to the job
    file's directory, sorted and de-duplicated (Python glob as the reference)."""
    base = os.path.dirname(os.path.abspath(job_path))
    files = set()
    for pat in job["inputs"]["files"]:
        full = pat if os.path.isabs(pat) else os.path.join(base, pat)
        files.update(os.path.normpath(f) for f in glob.glob(full, recursive=True))
    return sorted(files)


def check_part(env, checks, args, name, job_path, job, part, rjob, files, records, shipped_out):
    """One reduction of a job (the job itself when it has no "reductions")
    against its hand-written reference."""
    label = name + ("" if not part["name"] else " " + part["name"])
    # Intent: the reference re-states this job (same measure names and fns).
    checks.check([(m["name"], m["fn"]) for m in part["measures"]] == [(m.name, m.fn) for m in rjob.measures],
                 "%s: measures differ from the reference's" % label)
    checks.check([a["name"] for a in part.get("rows", {}).get("add", [])] == [a for a, _ in rjob.rows_add]
                 and ("keep" in part.get("rows", {})) == (rjob.rows_keep is not None),
                 "%s: rows step differs from the reference's" % label)

    # A copy of the job with absolute inputs and JSON output, to read typed
    # values; of a job of several reductions, only this reduction.
    copy = json.loads(json.dumps(job))
    copy["inputs"]["files"] = files
    for table in copy.get("tables", []):  # relative to the job file, as the inputs
        table["path"] = os.path.normpath(os.path.join(os.path.dirname(job_path), table["path"]))
    if "reductions" in copy:
        copy["reductions"] = [r for r in copy["reductions"] if r["name"] == part["name"]]
        target = copy["reductions"][0]
    else:
        target = copy
    emit = target.get("emit", {})
    emit.pop("path", None)
    emit["format"] = "json"
    target["emit"] = emit
    copy_path = lib.write_job(env.path(label, "as-json.json"), copy)
    out_path = env.path(label, "result.json")
    rc, _, err = env.fanfold_run("run", copy_path, "-j", args.workers, "-o", out_path)
    if not checks.check(rc == 0, "%s (json copy): exit %d: %s" % (label, rc, lib.tail(err))):
        return
    try:
        rows = lib.read_rows(out_path, "json")
    except (OSError, ValueError) as e:
        checks.fail("%s: cannot read JSON result: %s" % (label, e))
        return
    expected = ref.evaluate(rjob, records)
    # Intent: every group and cell equals the reference (tolerances in e2e_lib.compare_cell).
    lib.compare_results(checks, label, rows, expected, rjob, emit.get("order"), emit.get("limit"))
    compare_exact_columns(checks, label, rows, expected, rjob)

    # Intent: the shipped output format carries the same rows (CSV/JSON readable back).
    fmt = part.get("emit", {}).get("format", "table")
    if "reductions" in job:
        return  # its shipped output went to stdout (checked above)
    if fmt in ("csv", "json", "ndjson") and os.path.exists(shipped_out):
        shipped = lib.read_rows(shipped_out, fmt)
        checks.check(len(shipped) == len(rows), "%s: shipped %s output has %d rows, JSON copy %d"
                     % (label, fmt, len(shipped), len(rows)))
    if fmt == "table" and os.path.exists(shipped_out):
        check_table_digits(checks, label, job, shipped_out, rows)


def manifest_malformed(files):
    """Malformed lines per file according to the generator's manifest.json."""
    out = {}
    for f in files:
        with open(os.path.join(os.path.dirname(f), "manifest.json")) as m:
            man = json.load(m)
        out[f] = {e["name"]: e for e in man["files"]}[os.path.basename(f)]
    return out


def main():
    args = lib.parse_args(__doc__)
    checks = lib.Checks("test_demo_jobs")
    with lib.Env(args) as env:
        job_paths = sorted(glob.glob(os.path.join(env.src, "jobs", "*.json")))
        checks.check(len(job_paths) >= 4, "jobs/ holds at least four example jobs (found %d)" % len(job_paths))
        used_fns = set()
        cache = {}
        for job_path in job_paths:
            name = os.path.basename(job_path)
            with open(job_path) as f:
                job = json.load(f)
            # A job of several reductions is checked reduction by reduction.
            parts = job.get("reductions", [dict(job, name="")])
            for part in parts:
                used_fns.update(m["fn"] for m in part["measures"])
            # Intent: each example job says what it is for.
            checks.check(isinstance(job.get("about"), str) and job["about"].strip(), "%s: has an about text" % name)
            files = expand_inputs(job_path, job)
            checks.check(len(files) > 0, "%s: inputs match files" % name)

            # Intent: `fanfold check` accepts the job and lists every shard.
            rc, out, err = env.fanfold_run("check", job_path)
            checks.check(rc == 0, "%s: fanfold check exit %d, stderr: %s" % (name, rc, lib.tail(err)))
            listed = out + err
            missing = [os.path.basename(f) for f in files if os.path.basename(f) not in listed]
            checks.check(not missing, "%s: fanfold check does not list shards %s" % (name, missing[:3]))

            # Intent: the job runs as shipped (its own emit format) with exit 0.
            shipped_out = env.path(name, "shipped.out")
            if "reductions" in job:  # several results: all on stdout, each under its title
                rc, out, err = env.fanfold_run("run", job_path, "-j", args.workers, "-o", "-")
                checks.check(rc == 0 and all("== %s ==\n" % r["name"] in out for r in parts),
                             "%s: fanfold run exit %d, titles in %s, stderr: %s" % (name, rc, out[:300], lib.tail(err)))
            else:
                rc, out, err = env.fanfold_run("run", job_path, "-j", args.workers, "-o", shipped_out)
                checks.check(rc == 0, "%s: fanfold run exit %d, stderr: %s" % (name, rc, lib.tail(err)))
                checks.check(os.path.exists(shipped_out) and os.path.getsize(shipped_out) > 0,
                             "%s: run -o wrote a non-empty result" % name)

            # Intent: malformed count in the summary == the generator's manifest (exact).
            man = manifest_malformed(files)
            want_bad = sum(e["malformed"] for e in man.values())
            got_bad = lib.summary_malformed_total(err)
            checks.check(got_bad == want_bad, "%s: summary malformed total %r, manifest says %d; stderr: %s"
                         % (name, got_bad, want_bad, lib.tail(err, 600)))

            # Reference data: parse each shard with the stdlib.
            records = []
            for f in files:
                if f not in cache:
                    cache[f] = ref.load_shard(f, job["inputs"].get("format"))
                recs, bad = cache[f]
                # Intent: harness sanity: the reference parser agrees with the manifest.
                checks.check(bad == man[f]["malformed"] and len(recs) == man[f]["records"],
                             "%s: reference parse of %s: %d records / %d malformed, manifest %d / %d"
                             % (name, f, len(recs), bad, man[f]["records"], man[f]["malformed"]))
                records.extend(recs)

            refs = REFS.get(name)
            if refs is None:
                checks.fail("%s: no hand-written reference in test_demo_jobs.py" % name)
                continue
            if not isinstance(refs, dict):
                refs = {"": refs}
            checks.check(sorted(refs) == sorted(part["name"] for part in parts),
                         "%s: the reference's reductions %r differ from the job's" % (name, sorted(refs)))
            for part in parts:
                if part["name"] in refs:
                    check_part(env, checks, args, name, job_path, job, part, refs[part["name"]], files, records, shipped_out)

        # Intent: together the example jobs use every measure fn of the spec.
        checks.check(ALL_FNS <= used_fns, "example jobs miss measure fns %s" % sorted(ALL_FNS - used_fns))

        # Intent: results are byte-identical for any worker count (DESIGN: merge in shard order).
        job_path = os.path.join(env.src, "jobs", "district_hourly.json")
        outs = []
        for j in (1, 3):
            o = env.path("workers", "j%d.out" % j)
            rc, _, err = env.fanfold_run("run", job_path, "-j", j, "-o", o)
            checks.check(rc == 0, "district_hourly -j %d: exit %d: %s" % (j, rc, lib.tail(err)))
            outs.append(open(o, "rb").read() if os.path.exists(o) else b"")
        checks.check(outs[0] == outs[1] and outs[0], "district_hourly: output differs between -j 1 and -j 3")
    checks.exit()


if __name__ == "__main__":
    main()
