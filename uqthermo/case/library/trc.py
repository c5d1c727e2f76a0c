"""TRC ideal-gas heat-capacity correlations of organic compounds.

Owns chemicals' ``TRC_gas_data``: for about 1960 organic compounds, the eight-constant equation
of the TRC compilation with its validity range::

    Cp/R = a0 + (a1/T²) exp(-a2/T) + y² (a3 + (a4 - a5/(T - a7)²) y⁸),   y = (T - a7)/(T + a6) for T > a7, else 0

Source: M. Frenkel, G. J. Kabo, K. N. Marsh, G. N. Roganov, R. C. Wilhoit, Thermodynamics of
Organic Compounds in the Gas State, Thermodynamics Research Center, College Station, TX (1994);
equation as implemented in ``chemicals.heat_capacity.TRCCp``.

Uncertainty: none stated per compound. The curve is represented in Shomate form piecewise by
uqthermo (deviation recorded with the curve). The table's ``Hfg`` column is not used: its values
are 0 K formation enthalpies (see :mod:`.formation_tables`).
"""

from __future__ import annotations

import functools

import numpy as np

from .base import nan_to_none
from .candidates import CurveCandidate, SourceInfo

__all__ = ["info", "curves", "catalog", "scalar", "table"]


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("TRC", "TRC Thermodynamics of Organic Compounds in the Gas State", "1994",
                      "M. Frenkel, G. J. Kabo, K. N. Marsh, G. N. Roganov, R. C. Wilhoit, Thermodynamics of "
                      "Organic Compounds in the Gas State, TRC, College Station (1994)", "correlation",
                      "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def table():
    """The TRC gas heat-capacity table shipped with ``chemicals`` (pandas frame, by CAS)."""
    from chemicals import heat_capacity as hc

    return hc.TRC_gas_data


def catalog() -> dict[str, dict[str, set]]:
    return {str(c): {"heat_capacity": {"g"}} for c in table().index}


def scalar(cas, quantity, phase, T=None):
    return None


def trc_cp(T, a0, a1, a2, a3, a4, a5, a6, a7) -> np.ndarray:
    """TRC ideal-gas Cp, J/(mol K) (vectorised form of ``chemicals.heat_capacity.TRCCp``)."""
    from chemicals.heat_capacity import R

    T = np.asarray(T, dtype=float)
    y = np.where(T > a7, (T - a7) / (T + a6), 0.0)
    d = T - a7
    with np.errstate(divide="ignore", invalid="ignore"):
        tail = np.where(d == 0.0, a4, a4 - a5 / (d * d))
    y2 = y * y
    return R * (a0 + (a1 / (T * T)) * np.exp(-a2 / T) + y2 * (a3 + tail * y2 * y2 * y2))


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    if phase != "g" or cas not in table().index:
        return []
    row = table().loc[cas]
    coef = [nan_to_none(row[f"a{i}"]) or 0.0 for i in range(8)]
    lo, hi = float(row["Tmin"]), float(row["Tmax"])
    return [CurveCandidate(info(), "g", cas, lo, hi, lambda T, c=coef: trc_cp(T, *c),
                           form="TRC ideal-gas equation (a0..a7)", note=f"{lo:g}-{hi:g} K")]
