"""The random-number floor (benchmark 6): just draw the N x K normal variates (and N x M uniforms)
an output's trials need, with numpy's Generator (standard_normal: ziggurat), in chunks of 65536
rows into one reused array, so that neither the first touch of fresh memory pages nor anything
but the generator is timed.

    python normal_floor.py N SEED K [M [GENERATOR]]  -> one JSON line

GENERATOR is "pcg64" (numpy's default_rng, the floor the targets refer to) or "sfc64" (the bit
generator the tool's score streams use, shown beside it).
"""
import json
import sys
import time

import numpy as np

n, seed, k = int(sys.argv[1]), int(sys.argv[2]), int(sys.argv[3])
m = int(sys.argv[4]) if len(sys.argv) > 4 else 0
bits = sys.argv[5] if len(sys.argv) > 5 else "pcg64"
chunk = 65536
z, v = np.empty((chunk, k)), np.empty((chunk, m))
t0 = time.process_time()
rng = np.random.default_rng(seed) if bits == "pcg64" else np.random.Generator(np.random.SFC64(seed))
for s in range(0, n, chunk):
    t = min(chunk, n - s)
    rng.standard_normal(out=z[:t])
    if m:
        rng.random(out=v[:t])
seconds = time.process_time() - t0
print(json.dumps({"seconds": seconds}))
