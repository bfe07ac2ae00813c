"""Whether a regenerated fixture matches the committed one.

    python same_fixture.py COMMITTED FRESH

JSON (or JSON Lines) files are compared value by value: strings, booleans, integers and the
structure exactly, floats within a relative tolerance of 1e-9 (absolute 1e-12 near zero:
filter differences of nearly equal samples lose digits to cancellation),
because numpy and scipy may differ in the last bits between CPUs (their SIMD code paths
differ: common practice to compare floating-point reference data with a tolerance). Other
files are compared byte for byte. Exit 0: same; 1: different (the first differences are
printed); a note on stderr when the files are equal only within the tolerance.
"""

import json
import math
import sys

REL, ABS = 1e-9, 1e-12


def load(path):
    text = open(path, encoding="utf-8").read()
    try:
        return json.loads(text)
    except json.JSONDecodeError:
        return [json.loads(line) for line in text.splitlines() if line.strip()]


def compare(a, b, where, out, worst):
    if isinstance(a, bool) or isinstance(b, bool) or isinstance(a, str) or a is None:
        if a != b or type(a) is not type(b):
            out.append(f"{where}: {a!r} != {b!r}")
    elif isinstance(a, (int, float)) and isinstance(b, (int, float)):
        if isinstance(a, int) and isinstance(b, int):
            if a != b:
                out.append(f"{where}: {a} != {b}")
        elif not (math.isclose(a, b, rel_tol=REL, abs_tol=ABS) or (math.isnan(a) and math.isnan(b))):
            out.append(f"{where}: {a!r} != {b!r}")
        elif a != b and not (math.isnan(a) and math.isnan(b)):
            worst[0] = max(worst[0], abs(a - b))
    elif isinstance(a, list) and isinstance(b, list):
        if len(a) != len(b):
            out.append(f"{where}: {len(a)} items != {len(b)} items")
        for i, (x, y) in enumerate(zip(a, b)):
            compare(x, y, f"{where}[{i}]", out, worst)
    elif isinstance(a, dict) and isinstance(b, dict):
        if a.keys() != b.keys():
            out.append(f"{where}: keys {sorted(a.keys() ^ b.keys())} in only one file")
        for k in a.keys() & b.keys():
            compare(a[k], b[k], f"{where}.{k}", out, worst)
    else:
        out.append(f"{where}: {type(a).__name__} != {type(b).__name__}")


def main():
    committed, fresh = sys.argv[1], sys.argv[2]
    if open(committed, "rb").read() == open(fresh, "rb").read():
        return 0
    try:
        a, b = load(committed), load(fresh)
    except (UnicodeDecodeError, json.JSONDecodeError):
        print(f"{fresh}: differs from {committed} (not JSON: compared byte for byte)", file=sys.stderr)
        return 1
    out, worst = [], [0.0]
    compare(a, b, "$", out, worst)
    if out:
        print(f"{fresh}: {len(out)} value(s) differ from {committed}:", file=sys.stderr)
        for line in out[:20]:
            print(f"  {line}", file=sys.stderr)
        return 1
    print(f"same_fixture: {committed} equal within rel {REL:g} / abs {ABS:g} (largest absolute difference {worst[0]:.1e})", file=sys.stderr)
    return 0


if __name__ == "__main__":
    sys.exit(main())
