"""Mathieu characteristic values a_r(q) (even solutions ce_r) and b_r(q) (odd se_r), from
scipy.special.mathieu_a / mathieu_b. Prints one line per value: kind r q value."""
import sys

import scipy
from scipy.special import mathieu_a, mathieu_b

qs = [float(x) for x in sys.argv[1:]] or [1.0, 5.0]
for q in qs:
    for r in range(0, 4):
        print("a", r, repr(q), repr(float(mathieu_a(r, q))))
    for r in range(1, 4):
        print("b", r, repr(q), repr(float(mathieu_b(r, q))))
print("# scipy", scipy.__version__)
