#!/usr/bin/env python3
"""Compare two ensemble member CSV files column by column (a one-off check
that a numerical change leaves the physics alone, see docs/physics.md).

    scripts/compare-members.py before.csv after.csv [--rel 1e-9]

For every numeric column: the largest relative difference |a-b|/max(|a|,|b|)
over the members (a difference of two numbers below 1e-300 counts as 0),
the member where it is, and how many members differ by more than --rel.
Non-numeric columns (status, reason) must match exactly.  Exit 1 when
anything differs by more than --rel, else 0."""
import csv
import sys


def main(argv):
    rel = 1e-9
    args = []
    i = 1
    while i < len(argv):
        if argv[i] == "--rel":
            rel = float(argv[i + 1])
            i += 2
        else:
            args.append(argv[i])
            i += 1
    if len(args) != 2:
        print(__doc__, file=sys.stderr)
        return 64
    with open(args[0], newline="") as fa, open(args[1], newline="") as fb:
        ra, rb = list(csv.reader(fa)), list(csv.reader(fb))
    if ra[0] != rb[0] or len(ra) != len(rb):
        print("headers or member counts differ", file=sys.stderr)
        return 1
    bad = 0
    for j, name in enumerate(ra[0]):
        worst, where, over = 0.0, None, 0
        for k in range(1, len(ra)):
            a, b = ra[k][j], rb[k][j]
            try:
                x, y = float(a), float(b)
            except ValueError:
                if a != b:
                    over += 1
                    worst, where = float("inf"), k - 1
                continue
            if x == y:
                continue
            d = abs(x - y)
            m = max(abs(x), abs(y))
            r = 0.0 if m < 1e-300 else d / m
            if r > worst:
                worst, where = r, k - 1
            if r > rel:
                over += 1
        if worst > 0.0:
            print(f"{name:32s} max rel diff {worst:.3e} (member {where}), {over} members > {rel:g}")
        bad += over
    print(f"{len(ra) - 1} members, {bad} values differ by more than {rel:g}")
    return 1 if bad else 0


if __name__ == "__main__":
    sys.exit(main(sys.argv))
