# Reference for groundtruth_test.go: a simulated world's truth from the
# formulas, in NumPy/SciPy, written apart from the Go code. Adstock by
# numpy.convolve (geometric kernel to 1e-16, delayed lambda^((l-theta)^2)),
# Hill a^s/(a^s+K^s) or exponential 1-exp(-a/K) with K = kappa*mean(spend)*sum(kernel);
# the horizon response over H weeks plus the kernel's full tail; the
# marginal ROI by the analytic derivative sum_t beta*sat'(a_t)*u_t / H; the
# optimum by scipy.optimize.minimize (SLSQP) from several starts.
import json, sys
import numpy as np
from scipy.optimize import minimize

w = json.load(sys.stdin)
H = w["horizon"]


def kernel(c):
    if c["adstock"] == "delayed":
        l = np.arange(c["max_lag"], dtype=float)
        if c["decay"] == 0:
            return (l == c["peak"]).astype(float)
        return c["decay"] ** ((l - c["peak"]) ** 2)
    n = 1
    while c["decay"] ** n > 1e-16:
        n += 1
    return c["decay"] ** np.arange(n, dtype=float)


def K(c):
    return c["half_saturation"] * np.mean(c["spend"]) * kernel(c).sum()


def sat(c, a):
    a = np.asarray(a, dtype=float)
    out = np.zeros_like(a)
    pos = a > 0
    if c["saturation"] == "exponential":
        out[pos] = -np.expm1(-a[pos] / K(c))
    else:
        out[pos] = 1 / (1 + (K(c) / a[pos]) ** c["shape"])
    return out


def dsat(c, a):
    a = np.asarray(a, dtype=float)
    out = np.zeros_like(a)
    pos = a > 0
    k = K(c)
    if c["saturation"] == "exponential":
        out[pos] = np.exp(-a[pos] / k) / k
    else:
        s = c["shape"]
        x = a[pos] ** s
        out[pos] = s * a[pos] ** (s - 1) * k ** s / (x + k ** s) ** 2
    return out


def adstock(c, x):
    return np.convolve(x, kernel(c))[: len(x)]


def media(c, x):
    return c["beta"] * sat(c, adstock(c, x))


def paths(c, s):
    n, T = len(c["spend"]), len(kernel(c))
    x1 = np.concatenate([c["spend"], np.full(H, s), np.zeros(T)])
    x0 = np.concatenate([c["spend"], np.zeros(H + T)])
    u = np.concatenate([np.zeros(n), np.ones(H), np.zeros(T)])
    return n, x1, x0, u


def response(c, s):
    n, x1, x0, _ = paths(c, s)
    return float(np.sum(media(c, x1)[n:] - media(c, x0)[n:]))


def mroi(c, s):
    n, x1, _, u = paths(c, s)
    a1 = adstock(c, x1)
    au = adstock(c, u)
    return float(np.sum(c["beta"] * dsat(c, a1)[n:] * au[n:]) / H)


chs = w["channels"]
y = np.array(w["base"], dtype=float)
for c in chs:
    y = y + media(c, np.array(c["spend"], dtype=float))
roi = [float(np.sum(media(c, np.array(c["spend"], dtype=float))) / np.sum(c["spend"])) for c in chs]
resp = [response(chs[k], s) for k, s in w["points"]]
mr = [mroi(chs[k], s) for k, s in w["points"]]


def lift(c, a, b):
    x = np.array(c["spend"], dtype=float)
    x0 = x.copy()
    x0[a:b + 1] = 0
    return float(np.sum(media(c, x)[a:b + 1] - media(c, x0)[a:b + 1]))


lifts = [lift(chs[k], a, b) for k, a, b in w["lifts"]]

v, B = w["value"], w["budget"]
lo, hi = np.array(w["lo"]), np.array(w["hi"])


def neg(p):
    return -(v * sum(response(c, p[k]) for k, c in enumerate(chs)) - H * np.sum(p))


best = None
rng = np.random.default_rng(7)
starts = [lo + (hi - lo) * f for f in (0.5,)] + [lo + (hi - lo) * rng.random(len(chs)) for _ in range(2)]
for p0 in starts:
    p0 = p0 * B / p0.sum()
    p0 = np.clip(p0, lo, hi)
    r = minimize(neg, p0, method="SLSQP", bounds=list(zip(lo, hi)),
                 constraints=[{"type": "eq", "fun": lambda p: np.sum(p) - B}],
                 options={"ftol": 1e-12, "maxiter": 500})
    if r.success and (best is None or r.fun < best.fun):
        best = r
json.dump({"mean_path": y.tolist(), "roi": roi, "response": resp, "mroi": mr,
           "optimum": best.x.tolist(), "optimum_value": float(-best.fun), "lifts": lifts}, sys.stdout)
