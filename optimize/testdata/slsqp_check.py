"""Reference optimum of sluice allocation problems by SciPy's SLSQP.

Reads a JSON list of problems on stdin and writes, for each, the best point
SLSQP reaches from several starts (the status quo and seeded random points
in the boxes) and the objective there; and, separately, where SLSQP goes
from sluice's own optimum (key "polish"), to confirm it is a local optimum. The curves are the closed forms of
sluice's tests: beta * a^s/(a^s + K^s) (Hill) or beta * (1 - exp(-a/K)).

Objectives:
  expected      mean_d V_d(w), V_d(w) = m * sum_k R_dk(w_k) - H * sum_k w_k
  cvar          mean_d G_d - weight * CVaR_alpha(-G), G_d = V_d(w) - V_d(c),
                in the Rockafellar & Uryasev (2000) form with auxiliary
                variables zeta and z_d >= -G_d - zeta, z_d >= 0.
"""
import json
import sys

import numpy as np
from scipy.optimize import minimize


def curves(p):
    beta, K, S = (np.array(p[k], dtype=float) for k in ("beta", "K", "S"))
    hill = np.array(p["hill"], dtype=bool)

    def resp(w):
        w = np.maximum(np.asarray(w, dtype=float), 0.0)
        r = np.empty_like(beta)
        dr = np.empty_like(beta)
        e = np.exp(-w / K)
        r_exp, dr_exp = beta * (1 - e), beta / K * e
        with np.errstate(divide="ignore", invalid="ignore"):
            xs = (w / K) ** S
            den = xs + 1
            r_hill = beta * xs / den
            dr_hill = np.where(w > 0, beta * S * xs / (w * den * den), np.where(S == 1, beta / K, 0.0))
        r = np.where(hill, r_hill, r_exp)
        dr = np.where(hill, dr_hill, dr_exp)
        return r, dr  # [draw, channel]

    return resp


def solve(p):
    resp = curves(p)
    m, H = p["margin"] * p["value_per_kpi"], p["horizon"]
    n = len(p["hill"])
    D = len(p["beta"])
    weekly = p["weekly"]
    lo = np.array(p["lower"], dtype=float)
    hi = np.array([np.inf if u is None else u for u in p["upper"]])
    cur = np.array(p["current"], dtype=float)
    phi = H * weekly

    def values(w):
        r, dr = resp(w)
        return m * r.sum(axis=1) - H * np.sum(w), m * dr - H  # [draw], [draw, channel]

    base, _ = values(cur)
    cons = [{"type": "eq", "fun": lambda x: np.array([np.sum(x[:n]) - weekly]),
             "jac": lambda x: np.concatenate([np.ones(n), np.zeros(len(x) - n)])[None, :]}]
    for g in p.get("groups") or []:
        a = np.zeros(n)
        a[g["members"]] = 1.0
        for share, sign in ((g["min_share"], 1.0), (g["max_share"], -1.0)):
            row = sign * (a - share)
            cons.append({"type": "ineq", "fun": lambda x, row=row: np.array([row @ x[:n]]),
                         "jac": lambda x, row=row: np.concatenate([row, np.zeros(len(x) - n)])[None, :]})
    bounds = [(lo[k], None if np.isinf(hi[k]) else hi[k]) for k in range(n)]
    obj = p["objective"]
    if obj["kind"] == "expected":
        def f(x):
            v, g = values(x)
            return -v.mean() / phi, -g.mean(axis=0) / phi
        nx = n
    else:
        alpha, lam = obj["alpha"], obj["weight"]
        # x = (w, zeta, z_1..z_D)
        def f(x):
            w, zeta, z = x[:n], x[n], x[n + 1:]
            v, g = values(w)
            gain = v - base
            val = gain.mean() - lam * (zeta + z.sum() / (alpha * D))
            grad = np.concatenate([g.mean(axis=0), [-lam], -lam / (alpha * D) * np.ones(D)])
            return -val / phi, -grad / phi

        def tail(x):  # z_d - (-G_d - zeta) >= 0
            w, zeta, z = x[:n], x[n], x[n + 1:]
            v, _ = values(w)
            return z + (v - base) + zeta

        def tail_jac(x):
            w = x[:n]
            _, g = values(w)
            return np.hstack([g, np.ones((D, 1)), np.eye(D)])

        cons.append({"type": "ineq", "fun": tail, "jac": tail_jac})
        bounds = bounds + [(None, None)] + [(0, None)] * D
        nx = n + 1 + D

    # SLSQP is not scale invariant: solve in u = x / xs, with spend in units
    # of the mean weekly spend per channel and zeta, z in units of the
    # total budget, so that every variable and derivative is of order one.
    xs = np.concatenate([np.full(n, weekly / n), np.full(nx - n, phi)])

    def fu(u):
        val, grad = f(u * xs)
        return val, grad * xs

    ucons = []
    for c in cons:
        ucons.append({"type": c["type"], "fun": lambda u, c=c: c["fun"](u * xs),
                      "jac": lambda u, c=c: c["jac"](u * xs) * xs[None, :]})
    ubounds = [(None if a is None else a / xs[i], None if b is None else b / xs[i]) for i, (a, b) in enumerate(bounds)]

    rng = np.random.default_rng(p["seed"])
    starts = [cur.copy()]
    top = np.where(np.isinf(hi), np.maximum(lo, weekly), hi)
    for _ in range(p["random_starts"]):
        starts.append(lo + rng.random(n) * (top - lo))
    best = None
    runs = []
    polish = None
    extra = [np.array(p["sluice"], dtype=float)] if p.get("sluice") else []
    for i, s in enumerate(starts + extra):
        x0 = s
        if nx > n:
            v, _ = values(s)
            loss = base - v
            zeta = np.quantile(loss, 1 - obj["alpha"])
            x0 = np.concatenate([s, [zeta], np.maximum(loss - zeta, 0)])
        r = minimize(fu, x0 / xs, jac=True, method="SLSQP", bounds=ubounds, constraints=ucons,
                     options={"ftol": 1e-14, "maxiter": 1000})
        val = -r.fun * phi
        # Exit mode 8 ("positive directional derivative for linesearch") is
        # SLSQP stopping at rounding level: the step cannot improve f any
        # more. The Go side checks that the point is feasible.
        ok = r.status in (0, 8)
        run = {"value": val, "success": ok, "nit": int(r.nit), "message": str(r.message)}
        if i == len(starts):
            polish = run
            continue
        runs.append(run)
        if ok and (best is None or val > best[0]):
            best = (val, (r.x[:n] * xs[:n]).tolist())
    out = {"name": p["name"], "runs": runs, "polish": polish}
    if best is not None:
        out["value"], out["x"] = best
    return out


def main():
    problems = json.load(sys.stdin)
    json.dump([solve(p) for p in problems], sys.stdout)


if __name__ == "__main__":
    main()
