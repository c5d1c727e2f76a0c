"""Handbook formation-data tables for gases: Yaws and the API Technical Data Book.

Owns two tables shipped by ``chemicals``:

``Yaws``
    Ideal-gas formation enthalpies and standard entropies at 298.15 K of about 5000 species,
    C. L. Yaws, Thermophysical Properties of Chemicals and Hydrocarbons, 2nd ed., Gulf
    Professional Publishing / Elsevier (2014).
``API-TDB``
    Ideal-gas formation enthalpies at 298.15 K from the API Technical Data Book (API, Technical
    Data Book - Petroleum Refining), as listed by T. A. Albahri and A. F. Aljasmi, "SGC method for
    predicting the standard enthalpy of formation of pure compounds from their molecular
    structures", Thermochim. Acta 568 (2013) 46-60.

Uncertainty: none stated.

Not used: the "Hfg" column of chemicals' TRC gas-phase table. Its values are formation
enthalpies at 0 K, not 298.15 K (benzene 100.4 kJ/mol against 82.9 kJ/mol at 298.15 K; ethanol
-217.4 against -234.6), so mixing them in would bias any comparison.
"""

from __future__ import annotations

import functools

from .base import T_REF, nan_to_none
from .candidates import ScalarCandidate, SourceInfo

__all__ = ["yaws_info", "api_info", "scalar", "catalog", "curves", "tables"]


@functools.lru_cache(maxsize=1)
def yaws_info() -> SourceInfo:
    return SourceInfo("Yaws", "Yaws' Thermophysical Properties of Chemicals and Hydrocarbons", "2nd ed. (2014)",
                      "C. L. Yaws, Thermophysical Properties of Chemicals and Hydrocarbons, 2nd ed., Elsevier (2014)",
                      "compilation", "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def api_info() -> SourceInfo:
    return SourceInfo("API-TDB", "API Technical Data Book (as listed by Albahri and Aljasmi)", "2013 listing",
                      "API Technical Data Book - Petroleum Refining; values as listed by T. A. Albahri, "
                      "A. F. Aljasmi, Thermochim. Acta 568 (2013) 46-60", "compilation", "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def tables():
    """The Yaws and API-TDB gas formation tables shipped with ``chemicals`` (pandas frames, by CAS)."""
    import chemicals.reaction as r

    return r.Hfg_sources["YAWS"], r.Hfg_sources["API_TDB_G"]


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    y, a = tables()
    for cas in y.index[y["Hfg"].notna()]:
        out.setdefault(str(cas), {}).setdefault("formation_enthalpy", set()).add("g")
    for cas in y.index[y["S0g"].notna()]:
        out.setdefault(str(cas), {}).setdefault("standard_entropy", set()).add("g")
    for cas in a.index[a["Hfg"].notna()]:
        out.setdefault(str(cas), {}).setdefault("formation_enthalpy", set()).add("g")
    return out


def _get(df, cas, col):
    try:
        return nan_to_none(df.at[cas, col])
    except (KeyError, ValueError):
        return None


def scalar(cas: str, quantity: str, phase: str, T=None) -> list[ScalarCandidate]:
    if phase != "g":
        return []
    y, a = tables()
    out = []
    if quantity == "formation_enthalpy":
        v = _get(y, cas, "Hfg")
        if v is not None:
            out.append(ScalarCandidate(yaws_info(), quantity, phase, cas, v, T_REF))
        v = _get(a, cas, "Hfg")
        if v is not None:
            out.append(ScalarCandidate(api_info(), quantity, phase, cas, v, T_REF))
    elif quantity == "standard_entropy":
        v = _get(y, cas, "S0g")
        if v is not None:
            out.append(ScalarCandidate(yaws_info(), quantity, phase, cas, v, T_REF))
    return out


def curves(cas, phase):
    return []
