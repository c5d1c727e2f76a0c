"""Per-sample script (benchmark 6): one trial at a time, each input drawn on its own, every Cp
integral by scipy.integrate.quad over plain-Python Shomate / NASA-7 Cp functions.

    python quad_script.py N SEED CASE.toml KIND [T...]   KIND: enthalpy | operating | log10k | duty
"""
import json
import sys
import time
from pathlib import Path

import numpy as np
from scipy.integrate import quad

sys.path.insert(0, str(Path(__file__).parent))
import engineer  # noqa: E402

n, seed, case, kind = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3], sys.argv[4]
temps = [float(t) for t in sys.argv[5:]]
sp = engineer.load(case)
METH = engineer.equation("CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)")
RWGS = engineer.equation("CO2(g) + H2(g) -> CO(g) + H2O(g)")


def cp(T, s):
    """Cp (J/(mol K)) of species s at T, plain Python, the range that holds T."""
    for lo, hi, c in s.ranges:
        if T <= hi:
            break
    if s.model == "shomate":
        t = T / 1000.0
        return c[0] + c[1] * t + c[2] * t * t + c[3] * t ** 3 + c[4] / (t * t)
    return engineer.R * (c[0] + c[1] * T + c[2] * T * T + c[3] * T ** 3 + c[4] * T ** 4)


def draw(rng, v):
    """One draw of (estimate, u) as a normal variate."""
    return v[0] + v[1] * rng.standard_normal() if v[1] > 0 else v[0]


def delta_h(rng, nu, T, x):
    total = 0.0
    for k, c in nu.items():
        if k not in x:
            x[k] = (draw(rng, sp[k].hf), 1.0 + sp[k].scale_u * rng.standard_normal(), draw(rng, sp[k].s0))
        hf, s, _ = x[k]
        total += c * (hf + s * quad(cp, engineer.T_REF, T, args=(sp[k],))[0])
    return total


def trial(rng):
    x = {}
    if kind == "enthalpy":
        return [delta_h(rng, METH, T, x) / 1e3 for T in temps]
    if kind == "operating":
        return [delta_h(rng, METH, 623.15 + 5.0 * rng.standard_normal(), x) / 1e3]
    if kind == "log10k":
        out = []
        for T in temps:
            g = delta_h(rng, METH, T, x)
            for k, c in METH.items():
                _, s, s0 = x[k]
                g -= T * c * (s0 + s * quad(lambda t, sk: cp(t, sk) / t, engineer.T_REF, T, args=(sp[k],))[0])
            out.append(-g / (engineer.R * T * engineer.LN10))
        return out
    feed = 25000 / 3600 + 250 / 3600 * rng.standard_normal()
    xi1 = feed * (0.92 + 0.02 * rng.standard_normal())
    xi2 = 25000 / 3600 * rng.uniform(0.015, 0.045)
    return [-(xi1 * delta_h(rng, METH, 623.15, x) + xi2 * delta_h(rng, RWGS, 623.15, x)) / 1e3]


t0 = time.process_time()
rng = np.random.default_rng(seed)
y = np.array([trial(rng) for _ in range(n)])
mean, u = y.mean(axis=0), y.std(axis=0, ddof=1)
lo, hi = np.quantile(y, [0.025, 0.975], axis=0)
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds, "mean": mean.tolist(), "u": u.tolist(), "low": lo.tolist(), "high": hi.tolist()}))
