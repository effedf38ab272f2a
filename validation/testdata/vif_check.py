"""Reference variance inflation factors, written for this project.

Reads {"exog": [[...row...], ...], "columns": [i, ...]} on stdin (the first
column is the intercept) and prints {"vif": [...]} for the listed columns,
computed by statsmodels.stats.outliers_influence.variance_inflation_factor
(Debian's python3-statsmodels).
"""
import json
import sys

import numpy as np
from statsmodels.stats.outliers_influence import variance_inflation_factor

d = json.load(sys.stdin)
x = np.asarray(d["exog"], dtype=float)
json.dump({"vif": [float(variance_inflation_factor(x, i)) for i in d["columns"]]}, sys.stdout)
