"""Vectorised numpy script for ΔrH of methanation at the uncertain bed temperature (benchmark 6):
ΔrH(T) = Σ ν (ΔfH + s ∫Cp dT) with T, the ΔfH and the Cp scale factors s drawn as normals, the
closed-form Shomate / NASA-7 enthalpies of engineer.py evaluated on the whole sample.

    python operating_script.py N SEED CASE.toml      -> one JSON line
"""
import json
import sys
import time
from pathlib import Path

import numpy as np

sys.path.insert(0, str(Path(__file__).parent))
import engineer  # noqa: E402

n, seed, case = int(sys.argv[1]), int(sys.argv[2]), sys.argv[3]
sp = engineer.load(case)
nu = engineer.equation("CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)")
T0, uT = 623.15, 5.0
hf = [k for k in nu if sp[k].hf[1] > 0]
t0 = time.process_time()
rng = np.random.default_rng(seed)
z = rng.standard_normal((n, len(hf) + len(nu) + 1))   # ΔfH, Cp scales, T
T = T0 + uT * z[:, -1]
y = sum(nu[k] * sp[k].hf[0] for k in nu) + z[:, :len(hf)] @ np.array([nu[k] * sp[k].hf[1] for k in hf])
for i, k in enumerate(nu):
    y += nu[k] * (1.0 + sp[k].scale_u * z[:, len(hf) + i]) * sp[k].dH(T)
y /= 1e3
mean, u = y.mean(), y.std(ddof=1)
lo, hi = np.quantile(y, [0.025, 0.975])
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds, "mean": [mean], "u": [u], "low": [lo], "high": [hi]}))
