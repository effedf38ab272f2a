"""SciPy peer of sluice's model fit, for the speed and quality comparison.

Same model (geometric adstock, Hill saturation with K = kappa * m / (1 - lambda),
non-negative media coefficients, free base and control coefficients), same
variable projection (fixed columns projected out, scipy.optimize.nnls on the
media columns), same bounds and starts, searched with L-BFGS-B
(scipy.optimize.minimize, finite-difference gradients). Reads the problem as
JSON on stdin, prints {"sse": ..., "seconds": ..., "evaluations": ...}.
Written for this project; needs Debian's python3-scipy.
"""
import json
import sys
import time

import numpy as np
from scipy.optimize import minimize, nnls

prob = json.load(sys.stdin)
y = np.array(prob["y"])
F = np.array(prob["fixed"])
X = np.array(prob["spend"])  # channels x weeks
m = np.array(prob["mean_spend"])
lo = np.array(prob["lower"])
hi = np.array(prob["upper"])
starts = [np.array(s) for s in prob["starts"]]

Q, _ = np.linalg.qr(F)
yt = y - Q @ (Q.T @ y)
n, K = len(y), X.shape[0]
evals = 0


def media(theta):
    cols = np.empty((n, K))
    for k in range(K):
        lam, kappa, s = theta[3 * k : 3 * k + 3]
        a = np.empty(n)
        acc = 0.0
        x = X[k]
        for t in range(n):
            acc = x[t] + lam * acc
            a[t] = acc
        Kk = kappa * m[k] / (1 - lam)
        with np.errstate(divide="ignore"):
            cols[:, k] = np.where(a > 0, 1 / (1 + (Kk / np.maximum(a, 1e-300)) ** s), 0.0)
    return cols


def sse(theta):
    global evals
    evals += 1
    M = media(theta)
    Mt = M - Q @ (Q.T @ M)
    _, rnorm = nnls(Mt, yt)
    return rnorm * rnorm


t0 = time.perf_counter()
best = None
for s0 in starts:
    r = minimize(sse, s0, method="L-BFGS-B", bounds=list(zip(lo, hi)))
    if best is None or r.fun < best:
        best = r.fun
elapsed = time.perf_counter() - t0
print(json.dumps({"sse": best, "seconds": elapsed, "evaluations": evals}))
