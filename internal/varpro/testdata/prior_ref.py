# Reference for TestPriorMatchesSciPy: the maximum a posteriori fit of
# Misra1a, y = b1 (1 - exp(-b2 x)), with a Gaussian prior on b2 (or on
# log b2) written as one extra least-squares residual, solved over (b1, b2)
# jointly by scipy.optimize.least_squares (trust-region reflective) —
# no variable projection, so it checks the projection and the prior rows.
import json, sys
import numpy as np
from scipy.optimize import least_squares

cases = json.load(sys.stdin)
out = []
for c in cases:
    x, y = np.array(c["x"]), np.array(c["y"])
    w, m, s, lg = c["weight"], c["center"], c["scale"], c["log"]

    def resid(b):
        g = np.log(b[1]) if lg else b[1]
        return np.concatenate([y - b[0] * (1 - np.exp(-b[1] * x)), [w * (g - m) / s]])

    r = least_squares(resid, c["start"], bounds=([-np.inf, 1e-12], [np.inf, np.inf]),
                      xtol=1e-15, ftol=1e-15, gtol=1e-15, max_nfev=20000)
    out.append({"b": r.x.tolist(), "objective": float(np.sum(r.fun ** 2))})
json.dump(out, sys.stdout)
