"""Vectorised numpy script for the demo's cooling duty (benchmark 6): Q = Σ_r ξ_r (−ΔrH_r) at 350 °C
for methanation (ξ = feed × conversion, both normal) and the reverse water-gas shift (same feed,
exact; conversion rectangular), ΔrH_r linear in the ΔfH and Cp scale factors (engineer.py).

    python duty_script.py N SEED PARAMS.json          -> one JSON line (kW)
"""
import json
import sys
import time

import numpy as np

n, seed, p = int(sys.argv[1]), int(sys.argv[2]), json.load(open(sys.argv[3]))
A, y0 = np.array(p["A"]), np.array(p["y0"])          # ΔrH of both reactions, kJ/mol
t0 = time.process_time()
rng = np.random.default_rng(seed)
z = rng.standard_normal((n, A.shape[0] + 2))         # data, then feed and conversion
dH = z[:, :-2] @ A + y0                              # (n, 2) kJ/mol
feed = p["feed"][0] + p["feed"][1] * z[:, -2]        # mol/s
xi1 = feed * (p["conversion"][0] + p["conversion"][1] * z[:, -1])
xi2 = p["feed"][0] * rng.uniform(p["side"][0] - p["side"][1], p["side"][0] + p["side"][1], n)
y = -(xi1 * dH[:, 0] + xi2 * dH[:, 1])               # kW
mean, u = y.mean(), y.std(ddof=1)
lo, hi = np.quantile(y, [0.025, 0.975])
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds, "mean": [mean], "u": [u], "low": [lo], "high": [hi]}))
