# Reference for model.BSpline: the clamped cubic B-spline basis on [0, 1]
# with equally spaced interior knots, evaluated by SciPy
# (scipy.interpolate.BSpline.basis_element on each function's own knots).
# stdin: JSON {"J": [..], "u": [..], "x": [..]}; stdout: JSON {"J": [[[B_j(u)] per u] per J],
# "cardinal": [N(x) per x]}, N the uniform cubic B-spline on knots 0, 1, 2, 3, 4.
import json, sys
import numpy as np
from scipy.interpolate import BSpline

req = json.load(sys.stdin)
out = {}
for J in req["J"]:
    p = 3
    inner = J - p
    knots = [0.0] * (p + 1) + [i / inner for i in range(1, inner)] + [1.0] * (p + 1)
    rows = []
    for u in req["u"]:
        row = []
        for j in range(J):
            b = BSpline.basis_element(knots[j:j + p + 2], extrapolate=False)
            v = b(u)
            v = 0.0 if np.isnan(v) else float(v)
            # basis_element's support is half-open; the last function at u = 1
            # is the limit from the left, which is 1.
            if u == 1.0 and j == J - 1:
                v = 1.0
            row.append(v)
        rows.append(row)
    out[str(J)] = rows
# The uniform cubic B-spline on knots 0..4 (the periodic basis's element).
card = BSpline.basis_element([0, 1, 2, 3, 4], extrapolate=False)
out["cardinal"] = [0.0 if np.isnan(card(x)) else float(card(x)) for x in req.get("x", [])]
json.dump(out, sys.stdout)
