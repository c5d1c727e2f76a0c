"""CRC Handbook of Chemistry and Physics: standard-state table, latent heats, phase-change temperatures.

Owns the CRC tables shipped by ``chemicals``:

* "Standard Thermodynamic Properties of Chemical Substances": ΔfH°, ΔfG°, S° and Cp at 298.15 K
  for solids, liquids and gases (a Cp at one temperature is kept as a single-point curve: it
  only serves as evidence in the spread of sources, never as a curve for a path);
* "Enthalpy of Vaporization": ΔvapH at the normal boiling point and at 298.15 K;
* "Enthalpy of Fusion": ΔfusH at the melting point;
* the boiling and melting points of the organic and inorganic physical-constants tables.

Source: W. M. Haynes (ed.), CRC Handbook of Chemistry and Physics, 95th ed., CRC Press, Boca
Raton (2014) (edition as cited by chemicals).

Uncertainty: none stated.
"""

from __future__ import annotations

import functools

import numpy as np

from .base import T_REF, nan_to_none
from .candidates import CurveCandidate, ScalarCandidate, SourceInfo

__all__ = ["info", "scalar", "curves", "catalog", "standard_table"]

_STD = {"formation_enthalpy": "Hf", "formation_gibbs_energy": "Gf", "standard_entropy": "S0"}


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("CRC", "CRC Handbook of Chemistry and Physics", "95th ed. (2014)",
                      "W. M. Haynes (ed.), CRC Handbook of Chemistry and Physics, 95th ed., CRC Press (2014)",
                      "compilation", "no uncertainty stated")


@functools.lru_cache(maxsize=1)
def standard_table():
    from chemicals import heat_capacity as hc

    return hc.CRC_standard_data


@functools.lru_cache(maxsize=1)
def _latent():
    import chemicals.phase_change as pc

    return pc.Hvap_data_CRC, pc.Hfus_data_CRC


def _get(df, cas, col):
    try:
        return nan_to_none(df.at[cas, col])
    except (KeyError, ValueError):
        return None


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    df = standard_table()
    for q, stem in list(_STD.items()) + [("heat_capacity", "Cp")]:
        for ph, suf in (("s", "s"), ("l", "l"), ("g", "g")):
            col = df[f"{stem}{suf}"]
            for cas in col.index[col.notna()]:
                out.setdefault(str(cas), {}).setdefault(q, set()).add(ph)
    hv, hf = _latent()
    for cas in hv.index[hv["HvapTb"].notna() | hv["Hvap298"].notna()]:
        out.setdefault(str(cas), {}).setdefault("vaporization_enthalpy", set()).add("l-g")
    for cas in hf.index[hf["Hfus"].notna()]:
        out.setdefault(str(cas), {}).setdefault("fusion_enthalpy", set()).add("s-l")
    return out


def _tb(cas):
    import chemicals.phase_change as pc

    for m in ("CRC_ORG", "CRC_INORG"):
        try:
            v = pc.Tb(cas, method=m)
        except Exception:
            v = None
        if v:
            return float(v)
    return _get(_latent()[0], cas, "Tb")


def _tm(cas):
    import chemicals.phase_change as pc

    for m in ("CRC_ORG", "CRC_INORG"):
        try:
            v = pc.Tm(cas, method=m)
        except Exception:
            v = None
        if v:
            return float(v)
    return None


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    src = info()
    if quantity in _STD and phase in ("s", "l", "g"):
        v = _get(standard_table(), cas, f"{_STD[quantity]}{phase}")
        return None if v is None else ScalarCandidate(src, quantity, phase, cas, v, T_REF)
    if quantity == "boiling_temperature" and phase == "l-g":
        v = _tb(cas)
        return None if v is None else ScalarCandidate(src, quantity, phase, cas, v, None)
    if quantity == "melting_temperature" and phase == "s-l":
        v = _tm(cas)
        return None if v is None else ScalarCandidate(src, quantity, phase, cas, v, None)
    if quantity == "fusion_enthalpy" and phase == "s-l":
        v = _get(_latent()[1], cas, "Hfus")
        return None if v is None else ScalarCandidate(src, quantity, phase, cas, v, _tm(cas),
                                                      note="at the melting point")
    if quantity == "vaporization_enthalpy" and phase == "l-g":
        # only at the temperature it is tabulated at (T None: at the normal boiling point)
        hv = _latent()[0]
        tb, h_tb = _get(hv, cas, "Tb"), _get(hv, cas, "HvapTb")
        if h_tb is not None and tb is not None and (T is None or abs(T - tb) < 0.5):
            return ScalarCandidate(src, quantity, phase, cas, h_tb, tb, note=f"at the normal boiling point {tb:g} K")
        h298 = _get(hv, cas, "Hvap298")
        if h298 is not None and T is not None and abs(T - T_REF) < 0.5:
            return ScalarCandidate(src, quantity, phase, cas, h298, T_REF, note="at 298.15 K")
        return None
    return None


def reference_points(cas: str) -> list[tuple[float, float]]:
    """(T, ΔvapH) points tabulated by the CRC (for extrapolation with Watson's relation)."""
    hv = _latent()[0]
    out = []
    tb, h_tb, h298 = _get(hv, cas, "Tb"), _get(hv, cas, "HvapTb"), _get(hv, cas, "Hvap298")
    if tb is not None and h_tb is not None:
        out.append((tb, h_tb))
    if h298 is not None:
        out.append((T_REF, h298))
    return out


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    v = _get(standard_table(), cas, f"Cp{phase}") if phase in ("s", "l", "g") else None
    if v is None:
        return []
    return [CurveCandidate(info(), phase, cas, T_REF, T_REF, lambda T, c=v: np.full_like(np.asarray(T, float), c),
                           form="CRC Cp at 298.15 K", native=None, note=f"{v:g} J/(mol*K) at 298.15 K only")]
