"""The vectorised numpy script an engineer would write instead of the tool, for an output that is
linear in its inputs (benchmark 6; issue 19). The linear model y = y0 + z @ A over the normal
scores z of the inputs (A = sensitivity coefficient times standard uncertainty) is worked out
beforehand (engineer.linear_enthalpy / linear_log10k) and read from a JSON file.

    python linear_script.py N SEED PARAMS.json      -> one JSON line: seconds (after imports), results
"""
import json
import sys
import time

import numpy as np

n, seed, params = int(sys.argv[1]), int(sys.argv[2]), json.load(open(sys.argv[3]))
A, y0 = np.array(params["A"]), np.array(params["y0"])
t0 = time.process_time()
rng = np.random.default_rng(seed)
z = rng.standard_normal((n, A.shape[0]))          # normal scores of the uncertain inputs
y = z @ A + y0                                    # the linear model: one matrix product
mean, u = y.mean(axis=0), y.std(axis=0, ddof=1)   # estimate and standard uncertainty
lo, hi = np.quantile(y, [0.025, 0.975], axis=0)   # 95 % probabilistically symmetric interval
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds, "mean": mean.tolist(), "u": u.tolist(), "low": lo.tolist(), "high": hi.tolist()}))
