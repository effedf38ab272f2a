"""Reference tail probabilities for validation's p-values (rates.go).

Reads JSON on stdin: {"t": [[t, nu], ...], "normal": [z, ...],
"binomial": [[k, n, p], ...], "prediction": [{"values": [...], "obs": v,
"lower_worse": b, "log": b}, ...]} and prints the same shapes with SciPy's
answers: two-sided Student t and normal tails, the binomial CDF, and the
one-sided prediction-interval tail 1 - T_{R-1}((x - mean)/(sd*sqrt(1+1/R)))
of a new observation x given R normal values (scipy.stats).
"""
import json
import sys

import numpy as np
from scipy import stats

q = json.load(sys.stdin)
out = {
    "t": [float(2 * stats.t.sf(abs(t), nu)) for t, nu in q["t"]],
    "normal": [float(2 * stats.norm.sf(abs(z))) for z in q["normal"]],
    "binomial": [float(stats.binom.cdf(k, n, p)) for k, n, p in q["binomial"]],
    "prediction": [],
}
for c in q["prediction"]:
    x = np.array(c["values"], dtype=float)
    obs = c["obs"]
    if c["log"]:
        x, obs = np.log(x), np.log(obs)
    r = len(x)
    t = (obs - x.mean()) / (x.std(ddof=1) * np.sqrt(1 + 1 / r))
    if c["lower_worse"]:
        t = -t
    out["prediction"].append(float(stats.t.sf(t, r - 1)))
json.dump(out, sys.stdout)
