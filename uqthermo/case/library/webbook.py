"""NIST Chemistry WebBook constants: ΔfH°, S°, phase-change temperatures and enthalpies.

Owns the WebBook constants table shipped by ``chemicals`` (``webbook_constants.tsv``): standard
formation enthalpies and entropies at 298.15 K of solids, liquids and gases, normal boiling and
melting points, ΔvapH° at 298.15 K and ΔfusH.

Source: NIST Chemistry WebBook, NIST Standard Reference Database 69, P. J. Linstrom and
W. G. Mallard (eds.), doi:10.18434/T4M88Q (values as collected by the chemicals package).

Uncertainty: the WebBook pages give ± for many values, but the collected table carries none.
"""

from __future__ import annotations

import functools

from .base import T_REF, nan_to_none
from .candidates import ScalarCandidate, SourceInfo

__all__ = ["info", "scalar", "catalog", "curves"]

_COL = {("formation_enthalpy", "s"): "Hfs", ("formation_enthalpy", "l"): "Hfl", ("formation_enthalpy", "g"): "Hfg",
        ("standard_entropy", "s"): "S0s", ("standard_entropy", "l"): "S0l", ("standard_entropy", "g"): "S0g",
        ("boiling_temperature", "l-g"): "Tb", ("melting_temperature", "s-l"): "Tm",
        ("fusion_enthalpy", "s-l"): "Hfus"}


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("WebBook", "NIST Chemistry WebBook constants", "NIST SRD 69",
                      "NIST Chemistry WebBook, NIST Standard Reference Database 69, doi:10.18434/T4M88Q",
                      "evaluated", "± values of the WebBook pages are not in the collected table")


@functools.lru_cache(maxsize=1)
def _table():
    from chemicals import miscdata

    return miscdata.webbook_data


@functools.lru_cache(maxsize=1)
def _thermo_columns() -> dict:
    """{column: {cas: value}} for the columns used (dense dicts; the table is sparse)."""
    from chemicals.identifiers import int_to_CAS

    df = _table()
    out = {}
    for col in set(_COL.values()) | {"Hvap"}:
        s = df[col].sparse.to_dense() if hasattr(df[col], "sparse") else df[col]
        s = s[s.notna()]
        out[col] = {int_to_CAS(int(i)): float(v) for i, v in s.items()}
    return out


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    cols = _thermo_columns()
    for (q, ph), col in _COL.items():
        if q in ("boiling_temperature", "melting_temperature"):
            continue          # temperatures alone do not make a species worth indexing
        for cas in cols[col]:
            out.setdefault(cas, {}).setdefault(q, set()).add(ph)
    return out


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    cols = _thermo_columns()
    if quantity == "vaporization_enthalpy":
        v = cols["Hvap"].get(cas)
        if v is None or T is None or abs(T - T_REF) > 0.5:
            return None
        return ScalarCandidate(info(), quantity, phase, cas, v, T_REF, note="ΔvapH° at 298.15 K")
    col = _COL.get((quantity, phase))
    if col is None:
        return None
    v = nan_to_none(cols[col].get(cas))
    if v is None:
        return None
    t = T_REF if quantity in ("formation_enthalpy", "standard_entropy") else None
    return ScalarCandidate(info(), quantity, phase, cas, v, t)


def reference_points(cas: str) -> list[tuple[float, float]]:
    v = _thermo_columns()["Hvap"].get(cas)
    return [] if v is None else [(T_REF, v)]


def curves(cas, phase):
    return []
