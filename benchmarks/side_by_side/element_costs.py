"""What one coordinate and one output value cost at least (benchmark 7): the building blocks a
Monte Carlo trial is made of, each timed alone on arrays of the sizes the tool uses.

    python element_costs.py ROUNDS  -> one JSON line {name: ns per element}

Every block is timed in every round, the rounds interleaved, and the best round kept (CPU time
of this process, one BLAS thread: the shared machine's load hits all alike). Blocks:

* ``normal_pcg64``, ``uniform_pcg64``: numpy's default generator (the floor of benchmark 6);
* ``normal_sfc64``, ``uniform_sfc64``: the same on SFC64, the tool's score streams;
* ``shuffle``: a uniform and numpy's Fisher-Yates ``Generator.shuffle`` per value of a 2^18
  column (a Latin-hypercube column of uniforms needs a uniformly random permutation; numpy
  has no cheaper one);
* ``lhs_score``: one Latin-hypercube normal score as the tool builds it (uniform, Φ⁻¹ by the
  stratum table, shuffle; ``uqthermo.uq.latin``);
* ``sobol_point``: one coordinate of a scrambled Sobol' point (``scipy.stats.qmc.Sobol``, 8
  dimensions, 2^16 points);
* ``sobol_phi``: Φ⁻¹ of one such coordinate, the cheaper of the stratum table
  (``uqthermo.uq.latin.stratified_scores``) and ``scipy.special.ndtri``;
* ``moments``, ``histogram``, ``exact``: the per-output JCGM 101 statistics per value, 9 outputs
  (running moments; the fixed histogram of ``uqthermo.uq.stats`` with bins as fine as two
  digits need; or the values stored and the intervals and median taken as exact order
  statistics, ``uqthermo.uq.order_statistics``, 2^20 values per output).
"""
import os

for _v in ("OPENBLAS_NUM_THREADS", "OMP_NUM_THREADS"):
    os.environ[_v] = "1"

import json  # noqa: E402
import sys  # noqa: E402
import time  # noqa: E402
from pathlib import Path  # noqa: E402

import numpy as np  # noqa: E402
from scipy import special  # noqa: E402
from scipy.stats import qmc  # noqa: E402

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))
from uqthermo.uq import latin  # noqa: E402
from uqthermo.uq.order_statistics import OrderStatistics  # noqa: E402
from uqthermo.uq.stats import BinLayout, BinnedCDF, Moments  # noqa: E402

rounds = int(sys.argv[1]) if len(sys.argv) > 1 else 10
m, m_lhs, n_out = 2**16, latin.LHS_BLOCK, 9
pcg, sfc = np.random.default_rng(1), np.random.Generator(np.random.SFC64(1))
col, col_lhs, out = np.empty(m), np.empty(m_lhs), np.empty(m)
U = qmc.Sobol(8, seed=1).random(m)
latin.stratum_scores(np.zeros(1), m_lhs)         # build the stratum tables before timing
latin.stratum_scores(np.zeros(1), m)
gen = latin._generators(3, 0, 0, [0])[0]
rng = np.random.default_rng(3)
scale = np.arange(1, n_out + 1) * 7.0
pilot = rng.standard_normal((2**18, n_out)) * scale
layout = BinLayout.from_pilot(pilot, 100_000, ndigits=2)
Y = np.asfortranarray(rng.standard_normal((m, n_out)) * scale)
hist, mom = BinnedCDF(layout=layout), Moments(n_out)
n_exact = 2**20
values = rng.standard_normal((n_exact, n_out)) * scale
store = np.empty((n_out, n_exact))


def exact():
    for a in range(0, n_exact, m):                 # stored chunk by chunk, as the collector does
        store[:, a:a + m] = values[a:a + m].T
    order = OrderStatistics(store, 0.95)
    order.intervals(0.95)
    order.quantile(0.5)


def phi():
    if not latin.stratified_scores(U[:, 3], out):
        raise SystemExit("a Sobol' column of 2^16 points was not stratified")


blocks = {
    "normal_pcg64": (lambda: pcg.standard_normal(out=col), m),
    "uniform_pcg64": (lambda: pcg.random(out=col), m),
    "normal_sfc64": (lambda: sfc.standard_normal(out=col), m),
    "uniform_sfc64": (lambda: sfc.random(out=col), m),
    "shuffle": (lambda: (sfc.random(out=col_lhs), sfc.shuffle(col_lhs)), m_lhs),
    "lhs_score": (lambda: latin._fill_column(col_lhs, gen, True), m_lhs),
    "sobol_point": (lambda: qmc.Sobol(8, seed=1).random(m), 8 * m),
    "sobol_phi_table": (phi, m),
    "sobol_phi_ndtri": (lambda: special.ndtri(U[:, 3], out=out), m),
    "moments": (lambda: mom.add(Y), m * n_out),
    "histogram": (lambda: (hist.add(Y, extremes=(hist.min, hist.max)), hist.counts), m * n_out),
    "exact": (exact, n_exact * n_out),
}
best = {k: float("inf") for k in blocks}
for _ in range(rounds):
    for name, (fn, n) in blocks.items():
        t = time.process_time()
        fn()
        best[name] = min(best[name], (time.process_time() - t) / n * 1e9)
best["sobol_phi"] = min(best.pop("sobol_phi_table"), best.pop("sobol_phi_ndtri"))
print(json.dumps(best))
