#!/usr/bin/env python3
"""Compare two trees of generated reference data numerically.

    python3 tests/reference/check.py DIR_A DIR_B

Typical use (CI): generate.py --out $tmp && check.py tests/reference $tmp

Every *.csv file must exist in both trees, with identical comment lines, column names, row
count and non-numeric cells. Numeric cells are compared with the per-file tolerance below
(|a - b| <= atol + rtol * |b|). Exits 1 listing every difference, or 0 if the trees agree.
"""

import math
import os
import sys

# (rtol, atol, atol_of_column_max): the absolute tolerance is atol + atol_of_column_max *
# max|column| (for a column with a large dynamic range, e.g. a spectrum: "relative to its peak").
# Integers (cells without '.', 'e', 'inf' or 'nan') are always compared exactly.
TOLERANCES = {
    # mpmath is arbitrary-precision pure Python: platform-independent, correctly rounded.
    "math.csv": (0.0, 0.0, 0.0),
    # numpy's cos/exp/i0 can differ by an ulp or two between CPUs (SIMD loops vs libm); the
    # absolute floor covers samples that are 0 up to rounding (e.g. Blackman's ends, -1.4e-17).
    "windows/": (1e-12, 1e-15, 0.0),
    # Sums and DTFTs of those windows: a few ulp, amplified a little by log10 and subtraction.
    "window_factors.csv": (1e-10, 1e-13, 0.0),
    # float32 samples: numpy's seeded generator is reproducible, and the Rust tests need exactly
    # these samples (a changed sample would also change every spectrum computed from it).
    "spectra_input.csv": (0.0, 0.0, 0.0),
    # scipy welch/periodogram in float64 (pocketfft): last-bit differences only; bins that are 0
    # up to rounding (DC after detrending, ~1e-33) need a floor relative to the column's peak.
    "spectra.csv": (1e-9, 0.0, 1e-12),
    # Case parameters: integers, names and fs, all exact.
    "spectra_cases.csv": (0.0, 0.0, 0.0),
    "spectra_examples.csv": (1e-9, 1e-15, 0.0),
    # CMSIS-DSP fixed-point FFTs are integer arithmetic: bit-exact everywhere.
    "cmsis_fixed.csv": (0.0, 0.0, 0.0),
    # Figures from exact integers against a float64 numpy FFT: dB and LSB values, last-bit
    # noise of the FFT amplified by logs of small error powers (Q31: ~140 dB SNR).
    "cmsis_fixed_summary.csv": (1e-9, 1e-6, 0.0),
    # scipy.signal responses in float64 (gen_levels.py): last-bit differences only.
    "levels_response.csv": (1e-9, 0.0, 0.0),
    # gen_multi.py: float32 inputs (an ulp of float64 filtering may flip one rounding), then
    # float64 scipy spectra, responses and designs (last-bit noise; lines that are 0 up to
    # rounding need the floor relative to the column's peak).
    "multi/input.csv": (1.2e-7, 0.0, 1e-9), "multi/": (1e-9, 1e-15, 1e-12),
}
# Per-(file, column) overrides.
COLUMN_TOLERANCES = {
    # The sidelobe peak is flat: a 1e-16 change of |W| moves its location by ~1e-8 bin; the
    # bounded optimiser itself stops at xatol = 1e-9.
    ("window_factors.csv", "psll_bin"): (0.0, 1e-6, 0.0),
    ("window_factors.csv", "psll_db"): (0.0, 1e-8, 0.0),
    # A point of the 1/32-bin grid.
    ("window_factors.csv", "first_minimum_bin"): (0.0, 0.0, 0.0),
}


def tolerance(rel, column):
    if (rel, column) in COLUMN_TOLERANCES:
        return COLUMN_TOLERANCES[(rel, column)]
    for key, tol in TOLERANCES.items():
        if rel == key or (key.endswith("/") and rel.startswith(key)):
            return tol
    return None


def csv_files(root):
    found = set()
    for dirpath, _, names in os.walk(root):
        for name in names:
            if name.endswith(".csv"):
                found.add(os.path.relpath(os.path.join(dirpath, name), root).replace(os.sep, "/"))
    return found


def read(path):
    comments, header, rows = [], None, []
    with open(path) as fh:
        for line in fh:
            line = line.rstrip("\n")
            if header is None and line.startswith("#"):
                comments.append(line)
            elif header is None:
                header = line.split(",")
            else:
                rows.append(line.split(","))
    return comments, header or [], rows


def is_int(s):
    return s.lstrip("-").isdigit()


def as_float(s):
    try:
        return float(s)
    except ValueError:
        return None


def compare(rel, pa, pb, problems, limit=10):
    ca, ha, ra = read(pa)
    cb, hb, rb = read(pb)
    if ca != cb:
        diff = next((i for i, (x, y) in enumerate(zip(ca, cb)) if x != y), min(len(ca), len(cb)))
        problems.append(f"{rel}: comment header differs at comment line {diff + 1}")
    if ha != hb:
        problems.append(f"{rel}: column names differ: {ha} vs {hb}")
        return
    if len(ra) != len(rb):
        problems.append(f"{rel}: {len(ra)} data rows vs {len(rb)}")
        return
    colmax = []
    for j in range(len(ha)):
        vals = [abs(v) for r in rb if j < len(r) for v in [as_float(r[j])]
                if v is not None and math.isfinite(v)]
        colmax.append(max(vals) if vals else 0.0)
    count = 0
    for i, (xa, xb) in enumerate(zip(ra, rb)):
        if len(xa) != len(xb) or len(xa) != len(ha):
            problems.append(f"{rel}: data row {i + 1} has {len(xa)} / {len(xb)} cells, expected {len(ha)}")
            count += 1
            continue
        for j, (a, b) in enumerate(zip(xa, xb)):
            if a == b:
                continue
            fa, fb = as_float(a), as_float(b)
            msg = None
            if fa is None or fb is None or is_int(a) and is_int(b):
                msg = f"{a!r} vs {b!r} (must be identical)"
            elif not (math.isfinite(fa) and math.isfinite(fb)):
                if not (fa == fb or (math.isnan(fa) and math.isnan(fb))):
                    msg = f"{a} vs {b}"
            else:
                tol = tolerance(rel, ha[j])
                if tol is None:
                    msg = f"{a} vs {b} (no tolerance defined for this file)"
                else:
                    rtol, atol, atol_max = tol
                    lim = atol + atol_max * colmax[j] + rtol * abs(fb)
                    if abs(fa - fb) > lim:
                        msg = (f"{a} vs {b}: |diff| = {abs(fa - fb):.3g} > {lim:.3g} "
                               f"(rtol {rtol:g}, atol {atol:g}, atol/colmax {atol_max:g})")
            if msg:
                count += 1
                if count <= limit:
                    problems.append(f"{rel}: row {i + 1} column '{ha[j]}': {msg}")
    if count > limit:
        problems.append(f"{rel}: ... {count - limit} more differing cells")


def main():
    if len(sys.argv) != 3:
        sys.exit(__doc__)
    a, b = sys.argv[1], sys.argv[2]
    fa, fb = csv_files(a), csv_files(b)
    problems = [f"missing in {b}: {p}" for p in sorted(fa - fb)]
    problems += [f"missing in {a}: {p}" for p in sorted(fb - fa)]
    for rel in sorted(fa & fb):
        if tolerance(rel, None) is None:
            problems.append(f"{rel}: no tolerance rule in check.py for this file")
            continue
        compare(rel, os.path.join(a, rel), os.path.join(b, rel), problems)
    if not fa and not fb:
        problems.append("no .csv files found in either tree")
    if problems:
        print(f"check.py: {a} and {b} differ:", file=sys.stderr)
        for p in problems:
            print("  " + p, file=sys.stderr)
        sys.exit(1)
    print(f"check.py: {len(fa)} files agree within tolerance ({a} vs {b})")


if __name__ == "__main__":
    main()
