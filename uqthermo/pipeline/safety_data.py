"""Design and safety fields of results.json: limits and exceedance probabilities (every kind),
MTSR and criticality classes, the boiling-limited end state, mass-basis and closed-vessel numbers.

Every probability carries its Monte Carlo standard error and its one-sided 95 % Clopper–Pearson
upper bound (:mod:`uqthermo.uq.exceedance`); the run records which bound was used
(``run.bound_method``). The fields are documented in docs/case-format.md §16.
"""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..case.schema import Case, OutputSpec
from ..uq.exceedance import BOUND_CONFIDENCE, margin_shares, probability_estimate

MTSR_BASIS = ("MTSR = T_p + X_ac·ΔT_ad with ΔT_ad the adiabatic rise without evaporative cooling: the charge is "
              "heated as if nothing boiled, each boiling species keeping its heat capacity at the boiling point "
              "(F. Stoessel, Thermal Safety of Chemical Processes, Wiley-VCH, 2008)")
BOILING_NOTE = ("end state of the same balance when the charge boils at its boiling point (evaporative cooling, "
                "open system at the stated pressure): the tempering point is reached and part of the solvent "
                "evaporates; the MTSR and the criticality class do not count on it")
PRESSURE_BASIS = ("ideal gas at constant volume: p_f = p_0·n_g,f·T_f/(n_g,0·T_0), gas-phase species only (condensed "
                  "phases incompressible, vapour pressure of liquids not counted)")


def _f(x) -> float | None:
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def _aux(model, i: int, name: str, point: int = 0) -> int | None:
    for a in model.aux:
        if a.output == i and a.name == name and a.point == point:
            return a.column
    return None


def probability_fields(prefix: str, mc, col: int) -> dict[str, Any]:
    """``{prefix}``, ``{prefix}_standard_error``, ``{prefix}_upper_bound`` (and trials) from an indicator column."""
    n = int(mc.samples_used)
    e = probability_estimate(float(mc.mean[col]), n)
    return {prefix: e.probability, f"{prefix}_standard_error": e.standard_error, f"{prefix}_upper_bound": e.upper_bound,
            f"{prefix}_trials": n}


def continuous_fields(mc, y0, col: int, unit: str) -> dict[str, Any]:
    """Summary of a continuous auxiliary column: Monte Carlo mean, u, 95 % interval, P95; or the best estimate."""
    out: dict[str, Any] = {"unit": unit, "estimate": _f(y0[col]) if y0 is not None and len(y0) > col else None}
    if mc is not None:
        q = np.atleast_1d(mc.quantile([0.05, 0.95])[:, col]) if np.ndim(mc.quantile([0.05, 0.95])) == 2 else None
        out.update(mean=_f(mc.mean[col]), standard_uncertainty=_f(mc.standard_uncertainty[col]),
                   coverage_interval=[_f(mc.coverage_interval[col, 0]), _f(mc.coverage_interval[col, 1])],
                   P05=_f(q[0]) if q is not None else None, P95=_f(q[1]) if q is not None else None)
    return out


def quantity_block(case: Case, did: str, value: float, unit: str, as_written: str | None, **extra) -> dict:
    """A design value as written by the user: value and u in the report unit, the user's text, datum id."""
    d = case.data.get(did)
    u = float(d.distributions[0].std) * d.to_report if d is not None and d.distributions else 0.0
    return {"value": value, "standard_uncertainty": u, "unit": unit, "as_written": as_written, "datum": did if d else None,
            **extra}


def limit_block(case: Case, o: OutputSpec, unit: str) -> dict | None:
    if o.limit is None:
        return None
    applies = "final_temperature" if o.kind == "adiabatic_temperature_rise" else "output"
    return quantity_block(case, o.limit_datum, o.limit, "K" if applies == "final_temperature" else unit,
                          o.as_written.get("limit"), side=o.limit_side, label=o.limit_label, applies_to=applies)


def _drivers(shares: dict[str, float], corr: float) -> list[dict]:
    """Rows largest first, as fractions of u²(margin) like the outputs' own drivers: the covariance terms
    between data are one signed row, so that the rows sum to 1 (a share may exceed 1 beside a negative row)."""
    rows = [{"datum": d, "share": s} for d, s in sorted(shares.items(), key=lambda kv: -kv[1]) if s > 1e-12]
    if abs(corr) > 1e-12:
        rows.append({"datum": "(correlations between data)", "share": corr})
    return rows


def margin_drivers(model, lin, j: int, limit_did: str, factor: float, acc: float = 1.0) -> list[dict]:
    """Linear variance shares of the margin between a limit datum and output column ``j`` (uq.exceedance)."""
    inputs = model.inputs
    if lin is None or not len(inputs.variables):
        return []
    c_y = acc * np.asarray(lin.sensitivity)[j]
    c_l = np.zeros_like(c_y)
    cols = inputs.groups.get(limit_did, [])
    for c in cols:
        c_l[c] = factor
    shares, corr = margin_shares(c_y, c_l, inputs.covariance(), inputs.groups)
    return _drivers(shares, corr)


def _linear_tail(model, lin, j: int, o: OutputSpec, case: Case, y: float, offset: float) -> tuple[float | None, float]:
    """P(y beyond the limit) from the linear (normal) approximation of the margin, and u(margin)."""
    from scipy import stats

    d = case.data.get(o.limit_datum)
    factor = d.to_report if d is not None else 1.0
    u = 0.0
    if lin is not None and len(model.inputs.variables):
        c = np.zeros(len(model.inputs.variables))
        for k in model.inputs.groups.get(o.limit_datum, []):
            c[k] = factor
        c = c - np.asarray(lin.sensitivity)[j]
        u = float(np.sqrt(max(c @ model.inputs.covariance() @ c, 0.0)))
    g = (o.limit - offset) - y
    if u > 0:
        z = g / u
    else:
        z = math.inf if g > 0 else -math.inf
    p = float(stats.norm.sf(z)) if o.limit_side == "above" else float(stats.norm.cdf(z))   # P(g < 0) or P(g > 0)
    return p, u


def limit_point(case: Case, model, o: OutputSpec, i: int, k: int, j: int, pt: dict, mc, lin, y_est: float | None) -> None:
    """Exceedance probability of the limit at point ``k`` (model column ``j``), its bound and its drivers."""
    if o.limit is None:
        return
    offset = o.start_temperature if o.kind == "adiabatic_temperature_rise" else 0.0
    col = _aux(model, i, "exceedance", k)
    d = case.data.get(o.limit_datum)
    factor = d.to_report if d is not None else 1.0
    if mc is not None and col is not None:
        f = probability_fields("exceedance_probability", mc, col)
        pt["exceedance_probability"] = f["exceedance_probability"]
        pt["exceedance_standard_error"] = f["exceedance_probability_standard_error"]
        pt["exceedance_upper_bound"] = f["exceedance_probability_upper_bound"]
        pt["exceedance_trials"] = f["exceedance_probability_trials"]
    elif y_est is not None:
        p, _ = _linear_tail(model, lin, j, o, case, y_est, offset)
        pt["exceedance_probability"] = p
        pt["exceedance_standard_error"] = None
        pt["exceedance_upper_bound"] = None
        pt["exceedance_basis"] = "linear normal approximation"
    pt["exceedance_side"] = o.limit_side
    pt["exceedance_drivers"] = margin_drivers(model, lin, j, o.limit_datum, factor)
    if o.kind == "adiabatic_temperature_rise":
        pt["limit_K"] = o.limit


def adiabatic_point(case: Case, model, o: OutputSpec, i: int, pt: dict, mc, lin, y0) -> None:
    """MTSR, criticality classes, phase change, boiling-limited end state, mass basis, pressure."""
    from ..thermo.energy import criticality_class, mtsr

    est = (pt.get("monte_carlo") or pt.get("linear") or {})
    dT = est.get("mean", est.get("estimate"))
    if dT is None:
        return
    j = model.output_columns(i)[0]
    pt["final_temperature_K"] = o.start_temperature + dT
    pt["balance"] = ("constant volume: ΔU balance, ideal gases (C_v = C_p − R)" if o.constant_volume
                     else "constant pressure: ΔH balance")
    if o.process_temperature is not None:
        acc = 1.0 if o.accumulation is None else o.accumulation
        m = float(mtsr(o.process_temperature, dT, acc))
        pt["mtsr_K"] = m
        pt["mtsr_basis"] = MTSR_BASIS
        if o.mtt is not None and o.td24 is not None:
            pt["criticality_class"] = int(np.asarray(criticality_class(o.process_temperature, m, o.mtt, o.td24)).ravel()[0])
            if mc is not None and _aux(model, i, "class_1") is not None:
                probs, ubs = {}, {}
                for c in range(1, 6):
                    f = probability_fields("p", mc, _aux(model, i, f"class_{c}"))
                    probs[str(c)], ubs[str(c)] = f["p"], f["p_upper_bound"]
                pt["criticality_class_probabilities"] = probs
                pt["criticality_class_probabilities_upper_bounds"] = ubs
                pt["criticality_class_probabilities_basis"] = f"all {int(mc.samples_used)} Monte Carlo trials"
        for name, lvl, did in (("mtt", o.mtt, o.mtt_datum), ("td24", o.td24, o.td24_datum)):
            if lvl is None:
                continue
            key = f"p_mtsr_above_{name}"
            col = _aux(model, i, f"mtsr_above_{name}")
            if mc is not None and col is not None:
                f = probability_fields(key, mc, col)
                pt.update({k: v for k, v in f.items() if not k.endswith("_trials")})
                pt[f"{key}_trials"] = f[f"{key}_trials"]
            pt[f"{key}_drivers"] = margin_drivers(model, lin, j, did, 1.0, acc)
    col = _aux(model, i, "phase_change")
    if mc is not None and col is not None:
        f = probability_fields("p_phase_change", mc, col)
        pt.update(f)
        pt["phase_change_note"] = ("probability that the charge reaches a phase change on its real path (e.g. the "
                                   "solvent starts to boil) before the heat is absorbed")
    col = _aux(model, i, "boiling_limited_temperature")
    if col is not None:
        bl: dict[str, Any] = {"note": BOILING_NOTE,
                              "final_temperature_K": continuous_fields(mc, y0, col, "K")}
        tc = _aux(model, i, "tempering")
        if mc is not None:
            f = probability_fields("p", mc, tc)
            bl.update(p_tempering_point_reached=f["p"], p_tempering_point_reached_standard_error=f["p_standard_error"],
                      p_tempering_point_reached_upper_bound=f["p_upper_bound"], trials=f["p_trials"])
        elif y0 is not None:
            bl["tempering_point_reached_at_estimates"] = bool(y0[tc] > 0.5)
        ev = []
        from ..case.readers.amounts import molar_mass

        for a in model.aux:
            if a.output == i and a.name.startswith("evaporated:"):
                sp, ph = a.name.split(":", 1)[1].rsplit(".", 1)
                M = molar_mass(None, case.species[sp], "")
                tr = next((t for t in case.species[sp].transitions if t.from_phase == ph and t.to_phase == "g"), None)
                mol = continuous_fields(mc, y0, a.column, "mol")
                row = {"species": sp, "phase": ph, "boiling_point_K": tr.temperature if tr else None,
                       "molar_mass_kg_per_mol": M, "mol": mol}
                if M is not None:
                    row["kg"] = {k: ([None if x is None else x * M for x in v] if isinstance(v, list) else
                                     (v * M if isinstance(v, float) else v))
                                 for k, v in mol.items()} | {"unit": "kg"}
                ev.append(row)
        bl["evaporated"] = ev
        pt["boiling_limited"] = bl
    for name, key, unit in (("specific_heat_of_reaction", "specific_heat_of_reaction", "kJ/kg"),
                            ("specific_heat_capacity", "specific_heat_capacity", "J/(g*K)"),
                            ("charge_mass", "charge_mass", "kg")):
        col = _aux(model, i, name)
        if col is not None:
            pt[key] = continuous_fields(mc, y0, col, unit)
    col = _aux(model, i, "final_pressure")
    if col is not None:
        pt["final_pressure"] = continuous_fields(mc, y0, col, "kPa") | {
            "basis": PRESSURE_BASIS,
            "initial": quantity_block(case, o.initial_pressure_datum, _nominal(case, o.initial_pressure_datum) * 1e-3,
                                      "kPa", o.as_written.get("initial_pressure"))}


def _nominal(case: Case, did: str) -> float:
    return float(case.data[did].nominal)


def output_fields(case: Case, o: OutputSpec, unit: str) -> dict[str, Any]:
    """Per-output design keys: the limit as written, MTT/TD24 blocks, basis."""
    out: dict[str, Any] = {}
    lb = limit_block(case, o, unit)
    if lb is not None:
        out["limit"] = lb
        out["limit_applies_to"] = lb["applies_to"]
    if o.kind == "adiabatic_temperature_rise":
        for name in ("mtt", "td24"):
            if getattr(o, name) is not None:
                out[name] = quantity_block(case, getattr(o, f"{name}_datum"), getattr(o, name), "K", o.as_written.get(name))
        out["constant_volume"] = o.constant_volume
    if o.basis == "mass":
        out["basis"] = "mass"
        if o.mass_of:
            out["mass_of"] = o.mass_of
    return out


def run_fields(sampling: str) -> dict[str, Any]:
    from ..uq.exceedance import bound_method

    return {"bound_method": bound_method(sampling), "bound_confidence": BOUND_CONFIDENCE}
