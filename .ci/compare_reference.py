"""Compare regenerated reference files with the committed ones, number by number.

Byte equality is too strict across machines: the last bit of a floating-point product depends on the
CPU's vector instructions. A number matches when it differs by at most one part in 10^9 of its size, by
one unit in the last place it was printed with (a rounding flip), or by 1e-11 outright (error estimates
that are themselves of order 1e-12 are all noise; 1e-11 is under a microsecond in days and two metres in
au); every other token must be equal.
Usage: compare_reference.py NEW_DIR COMMITTED_DIR  (exit 1 and a report on any mismatch)
"""
import os
import re
import sys

TOKEN = re.compile(r"[-+]?(?:\d+\.\d*|\.\d+|\d+)(?:[eE][-+]?\d+)?|[^\s\d.+-]+|[.+-]")


def last_place(text):
    mant = text.lower().split("e")[0]
    exp = int(text.lower().split("e")[1]) if "e" in text.lower() else 0
    decimals = len(mant.split(".")[1]) if "." in mant else 0
    return 10.0 ** (exp - decimals)


def numbers_match(a, b):
    x, y = float(a), float(b)
    tol = max(1e-9 * max(abs(x), abs(y)), 1.01 * max(last_place(a), last_place(b)), 1e-11)
    return abs(x - y) <= tol


def is_number(t):
    try:
        float(t)
        return any(c.isdigit() for c in t)
    except ValueError:
        return False


def compare_text(a, b):
    ta, tb = TOKEN.findall(a), TOKEN.findall(b)
    if len(ta) != len(tb):
        return f"{len(ta)} tokens vs {len(tb)}"
    for x, y in zip(ta, tb):
        if x == y:
            continue
        if is_number(x) and is_number(y) and numbers_match(x, y):
            continue
        return f"'{x}' vs '{y}'"
    return None


def main(new, old):
    bad = 0
    names = set()
    for root, _, files in os.walk(old):
        for f in files:
            names.add(os.path.relpath(os.path.join(root, f), old))
    for root, _, files in os.walk(new):
        for f in files:
            names.add(os.path.relpath(os.path.join(root, f), new))
    for rel in sorted(names):
        pa, pb = os.path.join(new, rel), os.path.join(old, rel)
        if not (os.path.exists(pa) and os.path.exists(pb)):
            print(f"{rel}: only in one of the two", file=sys.stderr)
            bad += 1
            continue
        da, db = open(pa, "rb").read(), open(pb, "rb").read()
        if da == db:
            continue
        why = compare_text(da.decode("utf-8", "replace"), db.decode("utf-8", "replace"))
        if why:
            print(f"{rel}: {why}", file=sys.stderr)
            bad += 1
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv[1], sys.argv[2]))
