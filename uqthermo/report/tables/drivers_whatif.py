"""Drivers and what-if: the driver ranking table with the note on its method, and the what-if table."""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from ..drivers import covariance_label, rows_sum_note
from ..fields import num, point_u, text
from ..rounding import fmt_fixed, fmt_share, fmt_share_ci, fmt_temperature, fmt_value, pct_label, uncertainty_decimals
from .display import DisplayTable, in_unit, output_unit

__all__ = ["DRIVER_WHAT", "DRIVER_WHY", "drivers_note", "drivers_table", "whatif_table"]


DRIVER_WHAT = {
    "linear": ("Shares are the linear variance contributions c_i² u²(x_i) / u²(y) (GUM 5.1.3), summed over the "
               "coefficients of each datum; covariance terms between correlated data are listed as their own signed "
               "rows (GUM 5.2.2), so that all rows sum to 100 %."),
    "sobol": ("Shares are first-order variance-based (Sobol) indices of each datum, estimated by sampling the model; "
              "the total-order indices ST also count interactions."),
}


DRIVER_WHY = {
    "linear": "the linear method is adequate for this output, so the shares are additive",
    "sobol": "the linear method is not adequate here (non-linear model or non-normal inputs), and variance-based indices capture what linear contributions miss",
}


def drivers_note(results: Mapping, point: Mapping) -> str:
    """What the driver shares are and why that method was used (plain text)."""
    run = results.get("run") or {}
    method = str(point.get("drivers_method") or run.get("drivers_method") or "")
    reason = text(point.get("drivers_reason")) or (text(run.get("drivers_reason")) if run.get("drivers_reason") != "per point" else "")
    parts = [DRIVER_WHAT.get(method, f"Ranking method: {text(method) or 'not stated'}.")]
    why = reason or DRIVER_WHY.get(method, "")
    if why:
        parts.append(f"Method chosen because {why}.")
    sens = point.get("sensitivity") or {}
    if str(sens.get("method")) == "sobol":
        est = []
        if num(sens.get("n_base")) is not None:
            est.append(f"N_base = {fmt_value(sens.get('n_base'))}")
        if num(sens.get("conf_level")) is not None:
            est.append(f"{pct_label(num(sens.get('conf_level')))} confidence intervals")
        if est:
            parts.append("Sobol estimator: " + ", ".join(est) + ".")
        if sens.get("independent_data") is False:
            parts.append("Correlations between data were left out of the Sobol sample; the linear shares show their effect.")
        for n in sens.get("notes") or []:
            parts.append(text(n))
    return " ".join(parts)


def drivers_table(output: Mapping, point: Mapping, key: str) -> DisplayTable:
    sens = point.get("sensitivity") or {}
    extra = [k for k in ("S1", "ST", "delta") if isinstance(sens.get(k), Mapping) and sens.get(k)]
    labels = {"S1": "S1 (first order)", "ST": "ST (total)", "delta": "δ (moment-independent)"}
    t = DisplayTable(
        key, f"Driver ranking at T = {fmt_temperature(point.get('temperature_K'))} K",
        ["Rank", "Datum", "Share of u²(y) / %", "Confidence interval / %"] + [labels[k] for k in extra],
        ["r", "l", "r", "r"] + ["r"] * len(extra),
    )
    for rank, d in enumerate(point.get("drivers") or [], start=1):
        datum = d.get("datum")
        row = [str(rank), text(datum), fmt_share(d.get("share")), fmt_share_ci(d.get("share_ci"))]
        for k in extra:
            entry = sens[k].get(datum)
            row.append(_fmt_index(entry))
        t.rows.append(row)
    if point.get("drivers_method") == "linear":
        for c in point.get("covariance_terms") or []:
            t.rows.append(["", covariance_label(c.get("between") or []), fmt_share(c.get("share")), "—"] + ["—"] * len(extra))
    if t.rows and all(r[3] == "—" for r in t.rows):
        for r in t.rows:
            del r[3]
        del t.columns[3]
        del t.align[3]
    if extra:
        t.notes.append("Sensitivity indices given as value ± half-width of the confidence interval reported by the estimator.")
    note = rows_sum_note(point)
    if note:
        t.notes.append("Shares: " + note + ".")
    return t


def _fmt_index(entry: Any) -> str:
    if entry is None:
        return "—"
    if isinstance(entry, (list, tuple)):
        v = entry[0] if entry else None
        ci = entry[1] if len(entry) > 1 else None
    else:
        v, ci = entry, None
    if num(ci) is not None and num(ci) > 0:
        dec = min(max(uncertainty_decimals(ci) or 3, 2), 4)
        return f"{fmt_fixed(v, dec)} ± {fmt_fixed(ci, dec)}"
    return fmt_fixed(v, 3)


def whatif_table(output: Mapping, point: Mapping, key: str, p_cov: float) -> DisplayTable:
    unit = output_unit(output)
    t = DisplayTable(
        key, f"What-if: expanded uncertainty U ({pct_label(p_cov)}) at T = {fmt_temperature(point.get('temperature_K'))} K if one datum improved{in_unit(unit)}",
        ["Datum", "U now", "U with u halved", "U with datum exact", "Reduction if exact / %"],
        ["l", "r", "r", "r", "r"],
    )
    lin_u = num((point.get("linear") or {}).get("standard_uncertainty"))
    dec = uncertainty_decimals(lin_u if lin_u is not None else point_u(point))
    stated = any(num(w.get("U_stated")) is not None for w in point.get("whatif") or [])
    if stated:
        t.columns.insert(4, "U with candidate purchase")
        t.align.insert(4, "r")
    NO_CHANGE = "no measurable change"

    def cell(w, key):
        ok = (w.get("measurable") or {}).get(key) if isinstance(w.get("measurable"), Mapping) else None
        if ok is False and w.get("method") == "monte-carlo":
            return NO_CHANGE
        return fmt_fixed(w.get(key), dec)

    mc_rows = False
    for w in point.get("whatif") or []:
        now = num(w.get("U_now"))
        rem = num(w.get("U_removed"))
        red = fmt_fixed(100 * (1 - rem / now), 1) if now and rem is not None else "—"
        if cell(w, "U_removed") == NO_CHANGE:
            red = NO_CHANGE
        mc_rows = mc_rows or w.get("method") == "monte-carlo"
        row = [text(w.get("datum")), fmt_fixed(now, dec), cell(w, "U_halved"), cell(w, "U_removed"), red]
        if stated:
            row.insert(4, cell(w, "U_stated"))
        t.rows.append(row)
    if mc_rows:
        t.notes.append("Monte Carlo what-if on common random numbers (independent replicates give each change a "
                       "standard error, in results.json); a change smaller than twice its standard error is shown as "
                       "'no measurable change'.")
    elif point.get("whatif"):
        t.notes.append("From the linear (GUM) budget, which Monte Carlo validates for this point: exact, no sampling "
                       "noise. Where correlated data cancel variance, making one of them exact can increase U.")
    return t
