"""The results-at-a-glance table: one row per output at its headline point."""

from __future__ import annotations

from collections.abc import Mapping

from ..fields import coverage_probability, headline_index, kind_label, outputs, point_estimate, point_u, points, text, unit_with_basis
from ..rounding import fmt_fixed, fmt_interval, fmt_share, fmt_temperature, pct_label, uncertainty_decimals
from .display import DisplayTable, output_unit
from .propagation import validation_label

__all__ = ["summary_table"]


def summary_table(results: Mapping) -> DisplayTable:
    """One row per output at its headline point."""
    p_cov = coverage_probability(results)
    t = DisplayTable(
        "summary",
        "Results at a glance",
        ["Output", "Quantity", "T / K", "Estimate", "u", f"{pct_label(p_cov)} coverage interval", "Unit", "Linear method", "Main driver", "Share / %"],
        ["l", "w", "r", "r", "r", "r", "l", "l", "l", "r"],
    )
    curve = False
    methods = {p.get("drivers_method") for o in outputs(results) for p in points(o) if p.get("drivers")} - {None}
    mixed = len(methods) > 1      # u² shares and Sobol' S1 in one column: each cell says which
    for o in outputs(results):
        pts = points(o)
        if not pts:
            continue
        i = headline_index(o)
        p = pts[i]
        u = point_u(p)
        dec = uncertainty_decimals(u)
        mc = p.get("monte_carlo") or {}
        lin = p.get("linear") or {}
        iv = mc.get("coverage_interval") if mc.get("coverage_interval") is not None else lin.get("coverage_interval")
        drivers = p.get("drivers") or []
        main, main_share = "—", "—"
        if drivers:
            main, main_share = text(drivers[0].get("datum")), fmt_share(drivers[0].get("share"))
            if mixed:
                main_share += " (S1)" if p.get("drivers_method") == "sobol" else " (u²)"
        tlabel = fmt_temperature(p.get("temperature_K"))
        if len(pts) > 1:
            curve = True
            tlabel += " *"
        t.rows.append([
            text(o.get("name")), kind_label(o.get("kind")), tlabel,
            fmt_fixed(point_estimate(p), dec), fmt_fixed(u, dec), fmt_interval(iv, dec), unit_with_basis(o) or output_unit(o),
            validation_label(p), main, main_share,
        ])
    if curve:
        t.notes.append("* Curve outputs are summarised at the temperature with the largest standard uncertainty; all points are in the results section.")
    t.notes.append("Estimate, u and interval from the Monte Carlo method (JCGM 101) where it was run, else from the linear method (GUM).")
    if mixed:
        t.notes.append("Share: (u²) the main driver's share of u²(y) (GUM budget); (S1) its first-order Sobol' index.")
    return t
