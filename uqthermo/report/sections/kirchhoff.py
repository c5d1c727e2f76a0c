"""Kirchhoff breakdown of each reaction enthalpy: ΔrH(T_ref), ∫ΔrCp dT and the latent heats.

Rendered from ``kirchhoff_terms`` of each reaction-enthalpy point in results.json::

    {"at_reference": {"estimate", "standard_uncertainty", "temperature_K", "anchor"},
     "sensible": {"estimate", "standard_uncertainty"},
     "latent": {"estimate", "standard_uncertainty", "terms": [{"species", "transition", "temperature_K",
                "coefficient", "estimate", "standard_uncertainty"}]}}

(kJ/mol; the estimates are the terms at the best estimates of the inputs and sum to the
point's linear estimate; u by the GUM law of propagation). The terms can be correlated (an
uncertain temperature moves both the sensible term and the latent crossing), so their u
need not add in quadrature to u(y); the table gives u(y) of the total from the point itself.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

import pandas as pd

from ..fields import headline_index, num, outputs, points, text
from ..rounding import fmt_fixed, fmt_temperature, fmt_u, uncertainty_decimals
from ..tables.display import DisplayTable
from . import numbers as N
from .numbers import Num, Parts

TERMS = (("at_reference", "ΔrH at the reference temperature"), ("sensible", "sensible heat ∫ΔrCp dT"),
         ("latent", "latent heats of phase changes"))


def has_terms(point: Mapping) -> bool:
    k = point.get("kirchhoff_terms")
    return isinstance(k, Mapping) and all(isinstance(k.get(t), Mapping) for t, _ in TERMS)


def _pair(entry: Mapping, where: str) -> list[Num]:
    u = num(entry.get("standard_uncertainty"))
    d = uncertainty_decimals(u)
    if d is None:            # exact term (u = 0): two decimals of kJ/mol, as the engine's J/mol resolution allows
        d = 2
        return [Num(fmt_fixed(entry.get("estimate"), d), N.path(where, "estimate")), Num("0", N.path(where, "standard_uncertainty"))]
    return [Num(fmt_fixed(entry.get("estimate"), d), N.path(where, "estimate")), Num(fmt_u(u), N.path(where, "standard_uncertainty"))]


def _latent_label(kt: Mapping) -> str:
    terms = (kt.get("latent") or {}).get("terms") or []
    parts = []
    for t in terms:
        if not isinstance(t, Mapping):
            continue
        c = num(t.get("coefficient")) or 0.0
        tr = text(t.get("transition")).replace("-", " → ")
        parts.append(f"{'+' if c >= 0 else '−'}{abs(c):g} ΔtrsH({text(t.get('species'))}, {tr})")
    return ("latent heats: " + " ".join(parts)) if parts else "latent heats (no phase change on the routes)"


def concise_table(results: Mapping, key: str, tunit: str = "K") -> DisplayTable:
    """One block of rows per reaction-enthalpy output at its headline point: the three terms and the total."""
    t = DisplayTable(key, "Kirchhoff breakdown of the reaction enthalpies (at the headline temperature)",
                     ["Output", "Term", "Estimate", "u", "Unit"], ["l", "w", "r", "r", "l"])
    for oi, o in enumerate(outputs(results)):
        pts = points(o)
        if o.get("kind") != "reaction_enthalpy" or not pts:
            continue
        k = headline_index(o)
        p = pts[k]
        if not has_terms(p):
            continue
        kt = p["kirchhoff_terms"]
        base = N.path("outputs", oi, "points", k)
        ref = kt["at_reference"]
        tref = N.temperature(ref.get("temperature_K"), tunit, N.path(base, "kirchhoff_terms", "at_reference", "temperature_K"))
        T = N.temperature(p.get("temperature_K"), tunit, N.path(base, "temperature_K"))
        anchor = "measured ΔrH" if ref.get("anchor") == "measured" else "ΔrH from formation enthalpies"
        name = text(o.get("name"))
        u_out = text(o.get("unit")) or "kJ/mol"
        t.rows.append([name, Parts([f"{anchor} at ", tref]), *_pair(ref, N.path(base, "kirchhoff_terms", "at_reference")), u_out])
        t.rows.append(["", Parts(["sensible heat ∫ΔrCp dT from ", tref, " to ", T]),
                       *_pair(kt["sensible"], N.path(base, "kirchhoff_terms", "sensible")), u_out])
        t.rows.append(["", _latent_label(kt), *_pair(kt["latent"], N.path(base, "kirchhoff_terms", "latent")), u_out])
        lin = p.get("linear") or {}
        t.rows.append(["", Parts(["ΔrH(", T, ") (sum; u of the result)"]),
                       *_pair({"estimate": lin.get("estimate"), "standard_uncertainty": lin.get("standard_uncertainty")},
                              N.path(base, "linear")), u_out])
    if t.rows:
        t.notes.append("The terms are evaluated at the best estimates of the inputs and sum to the linear (GUM) estimate; "
                       "each u is from the GUM law of propagation. Terms can be correlated, so their u need not add in "
                       "quadrature to u(y). Every point of every output is in the appendix and in tables/kirchhoff.csv.")
    return t


def point_table(output: Mapping, key: str) -> DisplayTable:
    """All points of one reaction-enthalpy output, temperatures in K (appendix)."""
    t = DisplayTable(key, f"Kirchhoff breakdown of {text(output.get('name'))} at every temperature, in "
                          f"{text(output.get('unit')) or 'kJ/mol'}",
                     ["T / K", "ΔrH(T_ref)", "u", "∫ΔrCp dT", "u", "Latent heats", "u", "ΔrH(T)", "u"], ["r"] * 9)
    ref_T = None
    for p in points(output):
        if not has_terms(p):
            continue
        kt = p["kirchhoff_terms"]
        ref_T = kt["at_reference"].get("temperature_K")
        row: list[Any] = [fmt_temperature(p.get("temperature_K"))]
        for name, _ in TERMS:
            row += [str(x) for x in _pair(kt[name], "")]
        lin = p.get("linear") or {}
        row += [str(x) for x in _pair({"estimate": lin.get("estimate"), "standard_uncertainty": lin.get("standard_uncertainty")}, "")]
        t.rows.append(row)
    if t.rows:
        first = next(p for p in points(output) if has_terms(p))
        t.notes.append(f"Reference temperature {fmt_temperature(ref_T)} K; {_latent_label(first['kirchhoff_terms'])}. "
                       "ΔrH(T) and its u are the linear (GUM) result of the point.")
    return t


def kirchhoff_frame(results: Mapping) -> pd.DataFrame:
    """``tables/kirchhoff.csv``: one row per reaction-enthalpy point and term (full precision, the output's unit)."""
    rows = []
    for o in outputs(results):
        for p in points(o):
            if not has_terms(p):
                continue
            kt = p["kirchhoff_terms"]
            base = {"output": o.get("name"), "unit": o.get("unit"), "temperature_K": num(p.get("temperature_K")),
                    "reference_temperature_K": num(kt["at_reference"].get("temperature_K"))}
            for name, _ in TERMS:
                rows.append({**base, "term": name, "estimate": num(kt[name].get("estimate")),
                             "standard_uncertainty": num(kt[name].get("standard_uncertainty"))})
                if name == "latent":
                    for lt in kt[name].get("terms") or []:
                        rows.append({**base, "term": f"latent:{text(lt.get('species'))}:{text(lt.get('transition'))}",
                                     "coefficient": num(lt.get("coefficient")), "estimate": num(lt.get("estimate")),
                                     "standard_uncertainty": num(lt.get("standard_uncertainty"))})
            lin = p.get("linear") or {}
            rows.append({**base, "term": "total", "estimate": num(lin.get("estimate")),
                         "standard_uncertainty": num(lin.get("standard_uncertainty"))})
    return pd.DataFrame(rows, columns=["output", "unit", "temperature_K", "reference_temperature_K", "term", "coefficient",
                                       "estimate", "standard_uncertainty"])


__all__ = ["concise_table", "point_table", "kirchhoff_frame", "has_terms"]
