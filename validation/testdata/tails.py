"""Tail probabilities behind the default thresholds, written for this project.

Prints the values the doc comments of Thresholds quote, computed with
Debian's python3-scipy: two-sided Student t (19 degrees of freedom) tails
beyond the drift limits, binomial coverage probabilities of 13 weeks at 90%,
and two-sided normal tails beyond the lift-test limits.
"""
import json
import sys

from scipy import stats

json.dump({
    "t19_2.5": 2 * stats.t.sf(2.5, 19),
    "t19_3.5": 2 * stats.t.sf(3.5, 19),
    "binom_9_of_13": stats.binom.cdf(9, 13, 0.9),
    "binom_7_of_13": stats.binom.cdf(7, 13, 0.9),
    "norm_1.5": 2 * stats.norm.sf(1.5),
    "norm_2": 2 * stats.norm.sf(2.0),
}, sys.stdout)
