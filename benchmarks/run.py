"""uqthermo benchmarks: ratios measured side by side in one run (not part of the test suite).

    python benchmarks/run.py            # full run, writes benchmarks/RESULTS.md
    python benchmarks/run.py --quick    # smoke version (smaller sizes), prints only

1. Against a straightforward per-sample script (scipy.integrate.quad over each species' Cp,
   one sample at a time) on the same case: samples per second, ratio.
2. The whole pipeline (sampling, input transforms, model, JCGM 101 statistics) against the
   cost of just drawing the random numbers the run needs with numpy's Generator: ratio,
   with a breakdown of where the time goes.
3. Adaptive Monte Carlo (JCGM 101 §7.9) with scrambled Sobol' against pseudo-random
   sampling: model evaluations needed to reach the same numerical tolerance, ratio.
4. Peak memory of a run with 10^8 samples of one output (chunked engine), measured in a
   fresh subprocess with resource.getrusage (ru_maxrss).
5. A batch of 1000 reactions over 20 temperatures with 10^5 samples, sharing 200
   synthetic species (NASA-7 data, built programmatically), through the shared species
   table and the stoichiometric matrix; compared with reaction-by-reaction evaluation.
6. Side by side with a hand-written numpy script and the random-number floor (issue 19):
   marginal cost per trial of each output of the demo and the issue's case, every sampling scheme.
7. What a trial costs at least: the per-element cost of each building block (generators,
   shuffle, Sobol' points, Φ⁻¹, per-value statistics) and the lower bound it sets per output.

The benchmark case is the methanation reaction of the demo ``inputs/methanation_reactor.toml``
(published species data; its Cp uncertainties are the demo's assumptions). The synthetic
species of benchmark 5 have INVENTED data (scaled copies of Cantera's gri30 CH4 NASA-7
polynomials, invented formation enthalpies); they only exercise the machinery.
The script prints ratios, not pass/fail: each target is shown next to its measured value.
"""

from __future__ import annotations

import argparse
import datetime as _dt
import json
import math
import os
import platform
import re
import resource
import subprocess
import sys
import time
import tomllib
from pathlib import Path

import numpy as np
from scipy import special

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from uqthermo.case.model.builder import build_model  # noqa: E402
from uqthermo.case.loader import load_case, parse_case  # noqa: E402
from uqthermo.case.model.dependence import model_columns  # noqa: E402
from uqthermo.uq.montecarlo import (batch_summary, adaptive_batch_size, batch_sampler,  # noqa: E402
                                    propagate_monte_carlo, sobol_rotation, stability_factor, trial_design)
from uqthermo.uq.sampling import UniformStream  # noqa: E402
from uqthermo.uq.stats import Moments, numerical_tolerance  # noqa: E402

DEMO = ROOT / "inputs" / "methanation_reactor.toml"
T_REF = 298.15
#: runs per timing in benchmark 2 (the best is kept: this shared VM is noisy, and slow on fresh pages)
REPEATS = 3


# ----------------------------------------------------------------------------- machine

def machine() -> dict:
    cpu = "unknown"
    try:
        for line in Path("/proc/cpuinfo").read_text().splitlines():
            if line.startswith("model name"):
                cpu = line.split(":", 1)[1].strip()
                break
    except OSError:
        pass
    mem = "unknown"
    try:
        for line in Path("/proc/meminfo").read_text().splitlines():
            if line.startswith("MemTotal"):
                mem = f"{int(line.split()[1]) / 2**20:.1f} GiB"
                break
    except OSError:
        pass
    try:
        load = " ".join(f"{x:.2f}" for x in os.getloadavg())
    except OSError:
        load = "unknown"
    import scipy

    return {"date": _dt.datetime.now(_dt.timezone.utc).strftime("%Y-%m-%d %H:%M UTC"),
            "nproc": os.cpu_count(), "cpu": cpu, "memory": mem, "load_average_at_start": load,
            "python": platform.python_version(), "numpy": np.__version__, "scipy": scipy.__version__,
            "platform": platform.platform()}


# ----------------------------------------------------------------------------- cases

def run_options(case, m) -> dict:
    """The propagation options `uqthermo run` gives model ``m`` of ``case`` (``pipeline/job.py``):
    its affine map when it has one, and the input columns it depends on."""
    return {"affine": m.affine, "depends_on": model_columns(case, m.inputs)}


def demo_case(outputs: list[dict], *, exact_entropies: bool = False):
    """The methanation demo with its species and reactions and the given outputs only."""
    raw = tomllib.loads(DEMO.read_text(encoding="utf-8"))
    raw.pop("candidate", None)
    raw["output"] = outputs
    if exact_entropies:   # entropies do not enter ΔrH: leave them out of the inputs
        for sp in raw["species"].values():
            for ph in sp.values():
                if isinstance(ph, dict) and "standard_entropy" in ph:
                    ph.pop("standard_entropy")
    return parse_case(raw, "benchmark.toml", library=False)


WINDOW = [{"name": "dH_window", "kind": "reaction_enthalpy", "reaction": "methanation",
           "temperatures": {"from": "250 degC", "to": "450 degC", "step": "25 K"}}]
POINT = [{"name": "dH_623K", "kind": "reaction_enthalpy", "reaction": "methanation", "temperature": "623.15 K"}]


def timed(fn, *args, **kw):
    t = time.perf_counter()
    out = fn(*args, **kw)
    return out, time.perf_counter() - t


def best_of(k: int, fn, *args, **kw):
    """(result, shortest wall time) of k runs: the first run in a fresh process also pays the
    virtual machine's first touch of its memory pages, which is not the code's cost."""
    best = math.inf
    for _ in range(k):
        out, t = timed(fn, *args, **kw)
        best = min(best, t)
    return out, best


# ----------------------------------------------------------------------------- 1. naive script

def _cp_shomate(T: float, ranges, coeffs) -> float:
    """Shomate Cp (NIST WebBook form, t = T/1000), plain Python, range containing T."""
    for r, (lo, hi) in enumerate(ranges):
        if T <= hi or r == len(ranges) - 1:
            A, B, C, D, E = coeffs[5 * r:5 * r + 5]
            t = T / 1000.0
            return A + B * t + C * t * t + D * t ** 3 + E / (t * t)
    raise ValueError(T)


def _cp_nasa7(T: float, ranges, coeffs) -> float:
    """NASA-7 Cp = R (a1 + a2 T + a3 T² + a4 T³ + a5 T⁴), plain Python, range containing T."""
    for r, (lo, hi) in enumerate(ranges):
        if T <= hi or r == len(ranges) - 1:
            a = coeffs[7 * r:7 * r + 5]
            return 8.314462618 * (a[0] + a[1] * T + a[2] * T * T + a[3] * T ** 3 + a[4] * T ** 4)
    raise ValueError(T)


def naive_script(case, X: np.ndarray, temperatures) -> np.ndarray:
    """Straightforward per-sample evaluation: for each sample, each temperature and each
    species, ΔfH_i + ∫_{T_ref}^{T} Cp_i dT by scipy.integrate.quad; ΔrH = Σ ν_i H_i (kJ/mol)."""
    from scipy.integrate import quad

    rx = case.reactions["methanation"]
    names = [v.name for v in build_model(case).inputs.variables]
    out = np.empty((X.shape[0], len(temperatures)))
    for n in range(X.shape[0]):                       # one sample at a time
        x = dict(zip(names, X[n]))
        for k, T in enumerate(temperatures):
            total = 0.0
            for p in rx.participants:
                ph = case.species[p.species].phases[p.phase]
                cp = ph.cp
                scale = x.get(f"{p.species}.{p.phase}.heat_capacity[scale]", 1.0)
                coeffs = [scale * c for c in cp.coefficients]
                fn = _cp_shomate if cp.kind == "shomate" else _cp_nasa7
                dh, _ = quad(fn, T_REF, T, args=(cp.ranges, coeffs))
                hf = x.get(f"{p.species}.{p.phase}.formation_enthalpy", ph.formation_enthalpy)
                total += p.nu * (hf + dh)
            out[n, k] = total / 1e3
    return out


def bench_naive(quick: bool) -> dict:
    case = demo_case(WINDOW)
    m = build_model(case)
    temps = case.outputs[0].temperatures
    n_naive = 30 if quick else 200
    N = 200_000 if quick else 2_000_000
    rng = np.random.default_rng(1)

    def naive_run():
        rows = []
        for _ in range(n_naive):     # draw one sample at a time, then evaluate it
            rows.append(m.inputs.from_uniform(rng.random((1, len(m.inputs))))[0])
            naive_script(case, np.array(rows[-1:]), temps)
        return np.array(rows)

    rows, t_naive = timed(naive_run)
    check = np.max(np.abs(naive_script(case, rows[:10], temps) - m.evaluate(rows[:10])))
    propagate_monte_carlo(m.f, m.inputs, samples=20_000, seed=2)   # warm-up
    res, t_pipe = timed(propagate_monte_carlo, m.f, m.inputs, samples=N, sampling="sobol", seed=2)
    naive_rate = n_naive / t_naive
    pipe_rate = N / t_pipe
    return {"case": "methanation ΔrH at 9 temperatures (523-723 K), 5 species, "
                    f"{len(m.inputs)} uncertain inputs",
            "naive_samples": n_naive, "naive_s": t_naive, "naive_samples_per_s": naive_rate,
            "pipeline_samples": N, "pipeline_s": t_pipe, "pipeline_samples_per_s": pipe_rate,
            "ratio": pipe_rate / naive_rate, "max_abs_difference_kJ_per_mol": float(check),
            "target": ">= 1000x"}


# ----------------------------------------------------------------------------- 2. random-number floor

def bench_rng_floor(quick: bool) -> dict:
    N = 1_000_000 if quick else 10_000_000
    chunk = 65_536
    out = {"samples": N, "target": "pipeline within 3x of drawing the random numbers (the normal variates)"}
    for label, outputs, exact_s in (("one point (623.15 K)", POINT, False),
                                    ("9 temperatures", WINDOW, False),
                                    ("one point, entropies exact", POINT, True)):
        case = demo_case(outputs, exact_entropies=exact_s)
        m = build_model(case)
        tool = run_options(case, m)
        d = len(trial_design(m.f, m.inputs, "random", 4, False, **tool).active)  # the inputs the run samples
        rng = np.random.default_rng(3)

        def draw():
            for s in range(0, N, chunk):
                rng.random((min(chunk, N - s), d))

        _, t_rng = best_of(REPEATS, draw)

        def draw_normal():   # every input of this case is normal: the variates themselves
            for s in range(0, N, chunk):
                rng.standard_normal((min(chunk, N - s), d))

        _, t_norm = best_of(REPEATS, draw_normal)
        Uc = rng.random((chunk, d))

        def inverse_normal():   # the JCGM 101 §6.3 transform of N x D uniforms, nothing else
            for s in range(0, N, chunk):
                special.ndtri(Uc[:min(chunk, N - s)])

        _, t_ndtri = best_of(REPEATS, inverse_normal)
        row = {"inputs": d, "declared_inputs": len(m.inputs), "outputs": m.n_reported, "numpy_generator_s": t_rng,
               "numpy_normal_s": t_norm, "ndtri_s": t_ndtri}
        for name, sampling, kw in (("sobol", "sobol", {}), ("sobol_axes", "sobol", {"rotate": False}),
                                   ("random", "random", {})):
            _, t = best_of(REPEATS, propagate_monte_carlo, m.f, m.inputs, samples=N, sampling=sampling, seed=4,
                           **kw, **tool)
            row[f"pipeline_{name}_s"] = t
            row[f"ratio_{name}"] = t / t_rng
            row[f"ratio_{name}_vs_normal"] = t / t_norm
        # breakdown (Sobol', rotated scores): stream, trial evaluation (scores to model values:
        # Φ⁻¹ and the affine product, or input transform and model); the rest is the statistics
        design = trial_design(m.f, m.inputs, "sobol", 4, True, **tool)
        t_s = t_f = 0.0
        done = 0
        stream = design.stream()
        for s in range(0, N, chunk):
            U, dt = timed(stream.draw, min(chunk, N - s))
            t_s += dt
            _, dt = timed(design.evaluate, U, done, 0)
            t_f += dt
            done += U.shape[0]
        row["affine"] = design.affine
        row["breakdown_s"] = {"sobol_stream": t_s, "trial_evaluation": t_f,
                              "statistics_and_rest": max(0.0, row["pipeline_sobol_s"] - t_s - t_f)}
        out[label] = row
    return out


# ----------------------------------------------------------------------------- 3. adaptive Sobol vs random

def _first_stable(m, sampling: str, seed: int, ndigits: int, which: tuple[int, ...],
                  cap: int = 20_000_000) -> int:
    """Trials after which the §7.9 criteria ``which`` (0 mean, 1 u, 2 low, 3 high) hold,
    with the engine's batches (``batch_sampler``), score rotation and test factor (``stability_factor``)."""
    M = adaptive_batch_size(0.95, sampling)
    draw = batch_sampler(m.inputs, sampling, seed, M)
    rotation = sobol_rotation(m.f, m.inputs, sampling, True)
    mom = Moments(1)
    S = []
    h = 0
    while h * M < cap:
        Y = m.f(m.inputs.from_uniform(draw(h), rotation))
        mom.add(Y)
        S.append(batch_summary(Y, 0.95))
        h += 1
        if h < 2:
            continue
        s = np.sqrt(np.var(np.stack(S), axis=0, ddof=1) / h)[:, 0]
        if np.all(stability_factor(h) * s[list(which)] <= numerical_tolerance(mom.std, ndigits)[0]):
            return h * M
    return cap


def _demo_output(name: str):
    """The methanation demo case with one of its own outputs only."""
    own = tomllib.loads(DEMO.read_text(encoding="utf-8"))["output"]
    return demo_case([o for o in own if o["name"] == name])


ADAPTIVE_CASES = (
    ("ΔrH at 623.15 K (linear in its 14 inputs)", lambda: demo_case(POINT)),
    ("ΔrH at 9 temperatures, 250-450 °C (9 outputs, linear)", lambda: demo_case(WINDOW)),
    ("ΔrH at the sampled bed temperature (nonlinear in T)", lambda: _demo_output("dH_operating")),
    ("cooling duty of two reactions (products of feed, conversion and ΔrH; one rectangular input)",
     lambda: _demo_output("cooling_duty")),
)


def bench_adaptive(quick: bool) -> dict:
    seeds = [1, 2] if quick else [1, 2, 3, 4, 5, 6, 7, 8]
    out = {"seeds": seeds,
           "batch_size": {"sobol": adaptive_batch_size(0.95, "sobol"), "random": adaptive_batch_size(0.95)},
           "target": ">= 4x fewer with Sobol'", "cases": {}}
    designs = (("sobol", {}), ("sobol_axes", {"rotate": False}), ("random", {}))
    for label, make in ADAPTIVE_CASES:
        case = make()
        m = build_model(case)
        tool = run_options(case, m)
        rows = {"inputs": len(m.inputs), "outputs": m.n_reported}
        for rule, kw in (("JCGM 101 §7.9.4 rule: y, u(y), probabilistically symmetric interval",
                          {"check_shortest": False}),
                         ("same, plus the shortest interval (uqthermo's default)", {})):
            row = {}
            for name, extra in designs:
                sampling = "random" if name == "random" else "sobol"
                row[name] = [propagate_monte_carlo(m.f, m.inputs, samples="adaptive", sampling=sampling, seed=s,
                                                   max_samples=20_000_000, **kw, **extra, **tool).samples_used
                             for s in seeds]
            row["ratio_random_over_sobol"] = float(np.mean(row["random"]) / np.mean(row["sobol"]))
            row["ratio_random_over_sobol_axes"] = float(np.mean(row["random"]) / np.mean(row["sobol_axes"]))
            rows[rule] = row
        out["cases"][label] = rows
    m = build_model(demo_case(POINT))
    row = {}
    for sampling in ("sobol", "random"):
        row[sampling] = [_first_stable(m, sampling, s, 3, (0, 1)) for s in seeds]
    row["ratio_random_over_sobol"] = float(np.mean(row["random"]) / np.mean(row["sobol"]))
    out["y and u(y) only, 3 digits, ΔrH at 623.15 K (benchmark-side)"] = row
    return out


# ----------------------------------------------------------------------------- 4. memory

def _vm_hwm_kib() -> int:
    """Peak resident set of this process image (VmHWM, reset at exec), KiB; ru_maxrss otherwise.

    ru_maxrss of a child started with fork + exec also counts the parent's pages at fork
    time on Linux, so VmHWM is the honest figure here."""
    try:
        for line in Path("/proc/self/status").read_text().splitlines():
            if line.startswith("VmHWM:"):
                return int(line.split()[1])
    except OSError:
        pass
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss


def memory_child(n: int) -> None:
    import tracemalloc

    base = _vm_hwm_kib()
    case = demo_case(POINT)
    m = build_model(case)
    tracemalloc.start()
    res, t = timed(propagate_monte_carlo, m.f, m.inputs, samples=n, sampling="random", seed=9)
    _, traced_peak = tracemalloc.get_traced_memory()
    tracemalloc.stop()
    print(json.dumps({"samples": res.samples_used, "seconds": t, "peak_rss_KiB": _vm_hwm_kib(),
                      "rss_after_imports_KiB": base, "tracemalloc_peak_MiB": traced_peak / 2**20,
                      "quantile_method": res.quantile_method,
                      "mean": float(res.mean[0]), "u": float(res.standard_uncertainty[0])}))


def bench_memory(quick: bool) -> dict:
    n = 10_000_000 if quick else 100_000_000
    proc = subprocess.run([sys.executable, __file__, "--memory-child", str(n)], capture_output=True, text=True,
                          check=True)
    r = json.loads(proc.stdout.strip().splitlines()[-1])
    r["peak_rss_MiB"] = r["peak_rss_KiB"] / 1024
    r["rss_after_imports_MiB"] = r["rss_after_imports_KiB"] / 1024
    r["target"] = "peak < 1024 MiB"
    return r


# ----------------------------------------------------------------------------- 5. large batch

def synthetic_set(n_species: int = 200, n_reactions: int = 1000, seed: int = 5) -> dict:
    """200 synthetic hydrocarbons CaHb (a = 1..10, b = 1..20) with INVENTED data and 1000
    balanced reactions A + B -> C, each over 20 temperatures (300-1250 K)."""
    import cantera as ct

    ch4 = ct.Solution("gri30.yaml").species("CH4").thermo
    c = ch4.coeffs                                  # [T_mid, high a1..a7, low a1..a7]
    t_mid = c[0]
    rng = np.random.default_rng(seed)
    species = {}
    formulas = [(a, b) for a in range(1, 11) for b in range(1, 21)][:n_species]
    for a, b in formulas:
        size = (a + b) / 5.0                        # CH4 has 5 atoms: scale its Cp with the atom count
        low = list(size * c[8:13]) + [0.0, 0.0]
        high = list(size * c[1:6]) + [0.0, 0.0]
        hf = -20.0 * a + 4.0 * b + rng.normal(0, 10)    # kJ/mol, INVENTED
        species[f"C{a}H{b}"] = {"formula": f"C{a}H{b}", "g": {
            "formation_enthalpy": {"value": f"{hf:.3f} kJ/mol", "u": f"{rng.uniform(0.3, 3):.2f} kJ/mol",
                                   "source": "INVENTED (benchmark)"},
            "heat_capacity": {"model": "nasa7", "relative_u": f"{rng.uniform(0.5, 3):.2f} %",
                              "source": "scaled gri30 CH4 (benchmark, INVENTED)",
                              "ranges": [{"T": ["200 K", f"{t_mid} K"], "coefficients": low},
                                         {"T": [f"{t_mid} K", "3500 K"], "coefficients": high}]}}}
    index = {f: i for i, f in enumerate(formulas)}
    pairs = [(p, q) for i, p in enumerate(formulas) for q in formulas[i + 1:]
             if (p[0] + q[0], p[1] + q[1]) in index]
    chosen = [pairs[i] for i in rng.choice(len(pairs), n_reactions, replace=False)]
    reactions, outputs = {}, []
    for k, (p, q) in enumerate(chosen):
        name = f"r{k}"
        reactions[name] = {"equation": f"C{p[0]}H{p[1]}(g) + C{q[0]}H{q[1]}(g) -> C{p[0] + q[0]}H{p[1] + q[1]}(g)"}
        outputs.append({"name": f"dH_{name}", "kind": "reaction_enthalpy", "reaction": name,
                        "temperatures": {"from": "300 K", "to": "1250 K", "step": "50 K"}})
    return {"title": "synthetic reaction set (benchmark, INVENTED data)", "settings": {"seed": 1},
            "species": species, "reaction": reactions, "output": outputs}


def bench_batch(quick: bool) -> dict:
    N = 10_000 if quick else 100_000
    raw = synthetic_set()
    case, t_load = timed(parse_case, raw, "synthetic.toml", library=False)
    m, t_build = timed(build_model, case)
    tab = m.tables[0] if m.tables else None
    d, M = len(m.inputs), m.n_reported
    chunk = 512                                       # keeps Y (chunk x 20000) at 80 MB
    st = UniformStream(d, "sobol", 7)
    mom = Moments(M)
    t_x = t_f = t_s = 0.0
    first = None
    for s in range(0, N, chunk):
        U = st.draw(min(chunk, N - s))
        X, dt = timed(m.inputs.from_uniform, U)
        t_x += dt
        Y, dt = timed(m.evaluate, X)
        t_f += dt
        _, dt = timed(mom.add, Y)
        t_s += dt
        if first is None:
            first = (X, Y)
    # reference: reaction by reaction (batch=False) on a sub-sample, extrapolated per value
    md = build_model(case, batch=False)
    n_ref = 256 if quick else 1024
    Yd, t_direct = timed(md.evaluate, first[0][:n_ref] if first[0].shape[0] >= n_ref else first[0])
    n_ref = Yd.shape[0]
    diff = float(np.max(np.abs(Yd - first[1][:n_ref])))
    values = N * M
    j = m.output_columns(0)
    rho = float(np.corrcoef(first[1][:, j[0]], first[1][:, j[-1]])[0, 1])
    return {"species": len(case.species), "species_in_table": len(tab.keys) if tab else None,
            "reactions": len(case.reactions), "temperatures": len(case.outputs[0].temperatures),
            "inputs": d, "samples": N, "values": values, "load_s": t_load, "build_s": t_build,
            "affine_species_map": bool(tab.linear) if tab else None,
            "input_transform_s": t_x, "model_s": t_f, "moments_s": t_s,
            "model_values_per_s": values / t_f,
            "reaction_by_reaction_values_per_s": n_ref * M / t_direct,
            "ratio_batch_over_reaction_by_reaction": (values / t_f) / (n_ref * M / t_direct),
            "max_abs_difference_kJ_per_mol": diff,
            "correlation_r0_300K_vs_1250K": rho}


# ----------------------------------------------------------------------------- 6. side by side with scripts

SIDE = Path(__file__).resolve().parent / "side_by_side"
ISSUE_CASE = Path(__file__).resolve().parent / "cases" / "methanation_point.toml"
SCHEMES = ("random", "latin-hypercube", "sobol")
METHANATION = "CO2(g) + 4 H2(g) -> CH4(g) + 2 H2O(g)"
RWGS = "CO2(g) + H2(g) -> CO(g) + H2O(g)"


def demo_output_file(name: str, folder: Path) -> Path:
    """The demo case file with only its output ``name`` (and no purchase candidates), as text."""
    text = DEMO.read_text(encoding="utf-8")
    head, rest = text.split("[[output]]", 1)
    block = next(b for b in rest.split("[[output]]") if re.search(rf'^name = "{name}"', b, re.M))
    path = folder / f"demo_{name}.toml"
    path.write_text(head + "[[output]]" + block.split("[[candidate]]")[0], encoding="utf-8")
    return path


def _joint_linear(parts: list[dict]) -> dict:
    """Several linear models (engineer.linear_*) over the union of their inputs, one column each."""
    names = list(dict.fromkeys(n for p in parts for n in p["inputs"]))
    A = np.zeros((len(names), len(parts)))
    for j, p in enumerate(parts):
        for n, row in zip(p["inputs"], p["A"]):
            A[names.index(n), j] = row[0]
    return {"A": A.tolist(), "y0": [p["y0"][0] for p in parts], "inputs": names}


def side_by_side_cases(folder: Path) -> list[dict]:
    """The issue's case and the demo's outputs, each with its script, floor and per-sample script."""
    sys.path.insert(0, str(SIDE))
    import engineer

    def params(name, p):
        path = folder / f"{name}.json"
        path.write_text(json.dumps(p), encoding="utf-8")
        return str(path)

    meth = engineer.equation(METHANATION)
    out = []

    def counts(path) -> str:
        """'D uncertain inputs declared in the file, K sampled by `uqthermo run`'."""
        case = load_case(path)
        m = build_model(case)
        design = trial_design(m.f, m.inputs, "random", 1, False, **run_options(case, m))
        declared = sum(len(d.distributions) for d in case.data.values() if d.uncertain)
        return f"{declared} uncertain inputs declared, {len(design.active)} sampled"

    sp = engineer.load(ISSUE_CASE)
    lin = engineer.linear_enthalpy(sp, meth, [623.15])
    out.append({"key": "issue_point", "label": f"ΔrH at 350 °C (issue case: {counts(ISSUE_CASE)})",
                "case": str(ISSUE_CASE), "normals": 7, "uniforms": 0,
                "script": ["linear_script.py", params("issue", lin)], "quad": ["enthalpy", "623.15"]})
    demo = engineer.load(DEMO)
    window = [523.15 + 25.0 * i for i in range(9)]
    f = demo_output_file("dH_window", folder)
    lin = engineer.linear_enthalpy(demo, meth, window)
    out.append({"key": "demo_window", "label": f"demo dH_window: ΔrH at 9 temperatures (linear; {counts(f)})",
                "case": str(f), "normals": 7, "uniforms": 0, "script": ["linear_script.py", params("window", lin)],
                "quad": ["enthalpy", *map(str, window)]})
    f = demo_output_file("dH_operating", folder)
    out.append({"key": "demo_operating",
                "label": f"demo dH_operating: ΔrH at the sampled bed temperature (nonlinear; {counts(f)})",
                "case": str(f), "normals": 8, "uniforms": 0, "script": ["operating_script.py", str(f)],
                "quad": ["operating"]})
    f = demo_output_file("cooling_duty", folder)
    duty = _joint_linear([engineer.linear_enthalpy(demo, meth, [623.15]),
                          engineer.linear_enthalpy(demo, engineer.equation(RWGS), [623.15])])
    duty.update(feed=[25000 / 3600, 250 / 3600], conversion=[0.92, 0.02], side=[0.03, 0.015])
    out.append({"key": "demo_duty",
                "label": f"demo cooling_duty: two reactions times extents (nonlinear; {counts(f)}, one rectangular)",
                "case": str(f), "normals": 11, "uniforms": 1, "script": ["duty_script.py", params("duty", duty)],
                "quad": ["duty"]})
    k_temps = [523.15 + 50.0 * i for i in range(5)]
    f = demo_output_file("log10K_window", folder)
    lin = engineer.linear_log10k(demo, meth, k_temps)
    out.append({"key": "demo_log10k", "label": f"demo log10K_window: log10 K at 5 temperatures (linear; {counts(f)})",
                "case": str(f), "normals": len(lin["inputs"]), "uniforms": 0,
                "script": ["linear_script.py", params("log10k", lin)], "quad": ["log10k", *map(str, k_temps)]})
    return out


def _run_json(args: list[str]) -> dict:
    """Run a side-by-side program (one BLAS thread, like the tool's products) and read its JSON line."""
    env = dict(os.environ, OPENBLAS_NUM_THREADS="1", OMP_NUM_THREADS="1")
    proc = subprocess.run([sys.executable, *args], capture_output=True, text=True, env=env)
    if proc.returncode != 0:
        raise RuntimeError(f"{' '.join(args)} failed:\n{proc.stderr[-2000:]}")
    return json.loads(proc.stdout.strip().splitlines()[-1])


#: rounds of benchmark 6 (each program's time is the best of them); ``--repeats`` sets it
SIDE_REPEATS = 4


def bench_side_by_side(quick: bool) -> dict:
    """Marginal cost per trial of the tool, the hand-written scripts and the random-number floor."""
    import random
    import tempfile

    n1, n2 = (100_000, 1_000_000) if quick else (200_000, 4_000_000)
    q1, q2 = (20, 100) if quick else (100, 600)
    repeats = 2 if quick else SIDE_REPEATS
    folder = Path(tempfile.mkdtemp(prefix="uqthermo-bench6-"))
    cases = side_by_side_cases(folder)
    jobs = []
    for c in cases:
        for n in (n1, n2):
            for scheme in SCHEMES:
                jobs.append((c["key"], f"pipeline {scheme}", n, ["pipeline.py", str(n), "7", c["case"], scheme,
                                                                 str(folder / f"out-{c['key']}-{scheme}-{n}")]))
            jobs.append((c["key"], "script", n, [c["script"][0], str(n), "7", *c["script"][1:]]))
            jobs.append((c["key"], "floor", n, ["normal_floor.py", str(n), "7", str(c["normals"]), str(c["uniforms"])]))
            jobs.append((c["key"], "floor sfc64", n, ["normal_floor.py", str(n), "7", str(c["normals"]),
                                                      str(c["uniforms"]), "sfc64"]))
        for n in (q1, q2):
            jobs.append((c["key"], "per-sample quad", n, ["quad_script.py", str(n), "7", c["case"], *c["quad"]]))
    best: dict = {}
    last: dict = {}
    order = random.Random(6)
    for r in range(repeats):          # interleaved: load on the shared machine hits all alike
        todo = list(jobs)
        order.shuffle(todo)
        for key, prog, n, args in todo:
            res = _run_json([str(SIDE / args[0]), *args[1:]])
            k = (key, prog, n)
            best[k] = min(best.get(k, math.inf), res["seconds"])
            last[k] = res
        print(f"  side by side: round {r + 1} of {repeats} done", flush=True)
    out = {"trials": [n1, n2], "per_sample_trials": [q1, q2], "repeats": repeats, "cases": {}}
    for c in cases:
        key = c["key"]

        def marginal(prog, a=n1, b=n2):
            return (best[(key, prog, b)] - best[(key, prog, a)]) / (b - a) * 1e9   # ns per trial

        row = {"label": c["label"], "normals": c["normals"], "uniforms": c["uniforms"],
               "script_ns": marginal("script"), "floor_ns": marginal("floor"),
               "floor_sfc64_ns": marginal("floor sfc64"),
               "quad_ns": marginal("per-sample quad", q1, q2), "seconds": {}}
        for prog in ["script", "floor", *[f"pipeline {s}" for s in SCHEMES]]:
            row["seconds"][prog] = [best[(key, prog, n1)], best[(key, prog, n2)]]
        ref = last[(key, "script", n2)]
        for s in SCHEMES:
            ns = marginal(f"pipeline {s}")
            got = last[(key, f"pipeline {s}", n2)]
            u = np.asarray(ref["u"])
            row[s] = {"pipeline_ns": ns, "vs_script": ns / row["script_ns"], "vs_floor": ns / row["floor_ns"],
                      "vs_floor_sfc64": ns / row["floor_sfc64_ns"],
                      "quad_over_pipeline": row["quad_ns"] / ns,
                      "peak_rss_MiB": [last[(key, f"pipeline {s}", n1)]["peak_rss_MiB"], got["peak_rss_MiB"]],
                      # agreement with the independent script at N2, in standard errors u/sqrt(N)
                      "mean_difference_in_se": float(np.max(np.abs(np.asarray(got["mean"]) - ref["mean"])
                                                            / (u / math.sqrt(n2)))),
                      "u_relative_difference": float(np.max(np.abs(np.asarray(got["u"]) / u - 1.0)))}
        out["cases"][key] = row
    return out


# ----------------------------------------------------------------------------- report


# ----------------------------------------------------------------------------- 7. what a trial costs at least

def bench_element_costs(quick: bool) -> dict:
    """Per-element costs of the building blocks of a trial (``side_by_side/element_costs.py``) and the
    lower bound they set on the cost per trial of each output of benchmark 6, model left out."""
    import tempfile

    costs = _run_json([str(SIDE / "element_costs.py"), "3" if quick else "12"])
    folder = Path(tempfile.mkdtemp(prefix="uqthermo-bench7-"))
    out = {"costs_ns": costs, "cases": {}}
    for c in side_by_side_cases(folder):
        case = load_case(c["case"])
        m = build_model(case)
        tool = run_options(case, m)
        d = trial_design(m.f, m.inputs, "sobol", 7, True, **tool)
        phi = d.stream_dimension if d.affine else d.n_scores      # coordinates mapped through Φ⁻¹
        k, u, mo = c["normals"], c["uniforms"], d.n_outputs
        stats = mo * (costs["moments"] + min(costs["histogram"], costs.get("exact", math.inf)))
        floor = k * costs["normal_pcg64"] + u * costs["uniform_pcg64"]
        bound = {"random": k * costs["normal_sfc64"] + u * costs["uniform_sfc64"] + stats,
                 "latin-hypercube": (k + u) * costs["lhs_score"] + stats,
                 "sobol": d.stream_dimension * costs["sobol_point"] + phi * costs["sobol_phi"] + stats}
        out["cases"][c["key"]] = {"label": c["label"].split(" (")[0], "normals": k, "uniforms": u, "outputs": mo,
                                  "sobol_coordinates": d.stream_dimension, "sobol_phi": phi, "floor_ns": floor,
                                  "statistics_ns": stats, "bound_ns": bound,
                                  "bound_vs_floor": {s: v / floor for s, v in bound.items()}}
    return out

def fmt(x, digits=3):
    if isinstance(x, float):
        return f"{x:.{digits}g}"
    return str(x)


def _span(results: dict) -> str:
    r = [v for row in results["2_rng_floor"].values() if isinstance(row, dict)
         for k, v in row.items() if k.endswith("_vs_normal")]
    return f"{min(r):.1f}x to {max(r):.1f}x" if r else "?"


def _ndtri_span(results: dict) -> str:
    r = [row["ndtri_s"] / row["numpy_normal_s"] for row in results["2_rng_floor"].values()
         if isinstance(row, dict) and "ndtri_s" in row]
    return f"{min(r):.1f}x to {max(r):.1f}x" if r else "about as much as"


def _unmet(b: dict | None) -> str:
    """'; above a target: ...' listing the rows and schemes of benchmark 6 over 1.0x the script or 2x the floor."""
    bad = []
    for r in (b or {}).get("cases", {}).values():
        name = r["label"].split(" (")[0].split(":")[0]
        for s in SCHEMES:
            x = r.get(s)
            if x and (x["vs_script"] > 1.0 or x["vs_floor"] > 2.0):
                bad.append(f"{name} {s} ({x['vs_script']:.2f}x script, {x['vs_floor']:.2f}x floor)")
    return ("; above a target: " + ", ".join(bad)) if bad else "; every row meets both targets"


def _nonlinear_now(b: dict | None) -> str:
    """', now X and Y times the script (random sampling)' for the demo's nonlinear rows of benchmark 6."""
    rows = [(b or {}).get("cases", {}).get(k) for k in ("demo_operating", "demo_duty")]
    if not all(rows):
        return ""
    return (f"; with pseudo-random sampling they now take {rows[0]['random']['vs_script']:.2f}x and "
            f"{rows[1]['random']['vs_script']:.2f}x the script's time per trial")


def render(results: dict) -> str:
    mach = results["machine"]
    L = ["# Benchmark results", "",
         f"Measured by `python benchmarks/run.py` on {mach['date']}.", "",
         "## Machine", "",
         f"- CPU: {mach['cpu']}, nproc = {mach['nproc']}, memory {mach['memory']}",
         f"- load average at start: {mach['load_average_at_start']} (a shared development machine: other "
         "jobs were running, so absolute times are noisy; the ratios are measured side by side in one run)",
         f"- Python {mach['python']}, numpy {mach['numpy']}, scipy {mach['scipy']}, {mach['platform']}"]
    for name, m in results.get("machine_by_benchmark", {}).items():
        L.append(f"- benchmark {name.split('_')[0]} measured again on {m['date']} (load average at start "
                 f"{m['load_average_at_start']})")
    L += [""]
    b = results["1_naive"]
    L += ["## 1. Against a straightforward per-sample script", "",
          f"Case: {b['case']}. The script draws one sample at a time and integrates each species' Cp with "
          "`scipy.integrate.quad` (plain-Python Shomate / NASA-7 functions); the pipeline is the full "
          "`propagate_monte_carlo` run (Sobol', statistics included).", "",
          "| | samples | seconds | samples/s |", "|---|---|---|---|",
          f"| per-sample script | {b['naive_samples']} | {fmt(b['naive_s'])} | {fmt(b['naive_samples_per_s'])} |",
          f"| uqthermo pipeline | {b['pipeline_samples']} | {fmt(b['pipeline_s'])} | {fmt(b['pipeline_samples_per_s'])} |",
          "", f"**Ratio: {b['ratio']:.0f}x** (target {b['target']}); largest difference between the two on the "
          f"same input rows: {b['max_abs_difference_kJ_per_mol']:.1e} kJ/mol.", ""]
    b = results["2_rng_floor"]
    L += ["## 2. Against just drawing the random numbers", "",
          f"N = {b['samples']} trials. Floor: the random numbers the run needs, drawn with numpy's Generator "
          "in chunks of 65536 x D, D the inputs the outputs depend on (the case declares all 14 of the demo's "
          "species data, or 9 with exact entropies; ΔrH of methanation uses 7): every input of this case is "
          "normal, so the run needs N x D normal variates, `Generator.standard_normal` (the target's floor, in "
          "bold). For information, the cost of N x D bare uniforms (`Generator.random`) is shown too. "
          "Pipeline = the whole `propagate_monte_carlo` run as `uqthermo run` calls it (the model declared "
          "affine, the columns it depends on given: sampling, normal scores, trials, JCGM 101 §7 statistics). "
          f"Each time is the best of {REPEATS} runs (wall time). *Sobol'* is the default design "
          "(normal scores rotated onto the model's linear directions); *Sobol' axes* is `sobol_rotation = false`.", "",
          "| case | D | M | normals s | uniforms s | pipeline Sobol' s | ratio (normals / uniforms) | "
          "pipeline Sobol' axes s | ratio | pipeline random s | ratio |",
          "|---|---|---|---|---|---|---|---|---|---|---|"]
    for k, r in b.items():
        if isinstance(r, dict) and "inputs" in r:
            L.append(f"| {k} | {r['inputs']} | {r['outputs']} | {fmt(r['numpy_normal_s'])} | "
                     f"{fmt(r['numpy_generator_s'])} | {fmt(r['pipeline_sobol_s'])} | "
                     f"**{r['ratio_sobol_vs_normal']:.1f}x** / {r['ratio_sobol']:.1f}x | "
                     f"{fmt(r['pipeline_sobol_axes_s'])} | **{r['ratio_sobol_axes_vs_normal']:.1f}x** / "
                     f"{r['ratio_sobol_axes']:.1f}x | {fmt(r['pipeline_random_s'])} | "
                     f"**{r['ratio_random_vs_normal']:.1f}x** / {r['ratio_random']:.1f}x |")
    L += ["", "Breakdown of the Sobol' runs (rotated scores; seconds):", "",
          "| case | Sobol' stream | trials (scores to model values) | statistics and rest |", "|---|---|---|---|"]
    for k, r in b.items():
        if isinstance(r, dict) and "breakdown_s" in r:
            br = r["breakdown_s"]
            trials = br.get("trial_evaluation", br.get("input_transform", 0.0) + br.get("model", 0.0))
            L.append(f"| {k} | {fmt(br['sobol_stream'])} | {fmt(trials)} | {fmt(br['statistics_and_rest'])} |")
    L += ["", f"Target: {b['target']}.", ""]
    b = results["3_adaptive"]
    L += ["## 3. Adaptive Monte Carlo: scrambled Sobol' against pseudo-random", "",
          f"Outputs of the methanation demo case; JCGM 101 §7.9 batches of {b['batch_size']['sobol']} (Sobol') and "
          f"{b['batch_size']['random']} (random) trials; seeds "
          f"{b['seeds']}. Pseudo-random batches continue one PCG64 stream. Each Sobol' batch is its own "
          "independently scrambled net; *Sobol'* drives the inputs' normal scores rotated onto the model's linear "
          "directions (`uq/montecarlo.py::score_rotation`, the default), *Sobol' axes* gives each input its own "
          "Sobol' coordinate (`sobol_rotation = false`). All stop when k·s ≤ δ (2 significant digits) for every "
          "quantity and output, k = max(2, t_0.975(h − 1)) after h batches. The runs are made as `uqthermo run` "
          "makes them (an affine model through its folded map, only the inputs the output depends on sampled; "
          "under the rotation an affine output's Sobol' stream has the dimension of its span). Mean trials until "
          "the stopping rule holds, and the ratio random/Sobol':", "",
          "| output | stopping rule | Sobol' | Sobol' axes | random | random/Sobol' | random/Sobol' axes |",
          "|---|---|---|---|---|---|---|"]
    for case, rows in b["cases"].items():
        for rule, r in rows.items():
            if isinstance(r, dict):
                L.append(f"| {case} | {rule} | {np.mean(r['sobol']):.0f} | {np.mean(r['sobol_axes']):.0f} | "
                         f"{np.mean(r['random']):.0f} | **{r['ratio_random_over_sobol']:.1f}x** | "
                         f"{r['ratio_random_over_sobol_axes']:.1f}x |")
    for k, r in b.items():
        if isinstance(r, dict) and "ratio_random_over_sobol" in r:
            L += ["", f"{k}: Sobol' {r['sobol']}, random {r['random']} trials per seed, "
                  f"ratio **{r['ratio_random_over_sobol']:.0f}x**."]
    spans = {}
    for rows in b["cases"].values():
        for rule, r in rows.items():
            if isinstance(r, dict):
                spans.setdefault(rule, []).append(r["ratio_random_over_sobol"])
    for rule, v in spans.items():
        L += ["", f"{rule}: the default Sobol' design needs **{min(v):.1f}x to {max(v):.1f}x** fewer trials than "
              f"pseudo-random sampling over these {len(v)} outputs."]
    L += ["", f"Target: {b['target']}. Trials per seed are in `benchmarks/results.json`.", ""]
    b = results["4_memory"]
    L += ["## 4. Peak memory, one output", "",
          f"{b['samples']} trials (pseudo-random, {b['quantile_method']} quantiles) in {fmt(b['seconds'])} s; "
          f"peak resident memory (VmHWM of a fresh process) **{b['peak_rss_MiB']:.0f} MiB** (after imports: "
          f"{b['rss_after_imports_MiB']:.0f} MiB; peak of traced allocations during the run "
          f"{b['tracemalloc_peak_MiB']:.0f} MiB), target {b['target']}. Result: mean {b['mean']:.4f} kJ/mol, u {b['u']:.4f} kJ/mol.", ""]
    b = results["5_batch"]
    L += ["## 5. Reaction set through the stoichiometric matrix", "",
          f"{b['reactions']} reactions A + B -> C over {b['temperatures']} temperatures, {b['species']} synthetic "
          f"species ({b['species_in_table']} take part), {b['inputs']} uncertain inputs, {b['samples']} samples "
          f"= {b['values']:.2e} reaction-temperature values. Case parsed in {fmt(b['load_s'])} s, model built in "
          f"{fmt(b['build_s'])} s (affine species map: {b['affine_species_map']}).", "",
          "| step | seconds |", "|---|---|",
          f"| input transform | {fmt(b['input_transform_s'])} |",
          f"| model (species table + stoichiometric product) | {fmt(b['model_s'])} |",
          f"| running moments of all {b['reactions'] * b['temperatures']} outputs | {fmt(b['moments_s'])} |",
          "", f"Model throughput {b['model_values_per_s']:.3g} values/s against "
          f"{b['reaction_by_reaction_values_per_s']:.3g} values/s reaction by reaction: "
          f"**{b['ratio_batch_over_reaction_by_reaction']:.0f}x**; largest difference "
          f"{b['max_abs_difference_kJ_per_mol']:.1e} kJ/mol. Correlation of one reaction's ΔrH at 300 K and "
          f"1250 K across the shared samples: {b['correlation_r0_300K_vs_1250K']:.3f}.", ""]
    b = results.get("6_side_by_side")
    if b:
        mach6 = results.get("machine_by_benchmark", {}).get("6_side_by_side", results["machine"])
        n1, n2 = b["trials"]
        q1, q2 = b["per_sample_trials"]
        L += ["## 6. Side by side: the tool, a hand-written numpy script and the random numbers", "",
              f"Measured {mach6['date']} (load average at start {mach6['load_average_at_start']}). "
              "Marginal cost per trial = (t(N2) − t(N1)) / (N2 − N1) with "
              f"N1 = {n1}, N2 = {n2} trials (per-sample script: {q1} and {q2}); each time is the best of "
              f"{b['repeats']} runs, the runs of all programs interleaved in a shuffled order so that the load of "
              "this shared machine hits all alike. Times are CPU times of the process (user + system, "
              "`time.process_time`), so that waiting for a core while other jobs run does not count; every "
              "program runs with one BLAS thread. Programs (in `benchmarks/side_by_side/`), each in its own "
              "process, timed after its imports:", "",
              "- *tool*: `uqthermo run CASE --method monte-carlo --no-report --samples N --sampling S` "
              "(`pipeline.py`; after one warm-up run of 2000 trials in the same process);",
              "- *script*: the vectorised numpy script an engineer would write instead (`linear_script.py`: "
              "`standard_normal((N, K))`, one matrix product, mean, std, `np.quantile`; for the nonlinear outputs "
              "`operating_script.py` and `duty_script.py` evaluate the closed-form Shomate / NASA-7 enthalpies on "
              "the whole sample), always pseudo-random;",
              "- *floor*: drawing the N x K normal variates (and uniforms) the output's trials need, in chunks "
              "of 65536 rows into one reused array, "
              "`Generator.standard_normal` of numpy's default generator (PCG64) (`normal_floor.py`); the targets "
              "refer to it. The tool's score streams draw from SFC64, so the same draws on SFC64 (*floor SFC64*) "
              "are shown beside it: tool/floor SFC64 is the ratio with the generator's speed taken out;",
              "- *per-sample quad*: one trial at a time, every Cp integral by `scipy.integrate.quad` "
              "(`quad_script.py`).", "",
              "Ratios: tool/script (target ≤ 1.0), tool/floor (target ≤ 2), per-sample/tool (speed-up). "
              "Mean difference: |tool − script| at N2 in standard errors u/√N2, the largest over the output's "
              "points (both are Monte Carlo estimates of the same quantity from independent code).", "",
              "| output | K | script ns/trial | floor ns/trial (SFC64) | per-sample ns/trial | sampling | tool ns/trial | "
              "tool/script | tool/floor | tool/floor SFC64 | per-sample/tool | peak memory MiB (N1, N2) | "
              "mean difference (SE) |",
              "|---|---|---|---|---|---|---|---|---|---|---|---|---|"]
        for r in b["cases"].values():
            for i, sch in enumerate(SCHEMES):
                x = r[sch]
                first = (f"| {r['label']} | {r['normals']}" + (f" + {r['uniforms']} uniform" if r['uniforms'] else "")
                         + f" | {r['script_ns']:.0f} | {r['floor_ns']:.0f} ({r.get('floor_sfc64_ns', float('nan')):.0f}) "
                         f"| {r['quad_ns']:.3g} ") if i == 0 else "| | | | | "
                L.append(first + f"| {sch} | {x['pipeline_ns']:.0f} | **{x['vs_script']:.2f}** | **{x['vs_floor']:.2f}** "
                         f"| {x.get('vs_floor_sfc64', float('nan')):.2f} "
                         f"| {x['quad_over_pipeline']:.0f} | {x['peak_rss_MiB'][0]:.0f}, {x['peak_rss_MiB'][1]:.0f} "
                         f"| {x['mean_difference_in_se']:.1f} |")
        L += [""]
    b7 = results.get("7_element_costs")
    if b7:
        mach7 = results.get("machine_by_benchmark", {}).get("7_element_costs", results["machine"])
        c = b7["costs_ns"]
        L += ["## 7. What a trial costs at least", "",
              f"Measured {mach7['date']} (load average at start {mach7['load_average_at_start']}). Each building "
              "block of a trial timed alone (`benchmarks/side_by_side/element_costs.py`: CPU time, the blocks "
              "interleaved, best of the rounds), in ns per element:", "",
              "| block | ns |", "|---|---|",
              f"| normal variate, numpy's default generator (PCG64; the floor's unit) | {c['normal_pcg64']:.1f} |",
              f"| uniform, PCG64 | {c['uniform_pcg64']:.1f} |",
              f"| normal variate, SFC64 (the tool's score streams) | {c['normal_sfc64']:.1f} |",
              f"| uniform, SFC64 | {c['uniform_sfc64']:.1f} |",
              f"| a uniform and numpy's Fisher-Yates shuffle, per value of a 2^18 column | {c['shuffle']:.1f} |",
              f"| Latin-hypercube normal score (uniform, Φ⁻¹ by the stratum table, shuffle) | {c['lhs_score']:.1f} |",
              f"| scrambled Sobol' coordinate (`scipy.stats.qmc.Sobol`) | {c['sobol_point']:.1f} |",
              f"| Φ⁻¹ of a Sobol' coordinate (stratum table or `ndtri`, the cheaper) | {c['sobol_phi']:.1f} |",
              f"| running moments, per output value | {c['moments']:.1f} |",
              f"| fixed histogram (bins as fine as two digits need), per output value | {c['histogram']:.1f} |",
              f"| or stored, and exact order statistics for the intervals and median, per output value | "
              f"{c.get('exact', math.nan):.1f} |", "",
              "Lower bound of a trial of each output of benchmark 6 with these blocks and no model at all: its "
              "coordinates (random: K normal variates on SFC64 and its uniforms; Latin hypercube: K + U scores; "
              "Sobol': the coordinates drawn, each with its Φ⁻¹) plus M output values of statistics (moments and the "
              "cheaper of histogram and exact order statistics); floor as in "
              "benchmark 6 (K normal variates and U uniforms on PCG64). A bound above 2x the floor (in bold) means "
              "the target of benchmark 6 cannot be met with numpy's and scipy's generators, shuffle and Φ⁻¹ and "
              "numpy-level statistics, whatever the rest of the tool does.", "",
              "| output | K + U | M | Sobol' coordinates | floor ns | statistics ns | bound random (x floor) | "
              "bound Latin hypercube | bound Sobol' |", "|---|---|---|---|---|---|---|---|---|"]
        for r in b7["cases"].values():
            cells = []
            for sch in SCHEMES:
                ratio = r["bound_vs_floor"][sch]
                txt = f"{r['bound_ns'][sch]:.0f} ({ratio:.2f})"
                cells.append(f"**{txt}**" if ratio > 2.0 else txt)
            L.append(f"| {r['label']} | {r['normals']}" + (f" + {r['uniforms']}" if r["uniforms"] else "")
                     + f" | {r['outputs']} | {r['sobol_coordinates']} | {r['floor_ns']:.0f} | "
                     f"{r['statistics_ns']:.0f} | " + " | ".join(cells) + " |")
        L += [""]
    L += ["## Notes", "",
          "- Profile first (cProfile on `build_model(...).evaluate` of the demo case, 65536 rows): before this "
          "work the model spent most of its time in `thermo/cp.py::_contract` and `species.py` (two contractions per "
          "Cp integral, batched 1x1 matmuls for per-sample temperatures) and in multi-threaded OpenBLAS calls on "
          "tall-and-skinny products, which on this loaded 2-core machine were 10-30x slower than one thread. "
          "Now: one contraction per integral with cached bases of exact temperature grids, einsum for "
          "per-sample temperatures, 4096-row blocks, one BLAS thread inside the model, and a shared species "
          "table (affine in the inputs at exact temperatures) with one stoichiometric product for all reactions "
          "(see `uqthermo/case/model/builder.py` and `reaction_table.py`). The demo model went from about 2.9 µs to 0.1-0.2 µs per sample "
          "and output column.",
          "- Benchmark 2 (profiled with cProfile, CPU-time clock): every output of these cases is ΔrH at exact "
          "temperatures, affine in its inputs, so a trial is its normal scores times the folded map "
          "(`uq/trials.py`) and only the 7 inputs methanation uses are sampled. Pseudo-random trials draw their "
          "normal scores with `Generator.standard_normal`, so the floor itself is most of the run for one output. "
          "Sobol' trials map uniforms through `scipy.special.ndtri` "
          f"({_ndtri_span(results)} the time of a normal variate here), but with the rotation only the "
          "coordinates the outputs need: one for one output, hence Sobol' below random for one point. The rest is "
          "the per-output JCGM 101 statistics (running moments; exact tails by pilot thresholds, or the fixed "
          "histogram counted by arithmetic on equal-width central bins and one `bincount`), which grow with M: "
          "with 9 outputs and 10^7 trials the values exceed the stored-values bound and go to the histogram. "
          f"Against the normal variates the pipeline takes {_span(results)} as long.",
          "- Benchmark 6 (issue 19). Before this work the issue measured, on its case with pseudo-random "
          "sampling, about 320 ns per trial for the tool, 200 ns for the numpy script and 85 ns for the normal "
          "variates (1.6x and 3.8x). Profiled (cProfile, CPU time): the uniforms through `ndtri` for every "
          "declared input, the per-row input transform and the model call, and a partition of all stored "
          "values for the intervals were most of it. Now: normal scores drawn directly, only the inputs the "
          "outputs depend on, affine models as one product with the transform folded in, exact tails by pilot "
          "thresholds, Latin-hypercube blocks without scipy's overhead, Cp bases built without `**` and "
          "temporaries. A numpy version of Wichura's AS 241 inverse normal CDF (checked to 7 ulp of `ndtri`) "
          "measured as fast as `ndtri` on this machine (about forty elementwise passes), so `ndtri` stays and the "
          "lever is calling it less. The nonlinear outputs, measured 2026-12-03 16:43 UTC before a second pass "
          "(load 6.9), cost 1239 ns (ΔrH at the sampled bed temperature, 2.77x the script) and 467 ns (the "
          "cooling duty, 1.00x) per pseudo-random trial, most of it in the model (cProfile of "
          "`build_model(...).evaluate`): every species' clipped Cp basis built at every sampled temperature "
          "(with the reference-temperature terms recomputed per sample) and contracted species by species, and "
          "all species' coefficient arrays decoded per block even where the shared table served the reactions. "
          "Now a reaction enthalpy at an uncertain temperature is one polynomial in T "
          "(`case/model/sampled_temperature.py`: ΔrH(T, x) = Σ_e T^e w_e(x), w = A [1; x], the monomials of all "
          "species summed once, the other Cp ranges and the T_ref terms folded into constants; one small product "
          "and a Horner pass per block; the model went from about 0.74 to 0.06 µs per sample), heat releases "
          "served by the table decode only the extents, and the table's rows and columns per output are looked "
          f"up once (cooling-duty model about 0.18 to 0.04 µs per sample){_nonlinear_now(b)}. A second pass "
          "(2026-12-03 evening) went after the sampling schemes and the per-output statistics: Latin-hypercube "
          "columns are built in stratum order as normal scores, Φ⁻¹((k + v)/m) by a cubic Hermite table shared by "
          "all columns (exact `ndtri` in the outer strata; checked against `ndtri` over every stratum), then "
          "shuffled in place (`uq/latin.py`; it was `Generator.permuted` on strata, then `ndtri`); a Sobol' "
          "coordinate of a whole power-of-two block holds one point per stratum and goes through the same table; "
          "the score streams draw from SFC64; the order statistics take their pilot at random positions (a "
          "stride of Sobol'-ordered values missed the tails, and every such row fell back to a partition), sort "
          "the gathered values once, and keep the whole tails, so the one-sided 5 %/95 % quantiles no longer "
          "partition each row. A third pass (2026-12-03, late evening) went after the statistics of the "
          "multi-point outputs and the fixed costs of the histogram: M2 and M3 of each output by one dot product "
          "per row (the three-operand einsum cost more than the rest of the moments); the histogram's central "
          "bins only as fine as the reported digits need (width at most δ/20 for the pilot's spread: 18 552 "
          "central bins per output instead of 99 948 for dH_window, so `bincount` runs over fewer counters and "
          "the quantiles over fewer knots); only the pilot's two tails sorted, and the pilot counted block by "
          "block; bin indices without a clip before the cast; the score streams' SFC64 generators seeded 64 "
          "blocks at a time in one vectorised pass, bit for bit numpy's SeedSequence (one SeedSequence cost "
          "about 30 µs per column and block, 3-6 ns per trial); a rectangular input driven by a rotated Sobol' "
          "score mapped by one erf instead of two halves through Φ, and the normal inputs under the rotation "
          "one product with u folded in, written column-major straight into the input rows (the cooling "
          "duty's input rows took about 40 % less time under cProfile). A fourth pass (2026-12-04) found that "
          "the Sobol' rotation of an affine model, built from central differences with a 10⁻³ cut-off, left "
          "small gradient directions to the completion, so completion columns moved the outputs slightly and "
          "their Sobol' coordinates were drawn: it is now built from the model's exact score map with every "
          "direction of its span above rounding leading, and a trial draws rank(B) coordinates (log10K_window "
          "5 instead of 10, dH_window 5 instead of 6; benchmark 3 then ran its models through f, not the folded "
          "map, so it did not see this); the histogram's bin slot "
          "⌊t⌋ is taken as round(t − ½) by adding 1.5·2⁵² and reading the bits (a float-to-int64 cast is one "
          "scalar conversion per value on AVX2) and one unsigned comparison marks the values outside the "
          "central bins (about 2.7 instead of 3.5 ns per value). What is left is what the "
          "sampling schemes themselves cost per coordinate, measured in isolation on a 65 536-point column (CPU "
          "time): a ziggurat normal variate about 9 ns (SFC64) to 12 ns (PCG64, the floor); a Latin-hypercube "
          "score about 16 ns, of which numpy's Fisher-Yates shuffle is about 9.4 ns per value at every array "
          "size (one bounded random integer per element; an argsort of random keys measured 27 ns, one stable "
          "16-bit radix pass 15 ns); a Sobol' score 14-17 ns for Φ⁻¹ of the scrambled point, whether by the "
          "stratum table or by `ndtri` (12 strided columns of one chunk, as the pipeline reads them; a table "
          "gathered for any u measured no faster). So Latin-hypercube and "
          "Sobol' trials start at 1.2-1.4 times the floor before the model and the statistics, and several "
          "output points (9 for dH_window, 5 for log10K_window) or a nonlinear model add 40-100 ns per trial. "
          "Where Sobol' is meant to pay, it does: in the adaptive runs of benchmark 3 it needs 3.6-25x fewer "
          f"trials than pseudo-random sampling{_unmet(b)}. Run-to-run noise on this shared VM is large, "
          "largest for the memory-bound parts (the shuffle, the Sobol' scatter and gather): on 2026-12-04 four "
          "runs of this benchmark (best of 4, 4, 4 and 8 rounds) gave the cooling duty under Sobol' 517, 448, "
          "485 and 434 ns per trial, where the same code for that output measured 318 ns the evening before; "
          "cProfile of the trials of both versions gives the same CPU work (325 and 323 ns per trial), and "
          "alternating runs of the two measured within each other's noise (±40 ns). A fifth pass (2026-12-04, "
          "morning): under the rotation an affine output's Sobol' stream has the dimension of its span "
          "(`TrialDesign.stream_dimension`: the issue case 1 of 7 coordinates, dH_window 5 of 7, log10K_window "
          "5 of 11), since scipy's generator costs 3-8 ns per coordinate drawn, used or not (log10K_window under "
          "Sobol' went from about 170-200 to 115-135 ns per trial in alternating runs); the kept rows take the "
          "completion's coordinates from a companion pseudo-random stream. Benchmark 3 now makes its runs as "
          "`uqthermo run` does. Benchmark 7 measures the building blocks side by side and the lower bound they "
          "set without any model: for dH_window under Latin hypercube it is above 2x the floor, so that target "
          "cannot be met with numpy's shuffle and numpy-level statistics; the other rows above a target are "
          "within reach only by the model's and the bookkeeping's cost. Compiled kernels were measured, not "
          "taken: a numba prototype of numpy's own Fisher-Yates on SFC64 (the same permutation bit for bit) "
          "took about 7 ns per value against numpy's 10 (its rejection loop's branches bound it, not memory), "
          "and a fused bin-and-count kernel 1.6 against 3.9 ns per output value; not enough for every "
          "Latin-hypercube row, for about 200 MB of numba and llvmlite and seconds of compilation on first use. "
          "The table above is an 8-round run of 2026-12-04 03:44 UTC: its pseudo-random rows, whose code this "
          "pass did not touch, measured from 6 % below to 27 % above the previous night's (dH_window 165 → 202, "
          "log10K_window 169 → 214 ns per trial), which is this machine's noise; compare rows within one run.",
          "- Benchmark 3: a coverage-interval endpoint is an order statistic; its batch-to-batch spread decides "
          "when §7.9 stops. Three things make Sobol' pay off there. (1) Each batch is an independently scrambled "
          "net: consecutive blocks of one sequence are not independent, and an earlier version that used them saw "
          "no gain. (2) The inputs' normal scores are rotated so that the first Sobol' coordinates carry the "
          "outputs' linear part (`score_rotation`, after the linear-transformation method of Imai & Tan 2006). "
          "For an output nearly linear in its inputs, a batch's sorted values are then nearly a function of one "
          "well-stratified coordinate and its endpoints are almost exact. With one coordinate per input (the axes "
          "column), 'y below the endpoint' is a tilted hyperplane across 14 dimensions, the worst case for "
          "quasi-random points, and the gain is about nil. (3) The Student-t factor keeps a chance-small spread "
          "from stopping a run after two or three batches. The shortest interval (§7.7.2) stays the noisiest "
          "quantity: it is an argmin along a flat valley of widths, so small errors in the order statistics move "
          "its endpoints much more. With it in the rule the gain is smaller, least for the cooling duty, whose "
          "product terms and rectangular input leave the most nonlinearity off the leading coordinates. In a case "
          "file the first rule is `adaptive_intervals = \"symmetric\"`, the second the default `\"both\"`.",
          "- Benchmark 4: when N·M is known to exceed the stored-values bound, the histogram is placed from a "
          "pilot of 2^18 rows (`uq/montecarlo_result.py::PILOT_ROWS`) and later chunks only add counts; the peak is "
          "the chunk temporaries plus the counts buffer.",
          "- Benchmark 5: the batch model moves every reaction-temperature value a few times (species table, "
          "sparse stoichiometric product, one tiled transposed copy into the output array), so it is "
          "memory-bound; reaction by reaction, each reaction re-evaluates its species.", ""]
    return "\n".join(L) + "\n"


def main(argv=None) -> int:
    global SIDE_REPEATS
    ap = argparse.ArgumentParser(description=__doc__.split("\n")[0])
    ap.add_argument("--quick", action="store_true", help="smaller sizes (smoke run); prints only")
    ap.add_argument("--write", action="store_true", help="write benchmarks/RESULTS.md also with --quick")
    ap.add_argument("--only", default="", help="comma-separated subset, e.g. 1,2")
    ap.add_argument("--render", action="store_true", help="only rewrite RESULTS.md from benchmarks/results.json")
    ap.add_argument("--repeats", type=int, default=SIDE_REPEATS,
                    help=f"rounds of benchmark 6, each time the best of them (default {SIDE_REPEATS}; more on a noisy machine)")
    ap.add_argument("--memory-child", type=int, default=0, help=argparse.SUPPRESS)
    args = ap.parse_args(argv)
    if args.render:
        results = json.loads((Path(__file__).parent / "results.json").read_text())
        (Path(__file__).parent / "RESULTS.md").write_text(render(results), encoding="utf-8")
        return 0
    if args.memory_child:
        memory_child(args.memory_child)
        return 0
    SIDE_REPEATS = max(1, int(args.repeats))
    only = set(args.only.split(",")) if args.only else {"1", "2", "3", "4", "5", "6", "7"}
    results = {"machine": machine(), "quick": args.quick}
    steps = [("1", "1_naive", bench_naive), ("2", "2_rng_floor", bench_rng_floor), ("3", "3_adaptive", bench_adaptive),
             ("4", "4_memory", bench_memory), ("5", "5_batch", bench_batch), ("6", "6_side_by_side", bench_side_by_side),
             ("7", "7_element_costs", bench_element_costs)]
    for key, name, fn in steps:
        if key not in only:
            continue
        print(f"[{name}] running ...", flush=True)
        r, t = timed(fn, args.quick)
        r["wall_s"] = t
        results[name] = r
        print(json.dumps(r, indent=1, default=float), flush=True)
    if (len(only) == len(steps) and not args.quick) or args.write:
        path = Path(__file__).parent / "results.json"
        if len(only) < len(steps) and path.exists():   # a subset: replace those benchmarks, keep the others
            merged = json.loads(path.read_text())
            merged.setdefault("machine_by_benchmark", {})
            for key, name, _ in steps:
                if name in results:
                    merged[name] = results[name]
                    merged["machine_by_benchmark"][name] = results["machine"]
            results = merged
        path.write_text(json.dumps(results, indent=1, default=float) + "\n")
        (Path(__file__).parent / "RESULTS.md").write_text(render(results), encoding="utf-8")
        print("wrote benchmarks/RESULTS.md")
    print("\nratios:")
    for key, name, label in (("1", "1_naive", "ratio"),):
        if name in results:
            print(f"  1. pipeline / per-sample script: {results[name][label]:.0f}x (target >= 1000x)")
    if "2_rng_floor" in results:
        for k, r in results["2_rng_floor"].items():
            if isinstance(r, dict) and "ratio_sobol" in r:
                print(f"  2. pipeline / numpy Generator [{k}]: Sobol' {r['ratio_sobol_vs_normal']:.1f}x, "
                      f"Sobol' axes {r['ratio_sobol_axes_vs_normal']:.1f}x, "
                      f"random {r['ratio_random_vs_normal']:.1f}x vs the normal variates (target <= 3x); "
                      f"{r['ratio_sobol']:.1f}x, {r['ratio_random']:.1f}x vs bare uniforms")
    if "3_adaptive" in results:
        for case, rows in results["3_adaptive"]["cases"].items():
            for rule, r in rows.items():
                if isinstance(r, dict):
                    print(f"  3. trials random / Sobol' [{case} | {rule}]: {r['ratio_random_over_sobol']:.1f}x "
                          f"(axes {r['ratio_random_over_sobol_axes']:.1f}x; target >= 4x)")
    if "4_memory" in results:
        r = results["4_memory"]
        print(f"  4. peak memory for {r['samples']:.0e} samples: {r['peak_rss_MiB']:.0f} MiB (target < 1024 MiB)")
    if "6_side_by_side" in results:
        for r in results["6_side_by_side"]["cases"].values():
            print(f"  6. [{r['label']}] script {r['script_ns']:.0f} ns, floor {r['floor_ns']:.0f} ns per trial; " +
                  ", ".join(f"{s} {r[s]['pipeline_ns']:.0f} ns = {r[s]['vs_script']:.2f}x script, "
                            f"{r[s]['vs_floor']:.2f}x floor" for s in SCHEMES))
    if "7_element_costs" in results:
        for r in results["7_element_costs"]["cases"].values():
            print(f"  7. [{r['label']}] lower bound per trial without the model: " +
                  ", ".join(f"{s} {r['bound_vs_floor'][s]:.2f}x floor" for s in SCHEMES))
    if "5_batch" in results:
        r = results["5_batch"]
        print(f"  5. batch model {r['model_values_per_s']:.3g} values/s, "
              f"{r['ratio_batch_over_reaction_by_reaction']:.0f}x reaction by reaction")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
