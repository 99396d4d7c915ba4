"""Stability verdicts of Mathieu's equation x'' + (a - 2 q cos 2t) x = 0 from the
characteristic values (Abramowitz & Stegun, ch. 20; the Ince-Strutt chart): for q > 0,
a_0(q) < b_1(q) < a_1(q) < b_2(q) < a_2(q) < ...; the solutions are bounded (stable) for
a_r(q) < a < b_{r+1}(q) and unbounded below a_0(q) and for b_r(q) < a < a_r(q), r >= 1.
Characteristic values from scipy.special.mathieu_a / mathieu_b.

Arguments: MARGIN, then points "a,q". Prints one line per point: "stable", "unstable", or
"skip" when a lies within MARGIN of a characteristic value (the verdict there depends on how
closely the boundary is resolved, not on the sweep)."""
import sys

from scipy.special import mathieu_a, mathieu_b

margin = float(sys.argv[1])
for point in sys.argv[2:]:
    a, q = (float(x) for x in point.split(","))
    orders = 12
    bounds = [("a", 0, float(mathieu_a(0, q)))]
    for r in range(1, orders):
        bounds.append(("b", r, float(mathieu_b(r, q))))
        bounds.append(("a", r, float(mathieu_a(r, q))))
    if a > bounds[-1][2]:
        raise SystemExit("a = %r is above the characteristic values computed" % a)
    if min(abs(a - v) for _, _, v in bounds) < margin:
        print("skip")
        continue
    # The interval a falls in: below a_0 unstable; (a_r, b_{r+1}) stable; (b_r, a_r) unstable.
    below = [kind for kind, _, v in bounds if v < a]
    print("unstable" if not below or below[-1] == "b" else "stable")
