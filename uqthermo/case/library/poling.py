"""Poling, Prausnitz and O'Connell's databank: ideal-gas Cp polynomials and Cp at 298.15 K.

Owns chemicals' ``Cp_data_Poling``: for about 370 compounds the ideal-gas polynomial with its
validity range, and the gas and liquid heat capacities at 298.15 K::

    Cp/R = a0 + a1 T + a2 T² + a3 T³ + a4 T⁴,   T in K

Source: B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of Gases and Liquids,
5th ed., McGraw-Hill, New York (2001), Appendix A.

Uncertainty: none stated per compound. A polynomial without the T⁴ term is exact in Shomate form;
with it, it is represented piecewise (deviation recorded). The 298.15 K values count only as
evidence in the spread of sources.
"""

from __future__ import annotations

import functools

import numpy as np

from .base import T_REF, nan_to_none
from .candidates import CurveCandidate, SourceInfo, polynomial_to_shomate

__all__ = ["info", "curves", "catalog", "scalar", "table"]


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("Poling", "Poling, Prausnitz & O'Connell databank", "5th ed. (2001)",
                      "B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of Gases and Liquids, "
                      "5th ed., McGraw-Hill (2001), Appendix A", "correlation", "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def table():
    """The Poling et al. heat-capacity databank shipped with ``chemicals`` (pandas frame, by CAS)."""
    from chemicals import heat_capacity as hc

    return hc.Cp_data_Poling


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    df = table()
    for cas, row in df.iterrows():
        ph = set()
        if nan_to_none(row["a0"]) is not None or nan_to_none(row["Cpg"]) is not None:
            ph.add("g")
        if nan_to_none(row["Cpl"]) is not None:
            ph.add("l")
        if ph:
            out[str(cas)] = {"heat_capacity": ph}
    return out


def scalar(cas, quantity, phase, T=None):
    return None


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    df = table()
    if cas not in df.index or phase not in ("g", "l"):
        return []
    from chemicals.heat_capacity import R

    row = df.loc[cas]
    out = []
    if phase == "g":
        a = [nan_to_none(row[f"a{i}"]) for i in range(5)]
        lo, hi = nan_to_none(row["Tmin"]), nan_to_none(row["Tmax"])
        if a[0] is not None and lo and hi:
            a = [x or 0.0 for x in a]

            def fn(T, a=a):
                T = np.asarray(T, dtype=float)
                return R * (a[0] + T * (a[1] + T * (a[2] + T * (a[3] + T * a[4]))))

            native = None
            if a[4] == 0.0:
                native = [(float(lo), float(hi), polynomial_to_shomate(R * a[0], R * a[1], R * a[2], R * a[3]))]
            out.append(CurveCandidate(info(), "g", cas, float(lo), float(hi), fn,
                                      form="Poling ideal-gas polynomial Cp/R = a0 + ... + a4 T^4", native=native,
                                      note=f"{lo:g}-{hi:g} K"))
    v = nan_to_none(row["Cpg" if phase == "g" else "Cpl"])
    if v is not None:
        out.append(CurveCandidate(info(), phase, cas, T_REF, T_REF, lambda T, c=v: np.full_like(np.asarray(T, float), c),
                                  form="Poling Cp at 298.15 K", note=f"{v:g} J/(mol*K) at 298.15 K only"))
    return out
