"""Matrix exponentials by scipy.linalg.expm (Al-Mohy & Higham 2009) for the block-triangular tests.

usage: propagation_block_expm.py PATH
PATH holds JSON {"matrices": [[[...], ...], ...]}; prints JSON {"expm": [...]} in the same order.
"""
import json
import sys

import numpy as np
from scipy.linalg import expm


def main():
    with open(sys.argv[1]) as f:
        d = json.load(f)
    out = [expm(np.array(m, dtype=float)).tolist() for m in d["matrices"]]
    print(json.dumps({"expm": out}))


main()
