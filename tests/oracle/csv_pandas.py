"""csv_pandas.py: read_csv checked against pandas and Python's csv module.

Writes messy CSV files of an invented orchard survey (quoted fields with
delimiters, doubled quotes and line breaks, UTF-8, missing-value tokens,
exponents, a byte-order mark, CRLF, semicolons, tabs), reads each with
sluice, and compares with pandas (float_precision="round_trip", so both
sides parse decimals exactly):
  - every cell: sluice writes the frame back with f:write_csv, Python's csv
    module reads that file, and each number must equal pandas' value bit for
    bit, each text pandas' text, each missing cell a missing one;
  - f:summary(): n, missing, mean, sd, quartiles (pandas' 'linear', R's type
    7), min and max of every numeric column, to 1e-12 relative; the number
    of levels of every text column.
Prints "N passed, N failed".  Skips (exit 0) when pandas is not installed.
Environment: B, the build directory (default build).
"""
import csv
import math
import os
import random
import subprocess
import sys
import tempfile

try:
    import pandas as pd
except ImportError:
    print("pandas not installed: skipped")
    print("0 passed, 0 failed")
    sys.exit(0)

B = os.environ.get("B", "build")
SLUICE = os.path.join(B, "sluice")
MISSING = ["", "NA", "NaN", "."]

LUA = r"""
local path, out, delim = ...
local f = read_csv(path, {delim = delim ~= "" and delim or nil})
f:write_csv(out)
for _, r in ipairs(f:summary()) do
  local parts = {r.column, r.type, r.n, r.missing, r.levels or "-"}
  for _, k in ipairs{"mean", "sd", "min", "q1", "median", "q3", "max"} do
    parts[#parts + 1] = r[k] and string.format("%.17g", r[k]) or "-"
  end
  print(table.concat(parts, "\t"))
end
"""


def quote(s, delim):
    """RFC 4180 quoting when needed, as a spreadsheet writes it."""
    if any(c in s for c in (delim, '"', "\n", "\r")) or s != s.strip():
        return '"' + s.replace('"', '""') + '"'
    return s


def number(rng):
    """A measurement as people write them."""
    k = rng.randrange(10)
    x = rng.uniform(-50, 150)
    if k == 0:
        return "%.3e" % (x * 1000)
    if k == 1:
        return str(rng.randrange(-5, 300))
    if k == 2:
        return repr(x)
    return "%.*f" % (rng.randrange(1, 7), x)


NOTES = ["stake, tall", 'said "prune"', "two\nlines", "café récolte", "plain",
         "  padded  ", "semi;colon", "tab\there", "ünïcödé ☂"]
VARIETIES = ["gala", "fuji", "braeburn", "cox", "jonagold"]


def make_file(path, rng, rows, delim, bom, crlf):
    """Write one messy file; returns nothing (pandas is the reference)."""
    header = ["plot", "variety", "rain", "yield", "note", "pests"]
    nl = "\r\n" if crlf else "\n"
    lines = [delim.join(header)]
    for i in range(rows):
        cells = [str(i + 1), rng.choice(VARIETIES + [""]),
                 rng.choice(MISSING) if rng.random() < 0.1 else number(rng),
                 rng.choice(MISSING) if rng.random() < 0.2 else number(rng),
                 rng.choice(NOTES),
                 "" if rng.random() < 0.05 else str(rng.randrange(12))]
        lines.append(delim.join(quote(c, delim) for c in cells))
    text = nl.join(lines) + (nl if rng.random() < 0.5 else "")
    with open(path, "wb") as f:
        f.write((b"\xef\xbb\xbf" if bom else b"") + text.encode("utf-8"))


def close(a, b):
    if a is None or b is None:
        return a is None and b is None
    return abs(a - b) <= 1e-12 * max(1.0, abs(b))


def check(path, delim, given, tmp):
    """Compare sluice and pandas on one file; returns a list of failures."""
    fails = []
    out = os.path.join(tmp, "back.csv")
    script = os.path.join(tmp, "dump.lua")
    with open(script, "w") as f:
        f.write(LUA)
    r = subprocess.run([SLUICE, script, path, out, delim if given else ""],
                       capture_output=True, text=True)
    if r.returncode != 0:
        return ["%s: sluice failed: %s" % (path, r.stderr.strip())]
    ref = pd.read_csv(path, sep=delim, encoding="utf-8-sig", keep_default_na=False,
                      na_values=MISSING, float_precision="round_trip")
    with open(out, newline="", encoding="utf-8") as f:
        back = list(csv.reader(f))
    if back[0] != list(ref.columns):
        fails.append("%s: names %s, pandas %s" % (path, back[0], list(ref.columns)))
        return fails
    if len(back) - 1 != len(ref):
        return fails + ["%s: %d rows, pandas %d" % (path, len(back) - 1, len(ref))]
    for j, name in enumerate(ref.columns):
        col = ref[name]
        numeric = col.dtype.kind in "if"
        for i, v in enumerate(col):
            s = back[i + 1][j]
            if numeric:
                want = None if pd.isna(v) else float(v)
                got = None if s == "" else float(s)
                same = (want is None and got is None) or (
                    want is not None and got is not None and
                    math.copysign(1, want) == math.copysign(1, got) and want == got)
            else:
                same = (s == "") if pd.isna(v) else (s == v)
            if not same:
                fails.append("%s: row %d, %s: sluice %r, pandas %r" % (path, i + 1, name, s, v))
                break
    for line in r.stdout.splitlines():
        p = line.split("\t")
        name, kind = p[0], p[1]
        col = ref[name]
        if (kind == "number") != (col.dtype.kind in "if"):
            fails.append("%s: %s is %s, pandas %s" % (path, name, kind, col.dtype))
            continue
        n, miss = int(p[2]), int(p[3])
        if n != col.notna().sum() or miss != col.isna().sum():
            fails.append("%s: %s n/missing %d/%d" % (path, name, n, miss))
        if kind == "category":
            if int(p[4]) != col.dropna().nunique():
                fails.append("%s: %s has %s levels, pandas %d" % (path, name, p[4],
                                                                  col.dropna().nunique()))
            continue
        s = col.dropna()
        want = [s.mean(), s.std(), s.min(), s.quantile(.25), s.median(), s.quantile(.75), s.max()]
        got = [None if x == "-" else float(x) for x in p[5:12]]
        for k, (g, w) in enumerate(zip(got, want)):
            if not close(g, float(w)):
                fails.append("%s: %s stat %d: sluice %r, pandas %r" % (path, name, k, g, w))
    return fails


def main():
    rng = random.Random(20240611)
    passed = failed = 0
    with tempfile.TemporaryDirectory() as tmp:
        cases = [(",", False, False, False), (";", True, True, False), ("\t", False, True, False),
                 (",", True, False, True), (";", False, False, True)]
        for k, (delim, bom, crlf, given) in enumerate(cases):
            for rows in (7, 300, 5000):
                path = os.path.join(tmp, "orchard_%d_%d.csv" % (k, rows))
                make_file(path, rng, rows, delim, bom, crlf)
                fails = check(path, delim, given, tmp)
                if fails:
                    failed += 1
                    print("FAIL", "\n     ".join(fails[:5]))
                else:
                    passed += 1
    print("%d passed, %d failed" % (passed, failed))
    return 1 if failed else 0


if __name__ == "__main__":
    sys.exit(main())
