"""Independent reference answers for fanfold's end-to-end tests.

Python 3 standard library only (json, csv, gzip, math.fsum, statistics,
collections.Counter, bisect, zoneinfo); .zst shards are decompressed with
the `zstd` command of Debian's zstd package. Nothing here parses fanfold's expression language:
each test writes its filter, keys and measure arguments as Python lambdas
over the parsed records, following the job-file spec's semantics:

  - a field that is absent is MISSING; JSON null is None;
  - numeric measures use numbers and strings that are a complete decimal
    number ("61.5"), and skip everything else;
  - comparisons with missing/null are false;
  - time(): ISO 8601 text (offsets honoured) or epoch seconds -> epoch seconds;
    time_ms(): numbers are epoch milliseconds;
  - period_start labels are UTC: "2026-03-05T14", "2026-03-05", "2026-W10";
    with a zone, day/week/month labels are the local date (zoneinfo);
  - a measure's `only` keeps the records it reads; `rows` adds columns
    computed from a finished row and drops the rows its keep rejects.
"""

import bisect
import collections
import csv
import datetime
import functools
import gzip
import io
import json
import math
import re
import statistics
import subprocess
import zoneinfo


class _Missing:
    """The value of an absent field (distinct from JSON null = None)."""

    def __repr__(self):
        return "MISSING"

    def __bool__(self):
        return False


MISSING = _Missing()


# ---------------------------------------------------------------- reading

def read_shard_bytes(path):
    """Decompressed bytes of a shard, chosen by its last extension."""
    if path.endswith(".zst"):
        # Debian's zstd CLI; check=True makes a corrupt frame an error.
        done = subprocess.run(["zstd", "-dc", "--", path], stdout=subprocess.PIPE,
                              stderr=subprocess.PIPE, check=True)
        return done.stdout
    if path.endswith(".gz"):
        with gzip.open(path, "rb") as f:
            return f.read()
    with open(path, "rb") as f:
        return f.read()


def split_lines(data):
    """Lines of a shard without their terminators; a final newline adds no line."""
    lines = data.split(b"\n")
    if lines and lines[-1] == b"":
        lines.pop()
    return lines


def parse_ndjson(data):
    """(records, malformed): records are dicts; a line that is not one JSON
    object (per the json module, strict UTF-8) counts as malformed."""
    records, malformed = [], 0
    for line in split_lines(data):
        if line.endswith(b"\r"):
            line = line[:-1]
        try:
            value = json.loads(line.decode("utf-8"))
        except (UnicodeDecodeError, ValueError):
            malformed += 1
            continue
        if isinstance(value, dict):
            records.append(value)
        else:
            malformed += 1
    return records, malformed


def parse_csv(data, delimiter=","):
    """(records, malformed): RFC 4180 via the csv module; a row whose field
    count differs from the header's is malformed; an empty cell is MISSING
    (the key is left out of the record dict)."""
    text = data.decode("utf-8", errors="surrogateescape")
    reader = csv.reader(io.StringIO(text, newline=""), delimiter=delimiter)
    header = next(reader, None)
    if header is None:
        return [], 0
    records, malformed = [], 0
    for row in reader:
        if len(row) != len(header):
            malformed += 1
            continue
        records.append({k: v for k, v in zip(header, row) if v != ""})
    return records, malformed


def load_shard(path, fmt=None):
    """(records, malformed) of one shard file; fmt inferred from the name."""
    if fmt is None:
        name = path
        for suffix in (".zst", ".gz"):
            if name.endswith(suffix):
                name = name[: -len(suffix)]
        fmt = "csv" if name.endswith(".csv") else "tsv" if name.endswith(".tsv") else "ndjson"
    data = read_shard_bytes(path)
    if fmt == "ndjson":
        return parse_ndjson(data)
    return parse_csv(data, "\t" if fmt == "tsv" else ",")


# ---------------------------------------------------------------- fields

def ptr(record, pointer):
    """RFC 6901 JSON Pointer lookup; MISSING where any step is absent."""
    if pointer == "":
        return record
    cur = record
    for token in pointer[1:].split("/"):
        token = token.replace("~1", "/").replace("~0", "~")
        if isinstance(cur, dict):
            if token not in cur:
                return MISSING
            cur = cur[token]
        elif isinstance(cur, list):
            if not re.fullmatch(r"0|[1-9][0-9]*", token) or int(token) >= len(cur):
                return MISSING
            cur = cur[int(token)]
        else:
            return MISSING
    return cur


def col(record, name):
    """A CSV/TSV column; MISSING for an empty cell."""
    return record.get(name, MISSING)


_DECIMAL = re.compile(r"[+-]?(?:[0-9]+(?:\.[0-9]*)?|\.[0-9]+)(?:[eE][+-]?[0-9]+)?")


def num(v):
    """The numeric view of a value, or None: numbers, and strings that are a
    complete decimal number. Booleans are not numbers."""
    if isinstance(v, bool):
        return None
    if isinstance(v, (int, float)):
        return float(v)
    if isinstance(v, str) and _DECIMAL.fullmatch(v):
        return float(v)
    return None


def usable_number(v):
    """What docs/measures.md says numeric measures take: a JSON number (not
    a bool, kept as int or float) or a string that is wholly a decimal
    number (as float); None otherwise, and for NaN."""
    if isinstance(v, bool):
        return None
    if isinstance(v, str) and _DECIMAL.fullmatch(v):
        v = float(v)
    if isinstance(v, (int, float)) and v == v:
        return v
    return None


def present(v):
    return v is not MISSING and v is not None


def coalesce(*values):
    for v in values:
        if present(v):
            return v
    return None


def time_of(v):
    """time(x): ISO 8601 text or epoch seconds -> epoch seconds, else None."""
    if isinstance(v, bool) or not present(v):
        return None
    if isinstance(v, (int, float)):
        return float(v)
    if isinstance(v, str):
        try:
            dt = datetime.datetime.fromisoformat(v)
        except ValueError:
            n = num(v)
            return n
        if dt.tzinfo is None:
            dt = dt.replace(tzinfo=datetime.timezone.utc)
        return dt.timestamp()
    return None


def time_ms_of(v):
    """time_ms(x): numbers (and numeric text) are epoch milliseconds."""
    if isinstance(v, bool) or not present(v):
        return None
    n = num(v)
    if n is not None:
        return n / 1000.0
    return time_of(v)


def _utc(t):
    return datetime.datetime.fromtimestamp(math.floor(t), datetime.timezone.utc)


def period_start(t, unit, zone=None):
    if t is None:
        return None
    d = _utc(t)
    if zone is not None:
        # A zone cuts the local calendar: Python's zoneinfo over the system's
        # tz database (Debian's tzdata), the database fanfold reads too. Only
        # the units labelled by a local date; hour and minute labels carry
        # an offset and are not re-stated here.
        if unit not in ("day", "week", "month"):
            raise ValueError("reference has no zoned period_start for %r" % unit)
        d = d.astimezone(zoneinfo.ZoneInfo(zone))
    if unit == "minute":
        return d.strftime("%Y-%m-%dT%H:%M")
    if unit == "hour":
        return d.strftime("%Y-%m-%dT%H")
    if unit == "day":
        return d.strftime("%Y-%m-%d")
    if unit == "week":
        iso = d.isocalendar()  # ISO 8601 week-numbering year and week
        return "%04d-W%02d" % (iso[0], iso[1])
    if unit == "month":
        return d.strftime("%Y-%m")
    raise ValueError(unit)


def clock_hour(t):
    return None if t is None else _utc(t).hour


def weekday(t):
    return None if t is None else _utc(t).isoweekday()  # 1 = Monday .. 7 = Sunday


# ---------------------------------------------------------------- jobs

class Measure:
    """One measure of a reference job. `of` and `by` map a record to a value;
    `only` (record -> bool) keeps the records the measure reads; `edges` are
    a histogram's bin edges."""

    def __init__(self, name, fn, of=None, by=None, at=None, alpha=0.01, precision=14, k=10,
                 only=None, edges=None):
        self.name, self.fn, self.of, self.by = name, fn, of, by
        self.at, self.alpha, self.precision, self.k = at or [], alpha, precision, k
        self.only, self.edges = only, edges or []

    def columns(self):
        if self.fn in ("quantile", "ddsketch"):
            return [quantile_column(self.name, p) for p in self.at]
        if self.fn == "histogram":
            return histogram_columns(self.name, self.edges)
        return [self.name]


def quantile_column(name, p):
    """"<name>_p<100 p>" in shortest form: 0.5 -> p50, 0.999 -> p99.9."""
    v = 100 * p
    text = repr(v)
    if text.endswith(".0"):
        text = text[:-2]
    return "%s_p%s" % (name, text)


def _edge_text(e):
    """An edge as a histogram column names it; integral edges only here
    (10 -> "10"), which is all the example jobs use."""
    if float(e) != int(e):
        raise ValueError("reference names only integral histogram edges, not %r" % e)
    return str(int(e))


def histogram_columns(name, edges):
    """<name>_below, <name>_<a>_<b> per bin [a, b), <name>_above."""
    bins = ["%s_%s_%s" % (name, _edge_text(a), _edge_text(b)) for a, b in zip(edges, edges[1:])]
    return ["%s_below" % name] + bins + ["%s_above" % name]


class RefJob:
    """A job written out by hand: keep(record) -> bool, group = [(column, fn)];
    rows_add = [(column, fn(row dict) -> value)] and rows_keep(row dict) -> bool
    re-state the job's `rows` step."""

    def __init__(self, group, measures, keep=None, rows_add=None, rows_keep=None):
        self.group, self.measures, self.keep = group, measures, keep
        self.rows_add, self.rows_keep = rows_add or [], rows_keep

    def group_columns(self):
        return [name for name, _ in self.group]


def aggregate(job, records):
    """{group key tuple: {measure name: [collected items]}} in record order."""
    groups = {}
    for r in records:
        if job.keep is not None and not job.keep(r):
            continue
        key = tuple(fn(r) for _, fn in job.group)
        key = tuple(None if k is MISSING else k for k in key)
        slot = groups.get(key)
        if slot is None:
            slot = groups[key] = {m.name: [] for m in job.measures}
        for m in job.measures:
            if m.only is not None and not m.only(r):
                continue  # not this measure's input (job-file spec: `only`)
            if m.fn == "count":
                slot[m.name].append(1)
            elif m.fn in ("at_lowest", "at_highest"):
                slot[m.name].append((m.by(r), m.of(r)))
            else:
                slot[m.name].append(m.of(r))
    return groups


def type7(sorted_values, p):
    """Hyndman & Fan (1996) type 7, via statistics.quantiles(method='inclusive')
    where p is a multiple of 1/n for some n <= 10000."""
    n = len(sorted_values)
    if n == 1 or p <= 0:
        return sorted_values[0]
    if p >= 1:
        return sorted_values[-1]
    for parts in range(2, 10001):
        i = round(p * parts)
        if abs(p * parts - i) < 1e-9 and 0 < i < parts:
            return statistics.quantiles(sorted_values, n=parts, method="inclusive")[i - 1]
    raise ValueError("probability %r is not k/n for n <= 10000" % p)


def _norm_distinct(v):
    n = v if isinstance(v, bool) else (float(v) if isinstance(v, (int, float)) else v)
    return (type(n).__name__, n if not isinstance(n, (list, dict)) else json.dumps(n, sort_keys=True))


def finalize(m, items):
    """Expected output cells of measure m over its collected items:
    {column: value}, where approximate measures give a tuple
    ("ddsketch", lo, hi, alpha) / ("hyperloglog", exact, precision)
    and top gives ("top", Counter, k)."""
    out = {}
    if m.fn == "count":
        out[m.name] = len(items)
        return out
    if m.fn == "count_present":
        out[m.name] = sum(1 for v in items if present(v))
        return out
    if m.fn in ("at_lowest", "at_highest"):
        keyed = [(k, v) for k, v in items if k is not None and present(v)]
        if not keyed:
            out[m.name] = None
        elif m.fn == "at_lowest":
            out[m.name] = min(keyed, key=lambda kv: kv[0])[1]  # min() keeps the earliest tie
        else:
            best = keyed[0]
            for kv in keyed[1:]:
                if kv[0] > best[0]:
                    best = kv
            out[m.name] = best[1]
        return out
    if m.fn in ("distinct", "hyperloglog"):
        exact = len({_norm_distinct(v) for v in items if present(v)})
        out[m.name] = exact if m.fn == "distinct" else ("hyperloglog", exact, m.precision)
        return out
    if m.fn == "top":
        counts = collections.Counter(v for v in items if present(v) and not isinstance(v, (list, dict)))
        out[m.name] = ("top", counts, m.k)
        return out
    nums = [x for x in (num(v) for v in items) if x is not None]
    if m.fn == "histogram":
        # The slot of x is the number of edges <= x: Python's bisect.bisect_right
        # (slot 0 below the range, slot len(edges) at or above the last edge).
        slots = [0] * (len(m.edges) + 1)
        for x in nums:
            slots[bisect.bisect_right(m.edges, x)] += 1
        out.update(zip(histogram_columns(m.name, m.edges), slots))
        return out
    if m.fn == "sum":
        out[m.name] = math.fsum(nums) if nums else None
    elif m.fn == "mean":
        out[m.name] = statistics.mean(nums) if nums else None
    elif m.fn == "variance":
        out[m.name] = statistics.variance(nums) if len(nums) >= 2 else None
    elif m.fn == "stddev":
        out[m.name] = statistics.stdev(nums) if len(nums) >= 2 else None
    elif m.fn == "min":
        out[m.name] = min(nums) if nums else None
    elif m.fn == "max":
        out[m.name] = max(nums) if nums else None
    elif m.fn == "quantile":
        s = sorted(nums)
        for p in m.at:
            out[quantile_column(m.name, p)] = type7(s, p) if s else None
    elif m.fn == "ddsketch":
        s = sorted(nums)
        for p in m.at:
            if not s:
                out[quantile_column(m.name, p)] = None
                continue
            # A rank-based sketch answers with (about) a data value at rank
            # p (n - 1) (0-based), so bracket by the two neighbouring ranks.
            h = p * (len(s) - 1)
            out[quantile_column(m.name, p)] = ("ddsketch", s[math.floor(h)], s[math.ceil(h)], m.alpha)
    else:
        raise ValueError("reference has no measure fn %r" % m.fn)
    return out


def evaluate(job, records):
    """{group key tuple: {column: expected}} for the records (in shard order)."""
    result = {}
    for key, slot in aggregate(job, records).items():
        row = {}
        for m in job.measures:
            row.update(finalize(m, slot[m.name]))
        named = dict(zip(job.group_columns(), key))
        for name, fn in job.rows_add:
            row[name] = fn({**named, **row})
        if job.rows_keep is not None and job.rows_keep({**named, **row}) is not True:
            continue  # the rows step drops it (null is not true)
        result[key] = row
    return result


# ---------------------------------------------------------------- ordering

def _key_rank(v):
    """Group sort order of the spec: null/missing, bools, numbers, strings (bytewise)."""
    if v is None or v is MISSING:
        return (0, 0)
    if isinstance(v, bool):
        return (1, int(v))
    if isinstance(v, (int, float)):
        return (2, float(v))
    if isinstance(v, str):
        return (3, v.encode("utf-8", errors="surrogateescape"))
    return (4, json.dumps(v, sort_keys=True))


def group_sort_key(key):
    return tuple(_key_rank(v) for v in key)


def order_rows(expected, group_columns, order=None, limit=None):
    """Group keys in output order: by the emit.order columns (ties by the
    group key ascending), default ascending by group key; then the limit."""
    order = order or []

    def column_value(key, row, name):
        if name in group_columns:
            return key[group_columns.index(name)]
        return row.get(name)

    def cmp(a, b):
        for spec in order:
            va = _key_rank(column_value(a[0], a[1], spec["by"]))
            vb = _key_rank(column_value(b[0], b[1], spec["by"]))
            if va != vb:
                less = va < vb
                if spec.get("desc"):
                    less = not less
                return -1 if less else 1
        ka, kb = group_sort_key(a[0]), group_sort_key(b[0])
        return -1 if ka < kb else (1 if ka > kb else 0)

    items = sorted(expected.items(), key=functools.cmp_to_key(cmp))
    keys = [k for k, _ in items]
    return keys if limit is None else keys[:limit]
