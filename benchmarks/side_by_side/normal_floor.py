"""The random-number floor (benchmark 6): just draw the N x K normal variates (and N x M uniforms)
an output's trials need, with numpy's Generator (standard_normal: ziggurat), in chunks of 65536
rows into one reused array, so that neither the first touch of fresh memory pages nor anything
but the generator is timed.

    python normal_floor.py N SEED K [M]               -> one JSON line
"""
import json
import sys
import time

import numpy as np

n, seed, k = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3])
m = int(sys.argv[4]) if len(sys.argv) > 4 else 0
chunk = 65536
z, v = np.empty((chunk, k)), np.empty((chunk, m))
t0 = time.process_time()
rng = np.random.default_rng(seed)
for s in range(0, n, chunk):
    t = min(chunk, n - s)
    rng.standard_normal(out=z[:t])
    if m:
        rng.random(out=v[:t])
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds}))
