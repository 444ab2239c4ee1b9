"""The documentation says what fanfold does: every example in README.md and
docs/*.md is run against the real binary.

* every ```json block parses as JSON (a fragment such as `"derive": [...]`
  once wrapped in braces); a whole job (one with "inputs") runs with exit
  status 0, and its result has no blank group key;
* docs/run-directory.md's run.json example has the keys and codec number of
  a real run.json;
* the README's printed table is what `fanfold run` prints for its job (header
  and every row shown before the "...");
* every line of a ```text block in docs/expressions.md that is an expression
  compiles in a job over the demo data (`fanfold check`, exit 0);
* every row of the error table in docs/expressions.md gives exit status 2 and
  its message;
* every "`expression` → value" example whose expression reads no field gives
  that value (as the group key of a one-record job, CSV output).
"""

import json
import os
import re
import sys

import e2e_lib as lib

FENCE = re.compile(r"^```(\w*)\n(.*?)^```", re.S | re.M)


def blocks(text):
    return [(m.group(1), m.group(2), text[:m.start()].count("\n") + 1) for m in FENCE.finditer(text)]


def absolutize(job, job_dir):
    """Input globs in docs are relative to jobs/; the test's job lives elsewhere."""
    files = job.get("inputs", {}).get("files", [])
    job["inputs"]["files"] = [f if os.path.isabs(f) else os.path.normpath(os.path.join(job_dir, f)) for f in files]
    for table in job.get("tables", []):  # lookup tables: relative to jobs/ as well
        if not os.path.isabs(table.get("path", "/")):
            table["path"] = os.path.normpath(os.path.join(job_dir, table["path"]))
    for part in job.get("reductions", [job]):
        part.get("emit", {}).pop("path", None)
    return job


def run_job(env, job, name, fmt="csv"):
    path = env.path(name + ".json")
    job = json.loads(json.dumps(job))
    for part in job.get("reductions", [job]):
        part.setdefault("emit", {})["format"] = fmt
    lib.write_job(path, job)
    return env.fanfold_run("run", path, "--fresh", "-j", "2", "-q", "-o", "-")


def base_job(env, expr=""):
    """A job over the demo data: the CSV shards when expr names CSV columns."""
    csv = re.search(r"\{[^/}]", expr) is not None
    pattern = ("lamps-csv", "*.csv.gz") if csv else ("lamps", "*.ndjson.zst")
    # Fields as the format names them: `check` refuses a column not in the header.
    ts, ts_ms, district = ("{ts}", "{ts_ms}", "{district}") if csv else ("{/ts}", "{/ts_ms}", "{/district}")
    return {
        "inputs": {"files": [os.path.join(env.src, "demo_data", *pattern)]},
        "derive": [{"name": "t", "expr": "coalesce(time(%s), time_ms(%s))" % (ts, ts_ms)},
                   {"name": "hour", "expr": "period_start(t, 'hour')"}],
        "group": [district],
        "measures": [{"name": "n", "fn": "count"}],
    }


def check_json_blocks(env, c, doc, text):
    jobs_dir = os.path.join(env.src, "jobs")
    for lang, body, line in blocks(text):
        if lang != "json":
            continue
        where = "%s:%d" % (doc, line)
        try:
            value = json.loads(body)
        except json.JSONDecodeError:
            try:
                value = json.loads("{" + body + "}")
            except json.JSONDecodeError as e:
                c.fail("%s: a json block that does not parse (%s)" % (where, e))
                continue
        c.check(True, where)
        if not (isinstance(value, dict) and "inputs" in value):
            continue
        job = absolutize(value, jobs_dir)
        rc, out, err = run_job(env, job, "doc_%d" % line)
        if not c.check(rc == 0, "%s: the example job exits %d: %s" % (where, rc, lib.tail(err))):
            continue
        # Several reductions come one after another on stdout, each under "== name ==".
        parts = re.split(r"(?:^|\n\n)== [\w-]+ ==\n", out) if "reductions" in job else [out]
        for part, spec in zip([p for p in parts if p], job.get("reductions", [job])):
            rows = list(lib.csv.reader(lib.io.StringIO(part)))
            keys = len(spec.get("group", []))
            blank = [r for r in rows[1:] if any(cell == "" for cell in r[:keys])]
            c.check(not blank, "%s: the example's result has rows with a blank group key: %s" % (where, blank[:3]))


def check_run_json(env, c, text):
    """docs/run-directory.md's run.json example has the keys and codec number of a real one."""
    m = re.search(r"```json\n(\{\"fanfold_run\".*?)```", text, re.S)
    if not c.check(m is not None, "docs/run-directory.md: the run.json example was not found"):
        return
    doc = json.loads(m.group(1))
    run_dir = env.path("runjson", "rd")
    rc, _, err = env.fanfold_run("run", os.path.join(env.src, "jobs", "fault_watch.json"), "--fresh", "-q",
                                 "-o", env.path("runjson", "out.txt"), "--run-dir", run_dir)
    if not c.check(rc == 0, "run.json: the run exits %d: %s" % (rc, lib.tail(err))):
        return
    with open(os.path.join(run_dir, "run.json")) as f:
        real = json.load(f)
    c.check(sorted(doc) == sorted(real), "docs/run-directory.md: run.json keys %s, real %s" % (sorted(doc), sorted(real)))
    c.check(sorted(doc["shards"][0]) == sorted(real["shards"][0]),
            "docs/run-directory.md: shard keys %s, real %s" % (sorted(doc["shards"][0]), sorted(real["shards"][0])))
    codec = lambda t: re.match(r"fanfold-plan codec=(\d+)", t).group(1)
    c.check(codec(doc["plan_text"]) == codec(real["plan_text"]),
            "docs/run-directory.md: plan_text says codec=%s, fanfold writes codec=%s"
            % (codec(doc["plan_text"]), codec(real["plan_text"])))


def check_readme_table(env, c, text):
    m = re.search(r"`fanfold run` prints the table on stdout.*?\n```\n(.*?)```", text, re.S)
    if not c.check(m is not None, "README: the printed table of the walk-through was not found"):
        return
    shown = [l.rstrip() for l in m.group(1).splitlines()]
    shown = shown[:shown.index("...")] if "..." in shown else shown
    job = os.path.join(env.src, "jobs", "fault_watch.json")
    rc, out, err = env.fanfold_run("run", job, "--fresh", "-q", "-o", "-")
    c.check(rc == 0, "README: fault_watch exits %d" % rc)
    actual = [l.rstrip() for l in out.splitlines()][:len(shown)]
    c.check(actual == shown, "README: the table shown differs from the output:\n%s\nvs\n%s"
            % ("\n".join(shown), "\n".join(actual)))


def check_expressions(env, c, text):
    section = text.split("\n## Errors", 1)
    for lang, body, line in blocks(section[0]):
        if lang != "text":
            continue
        for i, raw in enumerate(body.splitlines()):
            expr = raw.split("  #", 1)[0].strip()
            if not expr or expr.startswith("{\""):
                continue
            job = base_job(env, expr)
            job["keep"] = expr
            path = env.path("expr_%d_%d.json" % (line, i))
            lib.write_job(path, job)
            rc, _, err = env.run([env.fanfold, "check", path])
            c.check(rc == 0, "docs/expressions.md:%d: `%s` does not compile: %s" % (line + 1 + i, expr, lib.tail(err, 300)))
    # The error table: | `expression` | `message` |
    errors = section[1].split("\n## ", 1)[0] if len(section) > 1 else ""
    for m in re.finditer(r"^\| (\*\(only spaces\)\*|`(.*?)`) \| `(.*?)` \|$", errors, re.M):
        expr = " " if m.group(1).startswith("*") else m.group(2)
        message = m.group(3).replace("...", "").rstrip(" ,")
        job = base_job(env)
        job["derive"] = job["derive"][:1]  # `hour > 20` must find no derived field 'hour'
        job["keep"] = expr
        path = env.path("err_%d.json" % m.start())
        lib.write_job(path, job)
        rc, _, err = env.run([env.fanfold, "check", path])
        c.check(rc == 2 and message in err,
                "docs/expressions.md: `%s` should fail with '%s'; got %d: %s" % (expr, message, rc, lib.tail(err, 300)))


ARROW = re.compile(r"`([^`{}]+)`\s*→\s*(`[^`]*`|[^\s,;]+)")


def check_arrows(env, c, text):
    one = env.path("one", "one.ndjson")
    with open(one, "w") as f:
        f.write('{"k": 1}\n')
    for m in ARROW.finditer(text):
        expr, want = m.group(1), m.group(2).strip("`").rstrip(".")
        want = want.strip("'")
        if want == "missing":
            want = ""
        job = {"inputs": {"files": [one]}, "derive": [{"name": "x", "expr": expr}], "group": ["x"],
               "measures": [{"name": "n", "fn": "count"}]}
        rc, out, err = run_job(env, job, "arrow_%d" % m.start())
        rows = list(lib.csv.reader(lib.io.StringIO(out)))
        got = rows[1][0] if rc == 0 and len(rows) == 2 else "<exit %d: %s>" % (rc, lib.tail(err, 200))
        c.check(got == want, "docs/expressions.md: `%s` → %s, but fanfold gives %r" % (expr, want, got))


def main():
    args = lib.parse_args(__doc__)
    c = lib.Checks("docs_examples")
    with lib.Env(args) as env:
        docs = ["README.md"] + sorted("docs/" + f for f in os.listdir(os.path.join(env.src, "docs")) if f.endswith(".md"))
        texts = {d: open(os.path.join(env.src, d), encoding="utf-8").read() for d in docs}
        for d in docs:
            check_json_blocks(env, c, d, texts[d])
        check_readme_table(env, c, texts["README.md"])
        check_run_json(env, c, texts["docs/run-directory.md"])
        check_expressions(env, c, texts["docs/expressions.md"])
        check_arrows(env, c, texts["docs/expressions.md"])
    c.exit()


if __name__ == "__main__":
    main()
