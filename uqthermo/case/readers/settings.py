"""Read ``[settings]``: reference temperature, coverage probability, samples, seed, method and the
other run options (docs/case-format.md), and the check of an adaptive run's sample cap."""

from __future__ import annotations

import math
from typing import Any

from ..limits import MAX_SEED, SEED_RANGE_TEXT, short_key
from ..schema import METHODS, SAMPLING_METHODS, Settings
from .fields import Collector, fraction_value, is_table, read_fraction, read_temperature

__all__ = ["read_settings", "adaptive_cap_problem", "MAX_SAMPLES_LIMIT"]

#: Hard cap on a fixed sample count: beyond this a run would take hours on one machine
#: (the distributed engine raises it explicitly).
MAX_SAMPLES_LIMIT = 1_000_000_000


def _choice(c: Collector, node: dict, s: Settings, key: str, allowed) -> None:
    """Set ``s.<key>`` from ``node[key]`` when it is one of ``allowed``; record a problem otherwise."""
    if key not in node:
        return
    m = node[key]
    if not isinstance(m, str) or m not in allowed:
        c.add(f"settings.{key}", f"unknown {key} {m!r}; use one of {', '.join(allowed)}")
    else:
        setattr(s, key, m)


def read_settings(c: Collector, node: Any) -> Settings:
    """Read ``[settings]`` (defaults for what is not given)."""
    s = Settings()
    if not is_table(node):
        c.add("settings", "must be a table ([settings])")
        return s
    allowed = {"reference_temperature", "coverage_probability", "samples", "sampling", "seed", "method",
               "allow_extrapolation", "significant_digits", "max_samples", "sensitivity", "sobol_samples",
               "design_probabilities", "what_if", "plan_target", "plan_budget", "adaptive_intervals",
               "sobol_rotation"}
    c.unknown_keys(node, allowed, "settings")
    if "reference_temperature" in node:
        t = read_temperature(c, node["reference_temperature"], "settings.reference_temperature")
        if t is not None:
            s.reference_temperature = t
    if "coverage_probability" in node:
        p = read_fraction(c, node["coverage_probability"], "settings.coverage_probability", 0.5, 1.0,
                          high_open=True, example="0.95 or \"95 %\"")
        if p is not None:
            s.coverage_probability = p
    if "samples" in node:
        n = node["samples"]
        if n == "adaptive":
            s.samples = "adaptive"
        elif isinstance(n, bool) or not isinstance(n, int):
            c.add("settings.samples", f"must be a whole number or \"adaptive\", got {n!r}")
        elif n < 100:
            c.add("settings.samples", f"{n} samples are too few for a coverage interval; use at least 10000 (or \"adaptive\")")
        elif n > MAX_SAMPLES_LIMIT:
            c.add("settings.samples", f"{n:.3g} samples exceed the limit of {MAX_SAMPLES_LIMIT:.0e}; use \"adaptive\" or --engine dask")
        else:
            s.samples = n
    _choice(c, node, s, "sampling", SAMPLING_METHODS)
    if "seed" in node:
        seed = node["seed"]
        if isinstance(seed, bool) or not isinstance(seed, int) or not 0 <= seed <= MAX_SEED:
            c.add("settings.seed", f"must be {SEED_RANGE_TEXT}, got {short_key(repr(seed), 60)}")
        else:
            s.seed = seed
    _choice(c, node, s, "method", METHODS)
    for key in ("allow_extrapolation", "what_if", "sobol_rotation"):
        if key in node:
            if not isinstance(node[key], bool):
                c.add(f"settings.{key}", "must be true or false")
            else:
                setattr(s, key, node[key])
    for key, lo, hi in (("significant_digits", 1, 4), ("max_samples", 10_000, MAX_SAMPLES_LIMIT),
                        ("sobol_samples", 64, 1 << 20)):
        if key in node:
            v = node[key]
            if isinstance(v, bool) or not isinstance(v, int) or not (lo <= v <= hi):
                c.add(f"settings.{key}", f"must be a whole number from {lo} to {hi}, got {v!r}")
            else:
                setattr(s, key, v)
    _choice(c, node, s, "sensitivity", ("auto", "linear", "sobol", "none"))
    _choice(c, node, s, "adaptive_intervals", ("both", "symmetric"))
    if "plan_target" in node:
        t = node["plan_target"]
        if not (isinstance(t, str) or (isinstance(t, list) and t and all(isinstance(x, str) for x in t))):
            c.add("settings.plan_target", "must be text such as \"U95 <= 2 kJ/mol\", or a list of per-output "
                                          "targets such as [\"dH: U95 <= 2 kJ/mol\", \"duty: U95 <= 50 kW\"]")
        else:
            s.plan_target = node["plan_target"]
    if "plan_budget" in node:
        b = node["plan_budget"]
        if isinstance(b, bool) or not isinstance(b, (int, float)) or not math.isfinite(b) or b < 0:
            c.add("settings.plan_budget", "must be a non-negative number")
        else:
            s.plan_budget = float(b)
    cap = adaptive_cap_problem(s)
    if cap is not None and "max_samples" in node:
        c.add("settings.max_samples", cap)
    if "design_probabilities" in node:
        v = node["design_probabilities"]
        ps = [fraction_value(x) for x in v] if isinstance(v, list) else []
        if not ps or not all(x is not None and 0.5 < x < 1 for x in ps):
            c.add("settings.design_probabilities", "must be a list of probabilities between 0.5 and 1, e.g. [0.95, 0.99] "
                                                   "or [\"95 %\", \"99 %\"]")
        else:
            s.design_probabilities = [float(x) for x in ps]
    return s


def adaptive_cap_problem(s: Settings) -> str | None:
    """Why ``max_samples`` cannot work with adaptive Monte Carlo (None if it can).

    The JCGM 101 §7.9 procedure runs in whole batches (:func:`uqthermo.uq.montecarlo.adaptive_batch_size`)
    and needs at least two to test stability; a cap below two batches could only be honoured
    by stopping before the first test (or passed by finishing the batch), so it is refused.
    """
    if s.samples != "adaptive":
        return None
    from ...uq.montecarlo import adaptive_batch_size

    batch = adaptive_batch_size(s.coverage_probability, s.sampling)
    if s.max_samples >= 2 * batch:
        return None
    return (f"{s.max_samples} trials are fewer than two adaptive batches: with {s.sampling} sampling and coverage "
            f"probability {s.coverage_probability:g} a batch has {batch} trials (JCGM 101 §7.9) and at least two are "
            f"needed; give max_samples of at least {2 * batch}")
