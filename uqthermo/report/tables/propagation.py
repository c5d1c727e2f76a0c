"""The result tables per method: Monte Carlo (JCGM 101) and the linear (GUM) propagation with its validation (JCGM 101 §8)."""

from __future__ import annotations

from collections.abc import Mapping

from ..fields import coverage_probability, num, points
from ..rounding import fmt_dof, fmt_fixed, fmt_interval, fmt_k, fmt_sig, fmt_temperature, fmt_u, fmt_value, pct_label, uncertainty_decimals
from .display import DisplayTable, in_unit, output_unit

__all__ = ["validation_label", "mc_table", "linear_table"]


def validation_label(point: Mapping) -> str:
    v = point.get("linear_validated")
    if v is True:
        return "validated"
    if v is False:
        return "not validated"
    return "not checked"


def mc_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    p_cov = coverage_probability(results)
    unit = output_unit(output)
    t = DisplayTable(
        key, f"Monte Carlo results (JCGM 101){in_unit(unit)}",
        ["T / K", "Mean", "u", f"{pct_label(p_cov)} interval (prob.-symmetric)", f"{pct_label(p_cov)} shortest interval", "Median", "Skewness", "N"],
        ["r"] * 8,
    )
    for p in points(output):
        mc = p.get("monte_carlo") or {}
        if not mc:
            continue
        dec = uncertainty_decimals(mc.get("standard_uncertainty"))
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), fmt_fixed(mc.get("mean"), dec), fmt_u(mc.get("standard_uncertainty")),
            fmt_interval(mc.get("coverage_interval"), dec), fmt_interval(mc.get("shortest_coverage_interval"), dec),
            fmt_fixed(mc.get("median"), dec), fmt_fixed(mc.get("skewness"), 2), fmt_value(mc.get("samples")),
        ])
    return t


def linear_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    p_cov = coverage_probability(results)
    unit = output_unit(output)
    t = DisplayTable(
        key, f"Linear propagation (GUM) and its validation (JCGM 101 §8){in_unit(unit)}",
        ["T / K", "Estimate", "u", "ν_eff", "k", "U", f"{pct_label(p_cov)} interval", "δ", "d_low", "d_high", "Linear method"],
        ["r"] * 10 + ["l"],
    )
    for p in points(output):
        lin = p.get("linear") or {}
        if not lin:
            continue
        dec = uncertainty_decimals(lin.get("standard_uncertainty"))
        val = p.get("validation") or {}
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), fmt_fixed(lin.get("estimate"), dec), fmt_u(lin.get("standard_uncertainty")),
            fmt_dof(lin.get("effective_dof"), infinite_if_missing=num(lin.get("coverage_factor")) is not None),
            fmt_k(lin.get("coverage_factor")), fmt_fixed(lin.get("expanded_uncertainty"), dec),
            fmt_interval(lin.get("coverage_interval"), dec),
            fmt_sig(val.get("tolerance"), 2), fmt_sig(val.get("d_low"), 2), fmt_sig(val.get("d_high"), 2),
            validation_label(p),
        ])
    if t.rows:
        t.notes.append("U = k·u with k from the t-distribution for ν_eff (Welch–Satterthwaite, GUM G.4). "
                       "The linear interval is validated when |d_low| and |d_high| do not exceed δ (JCGM 101 §8).")
    return t
