#!/usr/bin/env python3
"""Compare two reference-vector folders written by generate.py.

usage: compare.py EXPECTED_DIR ACTUAL_DIR

- inputs/*.f64 must be the same set of files, byte for byte;
- vectors.json must match recursively: same keys, same list lengths, equal strings, booleans and
  nulls, and numbers within REL_TOL relative or ABS_TOL absolute (NaN matches NaN).

Prints the first differences and exits 1 on a mismatch (2 on bad usage or unreadable files);
otherwise prints one OK line with counts and exits 0. Uses only the standard library.
"""
import json
import math
import os
import sys

# Regenerating with the same pinned numpy/scipy is normally bit-exact; the slack allows for a
# different CPU's rounding in FFT kernels, far below the 1e-9 the Rust tests demand.
REL_TOL = 1e-12
# Numbers this close count as equal whatever their ratio (denormal-level rounding).
ABS_TOL = 1e-300
# Differences listed before giving up.
MAX_REPORTED = 20


class Comparison:
    def __init__(self):
        self.differences = []
        self.total_differences = 0
        self.numbers = 0
        self.strings = 0
        self.max_rel = 0.0

    def differ(self, path, message):
        self.total_differences += 1
        if len(self.differences) < MAX_REPORTED:
            self.differences.append(f"{path or '<root>'}: {message}")

    def numbers_match(self, a, b):
        if math.isnan(a) or math.isnan(b):
            return math.isnan(a) and math.isnan(b)
        if a == b:
            return True
        diff = abs(a - b)
        scale = max(abs(a), abs(b))
        if scale > 0 and math.isfinite(diff):
            self.max_rel = max(self.max_rel, diff / scale)
        return diff <= ABS_TOL or diff <= REL_TOL * scale

    def walk(self, expected, actual, path=""):
        kind_e, kind_a = kind(expected), kind(actual)
        if kind_e != kind_a:
            self.differ(path, f"type {kind_e} expected, got {kind_a}")
            return
        if kind_e == "object":
            for key in sorted(set(expected) | set(actual)):
                sub = f"{path}.{key}" if path else key
                if key not in actual:
                    self.differ(sub, "missing")
                elif key not in expected:
                    self.differ(sub, "unexpected key")
                else:
                    self.walk(expected[key], actual[key], sub)
        elif kind_e == "array":
            if len(expected) != len(actual):
                self.differ(path, f"length {len(expected)} expected, got {len(actual)}")
                return
            for i, (e, a) in enumerate(zip(expected, actual)):
                self.walk(e, a, f"{path}[{i}]")
        elif kind_e == "number":
            self.numbers += 1
            if not self.numbers_match(float(expected), float(actual)):
                rel = abs(expected - actual) / max(abs(expected), abs(actual))
                self.differ(path, f"{expected!r} expected, got {actual!r} (relative {rel:.3g})")
        elif kind_e == "string":
            self.strings += 1
            if expected != actual:
                self.differ(path, f"{expected!r} expected, got {actual!r}")
        elif expected != actual:  # booleans and null
            self.differ(path, f"{expected!r} expected, got {actual!r}")


def kind(value):
    if isinstance(value, bool):
        return "boolean"
    if isinstance(value, (int, float)):
        return "number"
    if isinstance(value, str):
        return "string"
    if isinstance(value, list):
        return "array"
    if isinstance(value, dict):
        return "object"
    if value is None:
        return "null"
    return type(value).__name__


def input_files(folder):
    inputs = os.path.join(folder, "inputs")
    if not os.path.isdir(inputs):
        return set()
    return {name for name in os.listdir(inputs) if name.endswith(".f64")}


def read_bytes(path):
    with open(path, "rb") as fh:
        return fh.read()


def compare_inputs(expected_dir, actual_dir, report):
    expected, actual = input_files(expected_dir), input_files(actual_dir)
    for name in sorted(expected - actual):
        report.differ(f"inputs/{name}", "missing from the regenerated folder")
    for name in sorted(actual - expected):
        report.differ(f"inputs/{name}", "not in the committed folder")
    same = 0
    for name in sorted(expected & actual):
        e = read_bytes(os.path.join(expected_dir, "inputs", name))
        a = read_bytes(os.path.join(actual_dir, "inputs", name))
        if e == a:
            same += 1
            continue
        if len(e) != len(a):
            report.differ(f"inputs/{name}", f"{len(e)} bytes expected, got {len(a)}")
        else:
            first = next(i for i in range(len(e)) if e[i] != a[i])
            report.differ(f"inputs/{name}", f"bytes differ, first at offset {first} (sample {first // 8})")
    return same, len(expected)


def main(argv):
    if len(argv) != 3:
        print(__doc__.strip().splitlines()[2], file=sys.stderr)
        return 2
    expected_dir, actual_dir = argv[1], argv[2]
    try:
        with open(os.path.join(expected_dir, "vectors.json")) as fh:
            expected = json.load(fh)
        with open(os.path.join(actual_dir, "vectors.json")) as fh:
            actual = json.load(fh)
    except (OSError, ValueError) as err:
        print(f"compare: cannot read vectors.json: {err}", file=sys.stderr)
        return 2
    report = Comparison()
    same_inputs, all_inputs = compare_inputs(expected_dir, actual_dir, report)
    report.walk(expected, actual)
    if report.total_differences:
        print(f"compare: MISMATCH between {expected_dir} and {actual_dir}: "
              f"{report.total_differences} difference(s); first {len(report.differences)}:")
        for line in report.differences:
            print(f"  {line}")
        return 1
    if all_inputs == 0:
        print(f"compare: no inputs/*.f64 in {expected_dir}", file=sys.stderr)
        return 1
    print(f"compare: OK: {same_inputs} input files byte-identical; vectors.json: {report.numbers} numbers "
          f"within {REL_TOL:g} relative (largest {report.max_rel:.3g}), {report.strings} strings equal")
    return 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
