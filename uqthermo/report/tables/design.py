"""Design and safety numbers: one-sided bounds and margins, thermal-safety indicators, exceedance probabilities.

Also how the report (and the terminal) writes a limit (:func:`limit_text`) and a point's
probability field with its one-sided upper bound (:func:`probability_cell`).
"""

from __future__ import annotations

from collections.abc import Mapping

from ..fields import num, output_symbol, point_estimate, point_u, points, text
from ..rounding import fmt_fixed, fmt_probability, fmt_sig, fmt_temperature, fmt_u, fmt_value, uncertainty_decimals
from .display import DisplayTable, in_unit, output_unit, unit_suffix

__all__ = ["limit_text", "probability_cell", "bounds_table", "safety_table", "exceedance_table"]


def _shown_unit(text_: str) -> str:
    return str(text_).replace("degC", "°C").replace("degF", "°F")


def limit_text(output: Mapping) -> str:
    """The limit as the case wrote it, e.g. "final temperature > 90 °C" or "Q̇ > cooling capacity 1.2 MW"."""
    lim = output.get("limit")
    if isinstance(lim, Mapping):
        value, unit = num(lim.get("value")), str(lim.get("unit") or "")
        written = lim.get("as_written")
        side = ">" if lim.get("side", "above") != "below" else "<"
        label = str(lim.get("label") or "limit")
    else:
        value, unit, written, side, label = num(output.get("limit_K")), "K", None, ">", "limit"
    if value is None:
        return ""
    shown = _shown_unit(written) if isinstance(written, str) and written.strip() else \
        f"{fmt_value(value)}{'' if unit in ('', '1') else ' ' + unit}"
    what = "final temperature" if output.get("kind") == "adiabatic_temperature_rise" and \
        output.get("limit_applies_to", "final_temperature") != "rise" else output_symbol(output)
    return f"{what} {side} {label + ' ' if label != 'limit' else ''}{shown}"


def probability_cell(point: Mapping, key: str) -> str:
    """A point's probability field (``exceedance_probability``, ``p_phase_change``, …) as report text, with its
    one-sided upper bound and the trials (:func:`uqthermo.report.style.probability_text`)."""
    from ..style import probability_text

    base = "exceedance" if key == "exceedance_probability" else key
    ub = point.get(f"{base}_upper_bound")
    n = point.get(f"{base}_trials")
    if n is None and point.get(f"{base}_standard_error") is not None:
        n = (point.get("monte_carlo") or {}).get("samples")
    basis = point.get("exceedance_basis") if key == "exceedance_probability" else None
    return probability_text(point.get(key), ub, n, basis=basis)


def _bounds(point: Mapping) -> tuple[dict, str]:
    """One-sided bounds {P01, P05, P95, P99} and their basis, from ``margins`` or ``monte_carlo.one_sided``.

    ``margins`` (as written by the run) names bounds by confidence level:
    ``lower_P95`` is the 5th percentile, ``upper_P95`` the 95th, ``upper_P95_margin``
    = upper_P95 − estimate, ``lower_P95_margin`` = estimate − lower_P95.
    """
    mg = point.get("margins") or {}
    os_ = (point.get("monte_carlo") or {}).get("one_sided") or {}
    b = {
        "P01": num(mg.get("lower_P99")), "P05": num(mg.get("lower_P95")),
        "P95": num(mg.get("upper_P95")), "P99": num(mg.get("upper_P99")),
    }
    for k in b:
        if b[k] is None:
            b[k] = num(os_.get(k))
    basis = text(mg.get("basis")) or ("Monte Carlo quantiles" if os_ else "")
    return b, basis


def bounds_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    unit = output_unit(output)
    t = DisplayTable(
        key, f"One-sided bounds and design margins{in_unit(unit)}",
        ["T / K", "P01", "P05", "P95", "P99", "y − P05", "P95 − y", "y − P01", "P99 − y"],
        ["r"] * 9,
    )
    bases = set()
    for p in points(output):
        b, basis = _bounds(p)
        if all(v is None for v in b.values()):
            continue
        bases.add(basis)
        mg = p.get("margins") or {}
        y = point_estimate(p)
        dec = uncertainty_decimals(point_u(p))

        def margin(key: str, bound: float | None, upper: bool) -> str:
            m = num(mg.get(key))
            if m is None and bound is not None and y is not None:
                m = bound - y if upper else y - bound
            return fmt_fixed(m, dec)

        t.rows.append([fmt_temperature(p.get("temperature_K"))]
                      + [fmt_fixed(b[k], dec) for k in ("P01", "P05", "P95", "P99")]
                      + [margin("lower_P95_margin", b["P05"], False), margin("upper_P95_margin", b["P95"], True),
                         margin("lower_P99_margin", b["P01"], False), margin("upper_P99_margin", b["P99"], True)])
    if t.rows:
        t.notes.append("Pxx is the xx-th percentile of the output distribution: P05 and P95 are one-sided 95 % bounds, P01 and P99 "
                       "one-sided 99 % bounds. The margins are their distances from the estimate y: what to subtract from or add "
                       "to y for a one-sided design value." + (f" Basis: {', '.join(sorted(x for x in bases if x))}." if any(bases) else ""))
    dv = [num((p.get("margins") or {}).get("design_value")) for p in points(output)]
    dv = [d for d in dv if d is not None]
    if dv:
        t.notes.append(f"Design value stated in the case: {fmt_value(dv[0])}{unit_suffix(unit)}; compare it with the one-sided bounds.")
    return t


def safety_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    """Thermal-safety indicators of an adiabatic output (final temperature, MTSR, criticality class)."""
    t = DisplayTable(key, "Thermal-safety indicators (estimates; see the cautions)", ["Indicator", "Value"], ["w", "w"])
    pts = points(output)
    if output.get("kind") != "adiabatic_temperature_rise" or not pts:
        return t
    p = pts[0]
    dec = uncertainty_decimals(point_u(p))

    def add(label: str, value: str) -> None:
        if value not in ("—", ""):
            t.rows.append([label, value])

    from ..style import probability_text

    add("Start temperature / K", fmt_temperature(output.get("start_temperature_K")))
    add("Final temperature T_start + ΔT_ad, no evaporative cooling / K", fmt_fixed(p.get("final_temperature_K"), dec))
    if limit_text(output):
        add("Limit", limit_text(output))
    if p.get("exceedance_probability") is not None:
        add(f"P({limit_text(output) or 'final temperature > limit'})", probability_cell(p, "exceedance_probability"))
    add("Process temperature / K", fmt_temperature(output.get("process_temperature_K")))
    if num(output.get("accumulation")) is not None:
        add("Accumulation of unreacted material", fmt_sig(output.get("accumulation"), 3))
    add("Maximum temperature of the synthesis reaction (MTSR, no evaporative cooling) / K", fmt_fixed(p.get("mtsr_K"), dec))
    for key, lab in (("mtt", "Maximum technical temperature (MTT)"), ("td24", "T_D24 (24 h time to maximum rate)")):
        blk = output.get(key)
        if isinstance(blk, Mapping) and num(blk.get("value")) is not None:
            u = num(blk.get("standard_uncertainty")) or 0.0
            add(f"{lab} / K", fmt_temperature(blk.get("value")) + (f" (u = {fmt_u(u)} K)" if u > 0 else ""))
        else:
            add(f"{lab} / K", fmt_temperature(output.get(f"{key}_K")))
    if p.get("criticality_class") is not None:
        add("Criticality class at the estimates (1 = lowest, 5 = highest)", text(p.get("criticality_class")))
    probs = p.get("criticality_class_probabilities")
    if isinstance(probs, Mapping) and probs:
        ubs = p.get("criticality_class_probabilities_upper_bounds") or {}
        n = (p.get("monte_carlo") or {}).get("samples")
        for k, v in probs.items():
            add(f"P(criticality class {text(k)})",
                probability_text(v, ubs.get(k), n) if ubs else fmt_probability(num(v) or 0))
    for k, lab in (("p_mtsr_above_mtt", "P(MTSR > MTT)"), ("p_mtsr_above_td24", "P(MTSR > T_D24)"),
                   ("p_phase_change", "P(the charge reaches a phase change on its real path, e.g. the solvent boils)")):
        if p.get(k) is not None:
            add(lab, probability_cell(p, k))
    bl = p.get("boiling_limited")
    if isinstance(bl, Mapping):
        ft = bl.get("final_temperature_K") or {}
        v = num(ft.get("mean")) if num(ft.get("mean")) is not None else num(ft.get("estimate"))
        add("Boiling-limited end temperature (evaporative cooling, tempering) / K", fmt_fixed(v, dec))
        if bl.get("p_tempering_point_reached") is not None:
            add("P(tempering point reached: the solvent boils)", probability_text(
                bl.get("p_tempering_point_reached"), bl.get("p_tempering_point_reached_upper_bound"), bl.get("trials")))
        for ev in bl.get("evaporated") or []:
            if not isinstance(ev, Mapping):
                continue
            mol, kg = ev.get("mol") or {}, ev.get("kg") or {}
            m = num(mol.get("mean")) if num(mol.get("mean")) is not None else num(mol.get("estimate"))
            parts = [f"mean {fmt_sig(m, 3)} mol" + (f" ({fmt_sig(num(kg.get('mean')) if num(kg.get('mean')) is not None else num(kg.get('estimate')), 3)} kg)" if kg else "")]
            if num(mol.get("P95")) is not None:
                parts.append(f"95th percentile {fmt_sig(mol.get('P95'), 3)} mol" +
                             (f" ({fmt_sig(kg.get('P95'), 3)} kg)" if num(kg.get("P95")) is not None else ""))
            add(f"{text(ev.get('species'))}({text(ev.get('phase'))}) evaporated", "; ".join(parts))
    for key, lab in (("specific_heat_of_reaction", "Specific heat of reaction Q'_r / (kJ/kg of reaction mass)"),
                     ("specific_heat_capacity", "Specific heat capacity c'_p of the reaction mass / (J/(g·K))"),
                     ("final_pressure", "Final pressure of the closed vessel (ideal gas) / kPa")):
        blk = p.get(key)
        if isinstance(blk, Mapping):
            v = num(blk.get("mean")) if num(blk.get("mean")) is not None else num(blk.get("estimate"))
            u = num(blk.get("standard_uncertainty"))
            add(lab, fmt_fixed(v, uncertainty_decimals(u)) + (f" (u = {fmt_u(u)})" if u else "") if u else fmt_sig(v, 4))
    if len(t.rows) <= 1:
        t.rows = []
    return t


def exceedance_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    t = DisplayTable(key, "Probability of exceeding the limit", ["T / K", "Limit", "P(beyond the limit)", "Standard error"],
                     ["r", "w", "w", "r"])
    for p in points(output):
        if p.get("exceedance_probability") is None:
            continue
        se = p.get("exceedance_standard_error")
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), limit_text(output), probability_cell(p, "exceedance_probability"),
            fmt_probability(se, se) if num(se) else "—",
        ])
    if t.rows:
        bm = (results.get("run") or {}).get("bound_method")
        t.notes.append("The upper bound is a one-sided 95 % bound on the probability: with no trial beyond the limit the "
                       "probability is shown as below that bound, never as zero." + (f" Bound used: {text(bm)}." if bm else ""))
    return t
