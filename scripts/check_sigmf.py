#!/usr/bin/env python3
"""Loads every recording below DIR with the `sigmf` package (pip install sigmf), validates
its metadata against the SigMF schema, reads its samples, and checks that across the set
the annotations hold all three classes (rotorcraft, bird, clutter). Prints the sigmf
version. Exit 0 when all is well, 1 otherwise. Usage: scripts/check_sigmf.py DIR
"""
import collections
import pathlib
import sys

import sigmf
from sigmf import sigmffile

REQUIRED = {"rotorcraft", "bird", "clutter"}


def main():
    if len(sys.argv) != 2:
        print(__doc__, file=sys.stderr)
        return 2
    root = pathlib.Path(sys.argv[1])
    metas = sorted(root.rglob("*.sigmf-meta"))
    print("sigmf package version %s; %d recordings under %s" % (sigmf.__version__, len(metas), root))
    labels = collections.Counter()
    bad = 0
    for m in metas:
        try:
            f = sigmffile.fromfile(str(m))
            f.validate()
            g = f.get_global_info()
            n = g["rotorsift:samples_per_chirp"]
            total = f.sample_count
            if total % n:
                raise ValueError("%d samples is not a whole number of %d-sample chirps" % (total, n))
            x = f.read_samples(0, min(total, 4 * n))
            if len(x) != min(total, 4 * n):
                raise ValueError("short read")
            anns = f.get_annotations()
            for a in anns:
                s, c = a["core:sample_start"], a["core:sample_count"]
                if s % n or c % n or s + c > total:
                    raise ValueError("annotation %r not whole chirps inside the recording" % a)
                labels[a["core:label"]] += 1
        except Exception as e:  # report and go on with the rest
            bad += 1
            print("FAIL %s: %s" % (m, e))
    print("labels across the set: %s" % dict(sorted(labels.items())))
    missing = REQUIRED - set(labels)
    if missing:
        print("FAIL: classes missing from the set: %s" % sorted(missing))
    if bad or missing or not metas:
        return 1
    print("OK: %d recordings valid" % len(metas))
    return 0


if __name__ == "__main__":
    sys.exit(main())
