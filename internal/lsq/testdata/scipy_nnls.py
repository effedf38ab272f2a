"""Reference solutions for internal/lsq's live cross-check (written for this project).

Reads {"problems": [{"name", "a" (rows), "b", "nonneg" (list of bool or null)}]} on stdin
and writes, per problem, SciPy's Lawson-Hanson NNLS (scipy.optimize.nnls) and, where
"nonneg" is given, the bounded-variable least squares solution of Stark & Parker (1995)
(scipy.optimize.lsq_linear(method='bvls')) with x_j >= 0 where nonneg[j], free otherwise.
"""
import json
import sys

import numpy as np
import scipy
from scipy.optimize import lsq_linear, nnls

req = json.load(sys.stdin)
out = {"scipy": scipy.__version__, "numpy": np.__version__, "results": []}
for p in req["problems"]:
    a = np.array(p["a"], dtype=float)
    b = np.array(p["b"], dtype=float)
    m, n = a.shape
    x, rnorm = nnls(a, b, maxiter=50 * n)
    r = {"name": p["name"], "nnls_x": x.tolist(), "nnls_rnorm": float(rnorm)}
    if p.get("nonneg") is not None:
        lb = np.where(np.array(p["nonneg"], dtype=bool), 0.0, -np.inf)
        res = lsq_linear(a, b, bounds=(lb, np.full(n, np.inf)), method="bvls",
                         tol=1e-15, max_iter=50 * n)
        r["bvls_x"] = res.x.tolist()
        r["bvls_status"] = int(res.status)
        r["bvls_rnorm"] = float(np.linalg.norm(a @ res.x - b))
    out["results"].append(r)
json.dump(out, sys.stdout)
