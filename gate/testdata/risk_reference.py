"""Independent evaluation of a move's risk figures for gate's live check.

Reads JSON on stdin: per draw and channel the curve parameters of the test
response (beta, half_sat, shape, exp, lambda, steady), the plans, the
economics and the levels. Rebuilds the horizon responses from the README.md
definitions with numpy, then prints JSON with the probability of loss,
sample quantiles by numpy.quantile(method="median_unbiased") (Hyndman & Fan
type 8), the lower-tail CVaR (mean of the worst alpha mass, boundary draw
split; Acerbi & Tasche 2002) and the mean gain.
"""
import json
import sys

import numpy as np


def response(p, w, weeks, spend_weeks):
    t = np.arange(1, weeks + 1)
    carry = p["steady"] * p["lambda"] ** t
    g = np.zeros(weeks)
    acc = 0.0
    for i in range(weeks):
        acc *= p["lambda"]
        if i < spend_weeks:
            acc += 1.0
        g[i] = acc

    def sat(a):
        if p["exp"]:
            return 1.0 - np.exp(-a / p["half_sat"])
        x = (a / p["half_sat"]) ** p["shape"]
        return x / (1.0 + x)

    return p["beta"] * (sat(carry + w * g).sum() - sat(carry).sum())


def value(draw, plan, e):
    r = sum(response(p, w, e["weeks"], e["spend_weeks"]) for p, w in zip(draw, plan))
    return e["margin"] * e["value_per_kpi"] * r - e["horizon"] * sum(plan)


def lower_cvar(x, alpha):
    s = np.sort(x)
    mass = alpha * len(s)
    whole = int(np.floor(mass))
    tail = s[:whole].sum()
    if mass > whole:
        tail += (mass - whole) * s[whole]
    return tail / mass


def main():
    q = json.load(sys.stdin)
    gains = np.array([value(d, q["plan"], q) - value(d, q["current"], q) for d in q["draws"]])
    out = {
        "p_loss": float(np.mean(gains < 0)),
        "downside": float(np.quantile(gains, q["downside_level"], method="median_unbiased")),
        "cvar": float(lower_cvar(gains, q["cvar_level"])),
        "expected_gain": float(gains.mean()),
        "p05": float(np.quantile(gains, 0.05, method="median_unbiased")),
        "p50": float(np.quantile(gains, 0.50, method="median_unbiased")),
        "p95": float(np.quantile(gains, 0.95, method="median_unbiased")),
    }
    json.dump(out, sys.stdout)


main()
