#!/usr/bin/env python3
"""The benchmark job written by hand, the way a user would without fanfold:
Python 3 standard library only, json (or csv) + dicts, one process or a
multiprocessing.Pool over the files. .zst files are read through the `zstd`
command (the standard library has no zstd module), .gz with gzip.

Job (bench/jobs/*.json): drop records whose event is 'reboot' (or absent);
group by (UTC hour of day of the record's time, first four characters of the
lamp id); per group: records, sum of power_w, mean of latency_ms, distinct
lamps and the 95th percentile of latency_ms (Hyndman & Fan 1996 type 7).
Distinct lamps and the percentile are exact here; fanfold's are sketches.

Numbers follow fanfold's numeric view: JSON numbers, and text that is a whole
decimal number ("62.0"); anything else (null, "n/a", booleans) is skipped.
A line that is not a JSON object, or a CSV row whose field count differs
from the header's, is malformed and skipped.

Usage: baseline.py [--format ndjson|csv] [--processes N] [-o OUT.json] FILE...
Writes a JSON array of rows {hod, bucket, events, energy_w, latency_mean,
lamps, latency_p95}, sorted by (hod, bucket) with null first.
"""

import argparse
import csv
import datetime
import gzip
import io
import json
import math
import multiprocessing
import re
import subprocess
import sys

_DECIMAL = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?\Z")


def number(v):
    if isinstance(v, bool):
        return None
    if isinstance(v, (int, float)):
        return float(v)
    if isinstance(v, str) and _DECIMAL.match(v):
        return float(v)
    return None


def epoch_seconds(ts, ts_ms):
    """coalesce(time(ts), time_ms(ts_ms)): ISO 8601 text (naive = UTC) or a
    number of seconds; else epoch milliseconds."""
    if isinstance(ts, str):
        try:
            d = datetime.datetime.fromisoformat(ts)
            if d.tzinfo is None:
                d = d.replace(tzinfo=datetime.timezone.utc)
            return d.timestamp()
        except ValueError:
            n = number(ts)
            if n is not None:
                return n
    elif ts is not None:
        n = number(ts)
        if n is not None:
            return n
    if ts_ms is not None:
        n = number(ts_ms)
        if n is not None:
            return n / 1000.0
        if isinstance(ts_ms, str):
            return epoch_seconds(ts_ms, None)
    return None


def open_text_lines(path):
    """The file's decompressed lines, as bytes."""
    if path.endswith(".zst"):
        proc = subprocess.Popen(["zstd", "-dcq", "--", path], stdout=subprocess.PIPE)
        try:
            yield from proc.stdout
        finally:
            proc.stdout.close()
            if proc.wait() != 0:
                raise RuntimeError("zstd failed on " + path)
    elif path.endswith(".gz"):
        with gzip.open(path, "rb") as f:
            yield from f
    else:
        with open(path, "rb") as f:
            yield from f


def ndjson_records(path):
    for line in open_text_lines(path):
        try:
            rec = json.loads(line.decode("utf-8"))
        except ValueError:  # UnicodeDecodeError is a ValueError too
            continue
        if isinstance(rec, dict):
            yield rec


def csv_records(path):
    data = b"".join(open_text_lines(path)).decode("utf-8", errors="surrogateescape")
    rows = csv.reader(io.StringIO(data, newline=""))
    header = next(rows, None)
    if header is None:
        return
    width = len(header)
    for row in rows:
        if len(row) == width:
            yield {k: v for k, v in zip(header, row) if v != ""}  # empty cell = absent


def process_file(args):
    """Partial result of one file: {(hod, bucket): [events, energy, lat_sum,
    lat_n, lamps set, latency list]}."""
    path, fmt = args
    groups = {}
    records = ndjson_records(path) if fmt == "ndjson" else csv_records(path)
    for rec in records:
        event = rec.get("event")
        if event is None or event == "reboot":
            continue
        t = epoch_seconds(rec.get("ts"), rec.get("ts_ms"))
        hod = None if t is None else int(math.floor(t) // 3600 % 24)
        lamp = rec.get("lamp")
        bucket = lamp[:4] if isinstance(lamp, str) else None
        g = groups.get((hod, bucket))
        if g is None:
            g = groups[(hod, bucket)] = [0, 0.0, 0.0, 0, set(), []]
        g[0] += 1
        p = number(rec.get("power_w"))
        if p is not None:
            g[1] += p
        lat = number(rec.get("latency_ms"))
        if lat is not None:
            g[2] += lat
            g[3] += 1
            g[5].append(lat)
        if lamp is not None:
            g[4].add(lamp)
    return groups


def merge(total, part):
    for key, g in part.items():
        t = total.get(key)
        if t is None:
            total[key] = g
            continue
        t[0] += g[0]
        t[1] += g[1]
        t[2] += g[2]
        t[3] += g[3]
        t[4] |= g[4]
        t[5].extend(g[5])


def type7(sorted_values, p):
    """Hyndman & Fan (1996) definition 7 on sorted data."""
    h = (len(sorted_values) - 1) * p
    j = math.floor(h)
    if j + 1 >= len(sorted_values):
        return sorted_values[-1]
    return sorted_values[j] + (h - j) * (sorted_values[j + 1] - sorted_values[j])


def sort_key(key):
    return tuple((0, 0) if v is None else (1, v) if isinstance(v, (int, float)) else (2, v.encode())
                 for v in key)


def rows_of(total):
    rows = []
    for key in sorted(total, key=sort_key):
        g = total[key]
        lats = sorted(g[5])
        rows.append({
            "hod": key[0], "bucket": key[1], "events": g[0],
            "energy_w": g[1], "latency_mean": g[2] / g[3] if g[3] else None,
            "lamps": len(g[4]), "latency_p95": type7(lats, 0.95) if lats else None,
        })
    return rows


def main():
    ap = argparse.ArgumentParser(description=__doc__.split("\n\n")[0])
    ap.add_argument("files", nargs="+")
    ap.add_argument("--format", choices=["ndjson", "csv"], default="ndjson")
    ap.add_argument("--processes", type=int, default=1, help="1 = one process; N = a Pool of N")
    ap.add_argument("-o", "--output", default="-")
    a = ap.parse_args()
    jobs = [(f, a.format) for f in sorted(set(a.files))]
    total = {}
    if a.processes <= 1:
        for j in jobs:
            merge(total, process_file(j))
    else:
        with multiprocessing.Pool(a.processes) as pool:
            for part in pool.imap(process_file, jobs, chunksize=1):  # file order
                merge(total, part)
    text = json.dumps(rows_of(total), indent=0) + "\n"
    if a.output == "-":
        sys.stdout.write(text)
    else:
        with open(a.output, "w") as f:
            f.write(text)


if __name__ == "__main__":
    main()
