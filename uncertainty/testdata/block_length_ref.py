"""Live cross-check of AutoBlockLength: Politis & White (2004) automatic block
length with the Patton, Politis & White (2009) correction, written from the
published formulas with numpy only (the same function as the reference
collection's scripts/block_length.py, "reference code" convention for m_hat).

stdin:  JSON list of series (lists of floats)
stdout: JSON list of {"m_hat", "M", "b_SB", "b_CB"}, one per series
"""
import json
import math
import sys

import numpy as np


def flat_top(t):
    t = abs(t)
    if t <= 0.5:
        return 1.0
    if t <= 1.0:
        return 2.0 * (1.0 - t)
    return 0.0


def pw_block_length(x, c=2.0):
    x = np.asarray(x, float)
    n = len(x)
    xc = x - x.mean()

    def R(k):
        k = abs(k)
        if k >= n:
            return 0.0
        return float(np.dot(xc[: n - k], xc[k:]) / n)

    kn = max(5, int(math.ceil(math.sqrt(math.log10(n)))))
    m_max = int(math.ceil(math.sqrt(n))) + kn
    b_max = int(math.ceil(min(3.0 * math.sqrt(n), n / 3.0)))
    crit = c * math.sqrt(math.log10(n) / n)
    R0 = R(0)
    rho = [R(k) / R0 for k in range(0, m_max + kn + 2)]
    m_hat = None
    for m in range(1, m_max - kn + 2):
        if all(abs(rho[m + k]) < crit for k in range(kn)):
            m_hat = m
            break
    if m_hat is None:
        sig = [k for k in range(1, m_max + 1) if abs(rho[k]) > crit]
        m_hat = max(sig) if sig else 1
    M = min(2 * m_hat, m_max)
    g0 = sum(flat_top(k / M) * R(k) for k in range(-M, M + 1))
    G = sum(flat_top(k / M) * abs(k) * R(k) for k in range(-M, M + 1))
    b_sb = (2.0 * G ** 2 / (2.0 * g0 ** 2)) ** (1.0 / 3.0) * n ** (1.0 / 3.0)
    b_cb = (2.0 * G ** 2 / ((4.0 / 3.0) * g0 ** 2)) ** (1.0 / 3.0) * n ** (1.0 / 3.0)
    return {"m_hat": m_hat, "M": M, "b_SB": min(b_sb, b_max), "b_CB": min(b_cb, b_max)}


json.dump([pw_block_length(x) for x in json.load(sys.stdin)], sys.stdout)
