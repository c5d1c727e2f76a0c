"""The random-number floor (benchmark 6): just draw the N x K normal variates (and N x M uniforms)
an output's trials need, with numpy's Generator (standard_normal: ziggurat).

    python normal_floor.py N SEED K [M]               -> one JSON line
"""
import json
import sys
import time

import numpy as np

n, seed, k = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3])
m = int(sys.argv[4]) if len(sys.argv) > 4 else 0
t0 = time.process_time()
rng = np.random.default_rng(seed)
z = rng.standard_normal((n, k))
v = rng.random((n, m)) if m else None
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds}))
