"""NIST Chemistry WebBook Shomate coefficients: Cp(T) of gases, liquids and solids.

Owns the WebBook Shomate equations shipped by ``chemicals`` (all ranges of each species and
phase). chemicals stores them scaled for T in K (A, B/10³, C/10⁶, D/10⁹, E·10⁶); they are
converted back to the NIST form with t = T/1000 K.

Source: NIST Chemistry WebBook, NIST Standard Reference Database 69, P. J. Linstrom and
W. G. Mallard (eds.), doi:10.18434/T4M88Q (Shomate equation parameters; most gas-phase
entries derive from the JANAF tables, M. W. Chase 1998).

Uncertainty: none stated.
"""

from __future__ import annotations

import functools

from .candidates import CurveCandidate, SourceInfo, shomate_eval

__all__ = ["info", "table", "si_to_nist", "curves", "catalog"]

_IDX = {"s": 0, "l": 1, "g": 2}


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("shomate", "NIST Chemistry WebBook Shomate coefficients", "NIST SRD 69",
                      "NIST Chemistry WebBook, NIST Standard Reference Database 69, doi:10.18434/T4M88Q",
                      "evaluated", "no uncertainty stated")


def si_to_nist(c) -> list[float]:
    """chemicals' Shomate coefficients for T in K -> NIST form for t = T/1000 K."""
    A, B, C, D, E = map(float, c)
    return [A, B * 1e3, C * 1e6, D * 1e9, E / 1e6]


@functools.lru_cache(maxsize=1)
def table() -> dict:
    """{phase: {cas: [(lo, hi, [A..E] NIST form), ...]}}."""
    from chemicals import heat_capacity as hc

    out: dict = {"s": {}, "l": {}, "g": {}}
    for cas, v in hc.WebBook_Shomate_coefficients.items():
        for ph, i in _IDX.items():
            if v[i] is not None:
                out[ph][cas] = sorted(((float(r[0]), float(r[1]), si_to_nist(r[2:7])) for r in v[i]),
                                      key=lambda r: r[0])
    return out


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    for ph, d in table().items():
        for cas in d:
            out.setdefault(cas, {}).setdefault("heat_capacity", set()).add(ph)
    return out


def scalar(cas, quantity, phase, T=None):
    return None


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    ranges = table().get(phase, {}).get(cas)
    if not ranges:
        return []
    return [CurveCandidate(info(), phase, cas, ranges[0][0], ranges[-1][1],
                           lambda T, r=ranges: shomate_eval(r, T), form="NIST WebBook Shomate equation",
                           native=ranges, note=", ".join(f"{lo:g}-{hi:g} K" for lo, hi, _ in ranges))]
