"""The CSV tables as pandas DataFrames, full precision (``tables/*.csv`` and the notebook).

:func:`frames` gives every CSV table keyed by file stem; :func:`results_table` is the one row
per output point that :class:`uqthermo.report.ResultsView` also shows.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd

from ..drivers import covariance_label
from ..fields import check_results, coverage_probability, num, outputs, pair, point_estimate, point_u, points, slugs

__all__ = ["results_table", "inputs_frame", "output_frame", "drivers_frame", "whatif_frame", "plan_frame", "csv_safe", "frames"]


def results_table(results: Mapping) -> pd.DataFrame:
    """One row per output point, full precision.

    Columns: output, kind, unit, temperature_K, estimate, standard_uncertainty,
    coverage_low, coverage_high, method (of the three before), coverage_probability,
    mc_* (mean, standard_uncertainty, coverage_low/high, shortest_low/high, median,
    skewness, samples, P01, P05, P95, P99), linear_* (estimate, standard_uncertainty,
    coverage_low/high, expanded_uncertainty, coverage_factor, effective_dof),
    linear_validated, validation_tolerance, d_low, d_high, margin_P95, margin_P99,
    exceedance_probability, exceedance_standard_error, exceedance_upper_bound, top_driver, top_driver_share,
    correlation_share, drivers_method.
    """
    check_results(results)
    rows = []
    for o in outputs(results):
        for p in points(o):
            mc = p.get("monte_carlo") or {}
            lin = p.get("linear") or {}
            val = p.get("validation") or {}
            mg = p.get("margins") or {}
            os_ = mc.get("one_sided") or {}
            mc_lo, mc_hi = pair(mc.get("coverage_interval"))
            sh_lo, sh_hi = pair(mc.get("shortest_coverage_interval"))
            li_lo, li_hi = pair(lin.get("coverage_interval"))
            use_mc = num(mc.get("mean")) is not None
            drivers = p.get("drivers") or []
            rows.append({
                "output": o.get("name"), "kind": o.get("kind"), "unit": o.get("unit"),
                "temperature_K": num(p.get("temperature_K")),
                "estimate": point_estimate(p), "standard_uncertainty": point_u(p),
                "coverage_low": mc_lo if use_mc else li_lo, "coverage_high": mc_hi if use_mc else li_hi,
                "method": "monte_carlo" if use_mc else "linear",
                "coverage_probability": coverage_probability(results, p),
                "mc_mean": num(mc.get("mean")), "mc_standard_uncertainty": num(mc.get("standard_uncertainty")),
                "mc_coverage_low": mc_lo, "mc_coverage_high": mc_hi, "mc_shortest_low": sh_lo, "mc_shortest_high": sh_hi,
                "mc_median": num(mc.get("median")), "mc_skewness": num(mc.get("skewness")), "mc_samples": num(mc.get("samples")),
                **{f"mc_{k}": num(os_.get(k)) for k in ("P01", "P05", "P95", "P99")},
                "linear_estimate": num(lin.get("estimate")), "linear_standard_uncertainty": num(lin.get("standard_uncertainty")),
                "linear_coverage_low": li_lo, "linear_coverage_high": li_hi,
                "linear_expanded_uncertainty": num(lin.get("expanded_uncertainty")),
                "linear_coverage_factor": num(lin.get("coverage_factor")), "linear_effective_dof": num(lin.get("effective_dof")),
                "linear_validated": p.get("linear_validated"),
                "validation_tolerance": num(val.get("tolerance")), "d_low": num(val.get("d_low")), "d_high": num(val.get("d_high")),
                "margin_P95": num(mg.get("P95")), "margin_P99": num(mg.get("P99")),
                "exceedance_probability": num(p.get("exceedance_probability")),
                "exceedance_standard_error": num(p.get("exceedance_standard_error")),
                "exceedance_upper_bound": num(p.get("exceedance_upper_bound")),
                "top_driver": drivers[0].get("datum") if drivers else None,
                "top_driver_share": num(drivers[0].get("share")) if drivers else None,
                "correlation_share": num(p.get("correlation_share")),
                "drivers_method": p.get("drivers_method"),
            })
    return pd.DataFrame(rows)


def inputs_frame(results: Mapping) -> pd.DataFrame:
    cols = ["datum", "quantity", "species", "phase", "stated", "distribution", "estimate",
            "standard_uncertainty", "unit", "source", "n_parameters", "library", "as_written", "u_as_written"]
    rows = []
    for i in results.get("inputs") or []:
        if isinstance(i, Mapping):
            r = {c: i.get(c) for c in cols}
            for c in ("estimate", "standard_uncertainty"):
                if isinstance(r[c], (list, tuple)):
                    r[c] = " ".join(repr(float(v)) if num(v) is not None else "" for v in r[c])
            rows.append(r)
    return pd.DataFrame(rows, columns=cols)


def output_frame(output: Mapping) -> pd.DataFrame:
    df = results_table({"outputs": [output]})
    return df


def drivers_frame(results: Mapping) -> pd.DataFrame:
    rows = []
    for o in outputs(results):
        for p in points(o):
            sens = p.get("sensitivity") or {}
            for rank, d in enumerate(p.get("drivers") or [], start=1):
                lo, hi = pair(d.get("share_ci"))
                r = {"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "rank": rank,
                     "datum": d.get("datum"), "share": num(d.get("share")), "share_ci_low": lo, "share_ci_high": hi,
                     "method": p.get("drivers_method")}
                for k in ("S1", "ST", "delta"):
                    e = (sens.get(k) or {}).get(d.get("datum")) if isinstance(sens.get(k), Mapping) else None
                    r[k] = num(e[0]) if isinstance(e, (list, tuple)) and e else num(e)
                    r[f"{k}_ci"] = num(e[1]) if isinstance(e, (list, tuple)) and len(e) > 1 else None
                rows.append(r)
            if p.get("drivers_method") == "linear":
                for c in p.get("covariance_terms") or []:
                    rows.append({"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "rank": None,
                                 "datum": covariance_label(c.get("between") or []), "share": num(c.get("share")),
                                 "method": p.get("drivers_method")})
    return pd.DataFrame(rows)


def whatif_frame(results: Mapping) -> pd.DataFrame:
    rows = []
    for o in outputs(results):
        for p in points(o):
            for w in p.get("whatif") or []:
                se = w.get("standard_error") if isinstance(w.get("standard_error"), Mapping) else {}
                ok = w.get("measurable") if isinstance(w.get("measurable"), Mapping) else {}
                rows.append({"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "datum": w.get("datum"),
                             "U_now": num(w.get("U_now")), "U_halved": num(w.get("U_halved")), "U_removed": num(w.get("U_removed")),
                             "method": w.get("method"),
                             "U_halved_standard_error": num(se.get("U_halved")), "U_halved_measurable": ok.get("U_halved"),
                             "U_removed_standard_error": num(se.get("U_removed")), "U_removed_measurable": ok.get("U_removed")})
    return pd.DataFrame(rows, columns=["output", "temperature_K", "datum", "U_now", "U_halved", "U_removed", "method",
                                       "U_halved_standard_error", "U_halved_measurable", "U_removed_standard_error",
                                       "U_removed_measurable"])


def plan_frame(results: Mapping) -> pd.DataFrame:
    plan = results.get("plan") or {}
    best = plan.get("best") or {}
    rows = []
    for f in plan.get("front") or []:
        if isinstance(f, Mapping):
            s = f.get("set") or []
            rows.append({"cost": num(f.get("cost")), "U": num(f.get("U")), "set": " + ".join(map(str, s)),
                         "best": sorted(map(str, s)) == sorted(map(str, best.get("set") or [])) and num(f.get("cost")) == num(best.get("cost"))})
    return pd.DataFrame(rows, columns=["cost", "U", "set", "best"])


def csv_safe(df: pd.DataFrame) -> pd.DataFrame:
    """Guard text cells against spreadsheet formula injection (OWASP "CSV injection");
    see :func:`uqthermo.text_safety.csv_cell`. The CSV files themselves are written by
    :func:`uqthermo.text_safety.csv_frame_text`, which also quotes cells holding CR/LF."""
    out = df.copy()
    for c in out.columns:
        if out[c].dtype == object or pd.api.types.is_string_dtype(out[c]):
            out[c] = out[c].map(_csv_cell).astype(object)
    return out


def _csv_cell(v: Any) -> Any:
    from ...text_safety import csv_cell

    return csv_cell(v)


def frames(results: Mapping) -> dict[str, pd.DataFrame]:
    """All CSV tables, keyed by file stem (``results-<output>`` per output)."""
    out = {"inputs": inputs_frame(results)}
    names = slugs(results)
    for o, slug in zip(outputs(results), names):
        out[f"results-{slug}"] = output_frame(o)
    out["drivers"] = drivers_frame(results)
    out["whatif"] = whatif_frame(results)
    if results.get("plan"):
        out["plan"] = plan_frame(results)
    return out
