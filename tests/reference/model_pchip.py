"""Reference values of a shape-preserving cubic (pchip) through CSV samples.

Usage: model_pchip.py CSV COLUMN T [T ...]
Reads the CSV (header row, '#' comment lines allowed; first column t), builds
scipy.interpolate.PchipInterpolator of COLUMN against t and prints its value at each T,
one a line, with full precision.
"""
import sys

import numpy as np
from scipy.interpolate import PchipInterpolator


def main(argv):
    path, column = argv[1], argv[2]
    times = [float(x) for x in argv[3:]]
    with open(path) as f:
        lines = [ln for ln in f if ln.strip() and not ln.lstrip().startswith("#")]
    header = [h.strip() for h in lines[0].split(",")]
    data = np.array([[float(x) for x in ln.split(",")] for ln in lines[1:]])
    t = data[:, header.index("t")]
    y = data[:, header.index(column)]
    p = PchipInterpolator(t, y, extrapolate=False)
    for x in times:
        print(repr(float(p(x))))


if __name__ == "__main__":
    main(sys.argv)
