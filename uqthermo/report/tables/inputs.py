"""Inputs and provenance: the input data table (with the data library's notes), correlations, reactions."""

from __future__ import annotations

from collections.abc import Mapping

from ..fields import num, text
from ..rounding import fmt_fixed, fmt_sig, fmt_u, fmt_value, uncertainty_decimals
from ..units import amount_as_written, as_written
from .display import DisplayTable
from .library_notes import provenance_notes

__all__ = ["inputs_table", "correlations_table", "reactions_table"]


def inputs_table(results: Mapping) -> DisplayTable:
    rows = [i for i in (results.get("inputs") or []) if isinstance(i, Mapping)]
    cols = ["Datum", "Quantity", "Value", "Stated uncertainty", "u", "Unit", "Distribution", "Source"]
    align = ["l", "w", "r", "w", "r", "w", "w", "w"]
    t = DisplayTable("inputs", "Input data", cols, align)
    written = _as_written(results)
    for i in rows:
        est, u = i.get("estimate"), i.get("standard_uncertainty")
        if isinstance(est, (list, tuple)):
            us = u if isinstance(u, (list, tuple)) else [u] * len(est)
            parts = []
            for e, ui in zip(est, us):
                d = uncertainty_decimals(ui)
                parts.append(f"{fmt_fixed(e, d)} ± {fmt_u(ui)}" if d is not None else fmt_sig(e, 6))
            value, ustr = f"{len(est)} coefficients †", "per coefficient †"
            t.notes.append(f"† {text(i.get('datum'))}: coefficients (value ± u) {'; '.join(parts)}"
                           + (f" [{text(i.get('unit'))}]" if i.get("unit") else "") + ".")
        elif est is None and (num(i.get("n_parameters")) or 1) > 1:
            value, ustr = f"{int(num(i.get('n_parameters')))} coefficients", "per coefficient"
        else:
            d = uncertainty_decimals(u)
            value = fmt_fixed(est, d) if d is not None else fmt_value(est)
            ustr = fmt_u(u) if d is not None else ("0 (exact)" if num(u) == 0 else "—")
            w = written.get(text(i.get("datum")))
            if w and text(i.get("unit")) == "K" and num(est) is not None:     # the case's own text, unrounded
                value = f"{fmt_value(est)} ({w})"
            aw = amount_as_written(i)
            if aw:                                        # an amount or flow as the user wrote it: "13988 (252 kg)"
                value = f"{value} ({aw})"
        source = text(i.get("source"))
        lib = i.get("library")
        if lib not in (None, False, ""):
            lib_s = "data library" if lib is True else f"data library: {text(lib)}"
            source = f"{source} ({lib_s})" if source else lib_s
        stated_s = text(i.get("stated")) or "—"
        if i.get("assumed"):
            stated_s += " (assumed)"
        t.rows.append([
            text(i.get("datum")), text(i.get("quantity")), value, stated_s, ustr,
            text(i.get("unit")), text(i.get("distribution")) or "—", source or "—",
        ])
    if any(i.get("assumed") for i in rows):
        t.notes.append("(assumed): the dataset states no uncertainty for this value; the uncertainty written in the case is an assumption — check it.")
    t.notes += provenance_notes(rows)
    n_multi = [i for i in rows if (num(i.get("n_parameters")) or 1) > 1]
    if n_multi:
        t.notes.append("Heat-capacity data with several coefficients count as one datum in the driver ranking; their parameter count is in tables/inputs.csv.")
    return t


def _as_written(results: Mapping) -> dict[str, str]:
    """Datum id → the case's own text of a limit, MTT or TD24 written in another unit ("95 °C")."""
    out: dict[str, str] = {}
    for o in results.get("outputs") or []:
        if not isinstance(o, Mapping):
            continue
        for key in ("limit", "mtt", "td24"):
            blk = o.get(key)
            if isinstance(blk, Mapping) and blk.get("datum"):
                w = as_written(blk.get("as_written"))
                if w and not w.endswith(" K"):
                    out[text(blk["datum"])] = w
    return out


def correlations_table(results: Mapping) -> DisplayTable:
    t = DisplayTable("correlations", "Correlations between input data", ["Datum", "Datum", "Correlation coefficient r"], ["l", "l", "r"])
    for c in results.get("correlations") or []:
        if not isinstance(c, Mapping):
            continue
        b = c.get("between") or ["", ""]
        a1, a2 = (b + ["", ""])[:2] if isinstance(b, list) else ("", "")
        t.rows.append([text(a1), text(a2), fmt_sig(c.get("coefficient"), 3)])
    return t


def reactions_table(results: Mapping) -> DisplayTable:
    t = DisplayTable("reactions", "Reactions", ["Reaction", "Equation", "Anchor"], ["l", "w", "w"])
    for r in results.get("reactions") or []:
        if not isinstance(r, Mapping):
            continue
        anchor = {"formation": "formation enthalpies", "measured": "measured reaction enthalpy"}.get(r.get("anchor"), text(r.get("anchor")))
        t.rows.append([text(r.get("name")), text(r.get("equation")), anchor or "—"])
    return t
