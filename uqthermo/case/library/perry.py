"""Perry's Chemical Engineers' Handbook tables: liquid Cp (DIPPR 100), Cp of inorganics, ΔvapH (DIPPR 106).

Owns three tables of Perry's Handbook (8th ed.) shipped by ``chemicals``:

``Perry-DIPPR`` (Table 2-153)
    Liquid heat capacities, DIPPR equation 100 with validity range::

        Cp = A + B T + C T² + D T³ + E T⁴   (J/(kmol K) in the table; T in K)

    exact in Shomate form when E = 0, otherwise represented piecewise.
``Perry-2-151`` (Table 2-151)
    Heat capacities of the elements and inorganic compounds (solids, liquids, gases)::

        Cp = a + b T + c T² + d/T²   (cal/(mol K); exact in Shomate form)

    with a stated uncertainty in percent, read as the half-width of a rectangular distribution
    (GUM 4.3.7: u = a/√3) since no confidence level is given.
``Perry-DIPPR`` (Table 2-150)
    Enthalpies of vaporization, DIPPR equation 106::

        ΔvapH = C1 (1 - Tr)^(C2 + C3 Tr + C4 Tr²),   Tr = T/Tc,   J/mol (as converted by chemicals)

Source: D. W. Green, R. H. Perry (eds.), Perry's Chemical Engineers' Handbook, 8th ed.,
McGraw-Hill (2008), Tables 2-150, 2-151 and 2-153 (the DIPPR 801 correlations of the Design
Institute for Physical Properties, AIChE).

Uncertainty: stated for Table 2-151 only (see above).
"""

from __future__ import annotations

import functools
import math

import numpy as np

from .base import nan_to_none
from .candidates import CurveCandidate, ScalarCandidate, SourceInfo, polynomial_to_shomate

__all__ = ["dippr_info", "inorganic_info", "curves", "catalog", "scalar"]

CALORIE = 4.184
_PH151 = {"c": "s", "l": "l", "g": "g"}


@functools.lru_cache(maxsize=1)
def dippr_info() -> SourceInfo:
    return SourceInfo("Perry-DIPPR", "Perry's Handbook DIPPR correlations (Tables 2-150, 2-153)", "8th ed. (2008)",
                      "D. W. Green, R. H. Perry, Perry's Chemical Engineers' Handbook, 8th ed., McGraw-Hill (2008), "
                      "Tables 2-150 and 2-153 (DIPPR 801)", "correlation", "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def inorganic_info() -> SourceInfo:
    return SourceInfo("Perry-2-151", "Perry's Handbook Table 2-151 (elements and inorganic compounds)",
                      "8th ed. (2008)", "D. W. Green, R. H. Perry, Perry's Chemical Engineers' Handbook, 8th ed., "
                      "McGraw-Hill (2008), Table 2-151", "compilation",
                      "uncertainty in % per equation, read as a rectangular half-width (u = a/√3)")


@functools.lru_cache(maxsize=1)
def _tables():
    import chemicals.heat_capacity as hc
    import chemicals.phase_change as pc

    return hc.Cp_data_Perry_Table_153_100, hc.Cp_dict_PerryI, pc.phase_change_data_Perrys2_150


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    t153, t151, t150 = _tables()
    for cas in t153.index:
        out.setdefault(str(cas), {}).setdefault("heat_capacity", set()).add("l")
    for cas, phases in t151.items():
        if cas and cas != "null":
            for p in phases:
                if p in _PH151:
                    out.setdefault(cas, {}).setdefault("heat_capacity", set()).add(_PH151[p])
    for cas in t150.index:
        out.setdefault(str(cas), {}).setdefault("vaporization_enthalpy", set()).add("l-g")
    return out


def _dippr106(T, tc, c1, c2, c3, c4):
    tr = T / tc
    if tr >= 1.0:
        return 0.0
    return c1 * (1.0 - tr) ** (c2 + c3 * tr + c4 * tr * tr)


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    if quantity != "vaporization_enthalpy" or phase != "l-g" or T is None:
        return None
    t150 = _tables()[2]
    if cas not in t150.index:
        return None
    r = t150.loc[cas]
    lo, hi = float(r["Tmin"]), float(r["Tmax"])
    if not (lo - 1e-6 <= T <= hi + 1e-6):
        return None
    c = [nan_to_none(r[k]) or 0.0 for k in ("C1", "C2", "C3", "C4")]
    v = _dippr106(T, float(r["Tc"]), *c)
    return ScalarCandidate(dippr_info(), quantity, phase, cas, v, T,
                           note=f"DIPPR 106 (Table 2-150) at {T:g} K, valid {lo:g}-{hi:g} K")


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    t153, t151, _ = _tables()
    out = []
    if phase == "l" and cas in t153.index:
        r = t153.loc[cas]
        A, B, C, D, E = (float(nan_to_none(r[k]) or 0.0) / 1000.0 for k in "ABCDE")
        lo, hi = float(r["Tmin"]), float(r["Tmax"])

        def fn(T, c=(A, B, C, D, E)):
            T = np.asarray(T, dtype=float)
            return c[0] + T * (c[1] + T * (c[2] + T * (c[3] + T * c[4])))

        native = [(lo, hi, polynomial_to_shomate(A, B, C, D))] if E == 0.0 else None
        out.append(CurveCandidate(dippr_info(), "l", cas, lo, hi, fn, form="DIPPR 100 polynomial (Perry Table 2-153)",
                                  native=native, note=f"{lo:g}-{hi:g} K"))
    for p, d in (t151.get(cas) or {}).items():
        if _PH151.get(p) != phase:
            continue
        lo = nan_to_none(d.get("Tmin")) or None
        hi = nan_to_none(d.get("Tmax")) or None
        if lo is None or hi is None:
            continue
        a, b, c, e = (float(nan_to_none(d.get(k)) or 0.0) * CALORIE for k in ("Const", "Lin", "Quad", "Quadinv"))
        native = [(float(lo), float(hi), polynomial_to_shomate(a, b, c, 0.0, e))]
        err = nan_to_none(d.get("Error"))
        ru = (err / 100.0 / math.sqrt(3.0)) if err else None
        out.append(CurveCandidate(
            inorganic_info(), phase, cas, float(lo), float(hi),
            lambda T, c=(a, b, c, e): c[0] + c[1] * np.asarray(T, float) + c[2] * np.asarray(T, float) ** 2
            + c[3] / np.asarray(T, float) ** 2,
            form="Perry Table 2-151 a + bT + cT² + d/T²", native=native, relative_u=ru,
            u_basis="stated" if ru else "", u_note=(f"± {err:g} % (Perry Table 2-151) read as a rectangular "
                                                    f"half-width: u = {err:g} %/√3" if ru else ""),
            note=f"{lo:g}-{hi:g} K"))
    return out
