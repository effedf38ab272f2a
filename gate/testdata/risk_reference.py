"""Independent evaluation of a move's risk figures for gate's live check.

With "mode": "steps" in the input it instead finds, from the README's
definitions ("Policies and the gate"), every channel's safe step, the
combined budget-consistent plan and the plan's risk figures (quantiles by
scipy.stats.mstats.mquantiles with alphap = betap = 1/3, which is Hyndman &
Fan type 8); see steps() below.

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


def quantile8(x, p):
    from scipy.stats import mstats
    return float(mstats.mquantiles(x, prob=[p], alphap=1.0 / 3, betap=1.0 / 3)[0])


class Curves:
    """The same responses as response(), with every draw and channel's
    carry and unit adstock precomputed into arrays, so a plan's gains over
    all draws are one vectorized sum."""

    def __init__(self, q):
        weeks, spend = q["weeks"], q["spend_weeks"]
        t = np.arange(1, weeks + 1)
        d = q["draws"]
        self.beta = np.array([[p["beta"] for p in row] for row in d])
        self.half = np.array([[p["half_sat"] for p in row] for row in d])
        self.shape = np.array([[p["shape"] for p in row] for row in d])
        self.exp = np.array([[p["exp"] for p in row] for row in d])
        lam = np.array([[p["lambda"] for p in row] for row in d])
        steady = np.array([[p["steady"] for p in row] for row in d])
        self.carry = steady[:, :, None] * lam[:, :, None] ** t[None, None, :]
        g = np.zeros(lam.shape + (weeks,))
        acc = np.zeros(lam.shape)
        for i in range(weeks):
            acc = acc * lam + (1.0 if i < spend else 0.0)
            g[:, :, i] = acc
        self.unit = g
        self.q = q

    def sat(self, a):
        e = 1.0 - np.exp(-a / self.half[:, :, None])
        x = (a / self.half[:, :, None]) ** self.shape[:, :, None]
        return np.where(self.exp[:, :, None], e, x / (1.0 + x))

    def values(self, plan):
        w = np.array(plan, dtype=float)[None, :, None]
        r = (self.beta * (self.sat(self.carry + w * self.unit).sum(axis=2) - self.sat(self.carry).sum(axis=2))).sum(axis=1)
        q = self.q
        return q["margin"] * q["value_per_kpi"] * r - q["horizon"] * float(np.sum(plan))


_curves = {}


def gains_of(q, plan):
    cv = _curves.get(id(q))
    if cv is None:
        cv = _curves[id(q)] = Curves(q)
    return cv.values(plan) - cv.values(q["current"])


def passes(q, plan):
    """The policy's limits on the gains of moving to plan."""
    g = gains_of(q, plan)
    lim = q["limits"]
    if np.mean(g < 0) > lim["max_loss_probability"]:
        return False
    if quantile8(g, lim["downside_level"]) < lim["downside_floor"]:
        return False
    if lower_cvar(g, lim["cvar_level"]) < lim["cvar_floor"]:
        return False
    return g.mean() >= lim["min_expected_gain"]


def largest_passing(ok):
    """Largest t in [0, 1] with ok(t): 1 if it passes, else the largest
    passing point of a grid of 1000 intervals, refined by bisection against
    the grid point above it to 1e-9 (the scenario is built so that the
    passing set is an interval [0, t*])."""
    if ok(1.0):
        return 1.0
    grid = np.linspace(0.0, 1.0, 1001)
    lo = 0.0
    for t in grid[::-1]:
        if ok(t):
            lo = t
            break
    hi = min(1.0, lo + 0.001)
    while hi - lo > 1e-9:
        mid = 0.5 * (lo + hi)
        if ok(mid):
            lo = mid
        else:
            hi = mid
    return lo


def steps(q):
    c = np.array(q["current"], dtype=float)
    delta = np.array(q["proposed"], dtype=float) - c
    up, down = delta[delta > 0].sum(), -delta[delta < 0].sum()
    tau = []
    for k, dk in enumerate(delta):
        if dk == 0:
            tau.append(1.0)
            continue
        # Channel k's change, funded by (or returned to) the channels moving
        # the other way in proportion to their change, matched up to the
        # smaller side.
        same, other = (up, down) if dk > 0 else (down, up)
        m = np.zeros_like(delta)
        m[k] = dk
        for j, dj in enumerate(delta):
            if dj != 0 and (dj > 0) != (dk > 0):
                m[j] = abs(dk) * min(up, down) / same / other * dj
        tau.append(largest_passing(lambda t: passes(q, list(c + t * m))))
    # The combined plan: each channel its safe step; the side that moves
    # more is scaled down to the other (a budget-neutral proposal gives a
    # budget-neutral plan); then the largest uniform scale that passes.
    a = np.array(tau) * delta
    su, sd = a[a > 0].sum(), -a[a < 0].sum()
    if su > sd:
        a[a > 0] *= sd / su
    elif sd > su:
        a[a < 0] *= su / sd
    scale = largest_passing(lambda t: passes(q, list(c + t * a)))
    plan = c + scale * a
    g = gains_of(q, list(plan))
    return {"tau": tau, "scale": scale, "plan": list(plan),
            "p_loss": float(np.mean(g < 0)),
            "downside": quantile8(g, q["limits"]["downside_level"]),
            "cvar": float(lower_cvar(g, q["limits"]["cvar_level"])),
            "expected_gain": float(g.mean())}


def main():
    q = json.load(sys.stdin)
    if q.get("mode") == "steps":
        json.dump(steps(q), sys.stdout)
        return
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
