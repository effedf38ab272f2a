"""Reference RMSE and MAE for the accuracy test, written for this project.

Reads {"cases": [{"actual": [...], "forecast": [...]}, ...]} on stdin and
prints {"cases": [{"rmse": ..., "meanabs": ...}, ...]} computed by
statsmodels.tools.eval_measures (Debian's python3-statsmodels).
"""
import json
import sys

import numpy as np
from statsmodels.tools import eval_measures as em

cases = json.load(sys.stdin)["cases"]
out = []
for c in cases:
    y = np.asarray(c["actual"], dtype=float)
    f = np.asarray(c["forecast"], dtype=float)
    out.append({"rmse": float(em.rmse(y, f)), "meanabs": float(em.meanabs(y, f))})
json.dump({"cases": out}, sys.stdout)
