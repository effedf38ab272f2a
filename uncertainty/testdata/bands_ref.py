"""Live cross-check of the band summaries (run by TestBandsNumpy through
internal/refcheck).

Quantiles: numpy.quantile with method="median_unbiased", which numpy
documents as Hyndman & Fan (1996) definition 8. Top of the observed spend
range: the largest mean of 4 consecutive weeks, numpy.convolve with a
flat window of 4.

stdin:  JSON list of {"x": [...], "spend": [...]}
stdout: JSON list of {"band": [median, p05, p10, p90, p95], "max4": float}
"""
import json
import sys

import numpy as np

out = []
for case in json.load(sys.stdin):
    x = np.asarray(case["x"], float)
    band = np.quantile(x, [0.5, 0.05, 0.10, 0.90, 0.95], method="median_unbiased")
    s = np.asarray(case["spend"], float)
    w = min(4, len(s))
    max4 = float(np.max(np.convolve(s, np.ones(w) / w, mode="valid")))
    out.append({"band": [float(v) for v in band], "max4": max4})
json.dump(out, sys.stdout)
