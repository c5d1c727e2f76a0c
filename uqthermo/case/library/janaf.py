"""NIST-JANAF Thermochemical Tables (4th edition, 1998): standard values and Cp tables.

Owns the JANAF data shipped by ``chemicals``: formation enthalpies, Gibbs energies of formation
and standard entropies at 298.15 K (gas and liquid) and the tabulated Cp(T) of gases, liquids and
solids.

Source: M. W. Chase Jr., NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. Ref. Data
Monograph 9 (1998).

Uncertainty: the printed tables give uncertainties for many entries, but the copy shipped by
chemicals carries none; the selection rules (:mod:`.uncertainty`) therefore use the spread of
the other sources or an assumed value, and say so. chemicals' copy also lacks the reference
elements' tables (H2, O2, N2 ...): those come from :mod:`.codata`.

Cp tables are interpolated by a cubic spline through the tabulated points (for comparing sources)
and represented in Shomate form piecewise (:func:`.candidates.shomate_representation`).
"""

from __future__ import annotations

import functools

import numpy as np

from .base import T_REF, nan_to_none
from .candidates import CurveCandidate, ScalarCandidate, SourceInfo

__all__ = ["info", "table", "cp_tables", "scalar", "curves", "catalog"]

_Q = {"formation_enthalpy": "Hf", "formation_gibbs_energy": "Gf", "standard_entropy": "S0"}


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo(
        "JANAF", "NIST-JANAF Thermochemical Tables", "4th edition (1998)",
        "M. W. Chase, NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. Ref. Data Monograph 9 (1998)",
        "evaluated", "no uncertainties in the chemicals copy of the tables")


@functools.lru_cache(maxsize=1)
def table() -> dict:
    """{quantity: {phase: {cas: value}}} at 298.15 K plus ``"_meta"``: {cas: (name, formula)}."""
    import chemicals.reaction  # noqa: F401  (registers the data files)
    from chemicals.data_reader import data_source

    df = data_source("JANAF_1998.tsv")
    out: dict = {q: {"g": {}, "l": {}} for q in _Q}
    meta = {}
    for cas, row in zip(df.index, df.itertuples(index=False)):
        r = row._asdict()
        cas = str(cas)
        name = r.get("Chemical") if isinstance(r.get("Chemical"), str) else None
        form = r.get("formula") if isinstance(r.get("formula"), str) else None
        meta[cas] = (name, form)
        for q, stem in _Q.items():
            for ph in ("g", "l"):
                v = nan_to_none(r.get(f"{stem}{ph}"))
                if v is not None:
                    out[q][ph][cas] = v
    out["_meta"] = meta
    return out


@functools.lru_cache(maxsize=1)
def cp_tables() -> dict:
    """{phase: {cas: (T array K, Cp array J/(mol K))}} (JANAF 1998 via chemicals)."""
    from chemicals import heat_capacity as hc

    out = {}
    for ph, d in (("g", hc.Cp_dict_JANAF_gas), ("l", hc.Cp_dict_JANAF_liquid), ("s", hc.Cp_dict_JANAF_solid)):
        out[ph] = d
    return out


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    t = table()
    for q in _Q:
        for ph, d in t[q].items():
            for cas in d:
                out.setdefault(cas, {}).setdefault(q, set()).add(ph)
    for ph, d in cp_tables().items():
        for cas in d:
            out.setdefault(cas, {}).setdefault("heat_capacity", set()).add(ph)
    return out


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    if quantity not in _Q:
        return None
    v = table()[quantity].get(phase, {}).get(cas)
    if v is None:
        return None
    return ScalarCandidate(info(), quantity, phase, cas, v, T_REF)


def _points(cas: str, phase: str):
    raw = cp_tables().get(phase, {}).get(cas)
    if raw is None:
        return None
    T, cp = (np.asarray(v, dtype=float) for v in raw)
    keep = np.isfinite(T) & np.isfinite(cp) & (cp > 0) & (T >= (100.0 if phase == "g" else 0.0))
    T, cp = T[keep], cp[keep]
    order = np.argsort(T)
    T, cp = T[order], cp[order]
    T, idx = np.unique(T, return_index=True)
    cp = cp[idx]
    if len(T) < 4:
        return None
    return T, cp


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    pts = _points(cas, phase)
    if pts is None:
        return []
    T, cp = pts
    from scipy.interpolate import CubicSpline

    spline = CubicSpline(T, cp, extrapolate=True)
    return [CurveCandidate(
        info(), phase, cas, float(T[0]), float(T[-1]), lambda x, s=spline: s(x),
        form=f"JANAF 1998 Cp table ({len(T)} points, cubic spline through them)",
        note=f"tabulated {T[0]:g}-{T[-1]:g} K")]
