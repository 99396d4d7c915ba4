"""Transition matrix of a piecewise-constant A(t) as a product of matrix exponentials (scipy).

usage: numbers_piecewise_expm.py '{"pieces": [{"A": [[...]], "from": t_a, "to": t_b}, ...]}'
The pieces must be in time order and cover the window; prints JSON {"phi": [[...]]}, the product
expm(A_m (t_m - t_{m-1})) ... expm(A_1 (t_1 - t_0)) (scipy.linalg.expm, Al-Mohy & Higham 2009).
"""
import json
import sys

import numpy as np
from scipy.linalg import expm


def main():
    d = json.loads(sys.argv[1])
    phi = None
    for p in d["pieces"]:
        a = np.array(p["A"], dtype=float)
        step = expm(a * (float(p["to"]) - float(p["from"])))
        phi = step if phi is None else step @ phi
    print(json.dumps({"phi": phi.tolist()}))


main()
