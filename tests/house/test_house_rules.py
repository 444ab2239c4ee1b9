"""House rules of the source tree, checked (DEVELOPERS.md, "Where things live").

Run as: python3 tests/house/test_house_rules.py --source-dir REPO
Checks, each on every tracked C++ file:
  1. a folder includes only the folders its row below allows (the layering);
  2. no source folder holds more than MAX_FILES .h/.cc files;
  3. every header opens with its contract comment;
  4. no preprocessor conditionals in coordinator/ or worker/ (OS code lives
     behind common/port/);
  5. errno becomes text only in common/port/os_error.cc;
  6. no path outside the repository is cited (cite the published source).
Exits 1 with one line per breach.
"""
import argparse
import os
import re
import subprocess
import sys

COMMON = ["common/base", "common/port", "common/port/files", "common/input", "common/input/csv", "common/input/ndjson",
          "common/expr", "common/measures",
          "common/lookup", "common/job", "common/partial", "common/transport"]
# folder -> folders it may include besides itself. Lower layers never include higher ones.
ALLOWED = {
    "common/base": [],
    "common/port": ["common/base", "common/port/files"],
    # Files (listings, durable writes, identities, mappings, unnamed temp
    # files) kept in a sub-folder of port (the folder-size rule).
    "common/port/files": ["common/base", "common/port"],
    "common/input": ["common/base", "common/port", "common/port/files", "common/input/csv", "common/input/ndjson"],
    # The CSV/TSV reader kept in a sub-folder (the folder-size rule): a
    # record reader like the others, made by the registry (record_format).
    "common/input/csv": ["common/base", "common/port", "common/port/files", "common/input"],
    # The NDJSON line parser's state and grammar walk, its second file kept
    # in a sub-folder (the folder-size rule): internal to the parser.
    "common/input/ndjson": ["common/base", "common/input"],
    "common/expr": ["common/base", "common/input"],
    # The sketches are measures kept in a sub-folder (the folder-size rule):
    # they implement measure.h, and the registry includes them.
    "common/measures": ["common/base", "common/measures/sketches"],
    "common/measures/sketches": ["common/base", "common/measures"],
    "common/lookup": ["common/base", "common/port", "common/port/files", "common/input", "common/expr"],
    "common/job": ["common/base", "common/port", "common/port/files", "common/input", "common/expr", "common/measures",
                   "common/lookup"],
    # The sketches are part of the measures layer (a sub-folder only by the
    # folder-size rule): measure_column calls their final classes directly.
    "common/partial": ["common/base", "common/port", "common/port/files", "common/input", "common/expr", "common/measures",
                       "common/measures/sketches", "common/lookup", "common/job"],
    "common/transport": ["common/base", "common/port", "common/port/files", "common/input", "common/job", "common/partial"],
    "coordinator/output": COMMON,
    "coordinator/rundir": COMMON,
    "coordinator/merge": COMMON,
    "coordinator/run": COMMON + ["coordinator/output", "coordinator/rundir", "coordinator/merge",
                                 "coordinator/run/result"],
    # The output stage's drivers kept in a sub-folder of run (the folder-size
    # rule): they read the run's Merger, and run_engine calls them.
    "coordinator/run/result": COMMON + ["coordinator/output", "coordinator/rundir", "coordinator/merge",
                                        "coordinator/run"],
    "coordinator/report": COMMON + ["coordinator/rundir", "coordinator/run"],
    "coordinator/cli": COMMON + ["coordinator/output", "coordinator/rundir", "coordinator/run",
                                 "coordinator/report"],
    "worker": COMMON,
}
MAX_FILES = 30
INCLUDE = re.compile(r'^\s*#\s*include\s+"([^"]+)"', re.M)


def folder_of(path):
    return os.path.dirname(path)


def main():
    ap = argparse.ArgumentParser()
    ap.add_argument("--source-dir", required=True)
    ap.add_argument("--bin-dir")  # accepted for symmetry with the e2e tests
    args = ap.parse_args()
    root = args.source_dir
    files = subprocess.check_output(["git", "-C", root, "ls-files", "common", "coordinator", "worker"],
                                    text=True).split()
    files = [f for f in files if f.endswith((".h", ".cc"))]
    bad = []
    counts = {}
    for f in files:
        d = folder_of(f)
        counts[d] = counts.get(d, 0) + 1
        if d not in ALLOWED:
            bad.append(f"{f}: folder {d} has no row in the layering table (tests/house/test_house_rules.py)")
            continue
        text = open(os.path.join(root, f), encoding="utf-8").read()
        for inc in INCLUDE.findall(text):
            target = folder_of(inc)
            if target == d or target in ALLOWED[d]:
                continue
            bad.append(f"{f}: includes {inc}, but {d} may include only {', '.join(ALLOWED[d]) or 'itself'}")
        if f.endswith(".h") and not text.startswith("//"):
            bad.append(f"{f}: a header opens with its contract comment")
        if d.startswith(("coordinator", "worker")) and re.search(r"^\s*#\s*if", text, re.M):
            bad.append(f"{f}: preprocessor conditional outside common/ (put OS code behind common/port/)")
        if "strerror" in text and f != "common/port/os_error.cc":
            bad.append(f"{f}: errno becomes text only in common/port/os_error.cc")
        if re.search(r"/work/|\.\./shared/", text):
            bad.append(f"{f}: cites a path outside the repository")
    for d, n in sorted(counts.items()):
        if n > MAX_FILES:
            bad.append(f"{d}: {n} source files (at most {MAX_FILES} a folder)")
    for b in bad:
        print(b)
    print(f"{len(files)} files checked, {len(bad)} breaches")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main())
