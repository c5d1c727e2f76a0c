"""Vapour pressures of pure liquids from the correlation tables shipped with ``chemicals``.

Used only to say, in a warning, roughly what pressure a liquid held above its normal boiling
point needs (:mod:`uqthermo.case.readers.boiling_points`); no vapour pressure enters a result.
The first table that has the species and covers the temperature is used:

``Wagner (McGarry)``
    The original Wagner equation, valid from the table's Tmin up to the critical point::

        ln(P/Pc) = (a τ + b τ^1.5 + c τ³ + d τ⁶) / Tr,   τ = 1 − Tr,   Tr = T/Tc

    J. McGarry, Ind. Eng. Chem. Process Des. Dev. 22 (1983) 313 (``Psat_data_WagnerMcGarry``).
``Perry-DIPPR 101``
    DIPPR equation 101, ln(P/Pa) = C1 + C2/T + C3 ln T + C4 T^C5, over the table's range:
    D. W. Green, R. H. Perry, Perry's Chemical Engineers' Handbook, 8th ed., McGraw-Hill (2008),
    Table 2-8 (``Psat_data_Perrys2_8``).
``Antoine (Poling)``
    log10(P/Pa) = A − B/(T + C) over the table's range (coefficients converted to Pa and K by
    ``chemicals``): B. E. Poling, J. M. Prausnitz, J. P. O'Connell, The Properties of Gases and
    Liquids, 5th ed., McGraw-Hill (2001), Appendix A (``Psat_data_AntoinePoling``).

Uncertainty: none is stated by these tables; the value is shown as "about" and rounded to two
significant digits.
"""

from __future__ import annotations

import functools
import math

__all__ = ["vapour_pressure"]


@functools.lru_cache(maxsize=1)
def _tables():
    import chemicals.vapor_pressure as vp

    return vp.Psat_data_WagnerMcGarry, vp.Psat_data_Perrys2_8, vp.Psat_data_AntoinePoling


def _wagner(T: float, r) -> float | None:
    """Original Wagner equation (McGarry 1983): P in Pa; None outside Tmin..Tc."""
    tc, pc = float(r["Tc"]), float(r["Pc"])
    if not (float(r["Tmin"]) <= T < tc):
        return None
    tr = T / tc
    tau = 1.0 - tr
    return pc * math.exp((r["A"] * tau + r["B"] * tau ** 1.5 + r["C"] * tau ** 3 + r["D"] * tau ** 6) / tr)


def _dippr101(T: float, r) -> float | None:
    """DIPPR equation 101 (Perry's Table 2-8): P in Pa; None outside Tmin..Tmax."""
    if not (float(r["Tmin"]) <= T <= float(r["Tmax"])):
        return None
    return math.exp(r["C1"] + r["C2"] / T + r["C3"] * math.log(T) + r["C4"] * T ** r["C5"])


def _antoine(T: float, r) -> float | None:
    """Antoine equation (Poling's Appendix A, in Pa and K as converted by chemicals); None outside its range."""
    if not (float(r["Tmin"]) <= T <= float(r["Tmax"])):
        return None
    return 10.0 ** (r["A"] - r["B"] / (T + r["C"]))


def vapour_pressure(cas: str, T: float) -> tuple[float, str] | None:
    """Vapour pressure of the pure liquid ``cas`` at ``T`` (K): ``(P in Pa, source label)``, or None.

    The Wagner equation of McGarry (1983) first, then Perry's DIPPR 101 (Table 2-8), then Poling's
    Antoine coefficients — the first whose table has the species and whose range holds ``T``
    (see the module docstring for the equations and sources).
    """
    if not cas:
        return None
    try:
        wagner, perry, antoine = _tables()
    except Exception:     # pragma: no cover - chemicals is a dependency
        return None
    for table, fn, label in ((wagner, _wagner, "the Wagner equation of McGarry (1983)"),
                             (perry, _dippr101, "DIPPR 101 of Perry's Handbook Table 2-8"),
                             (antoine, _antoine, "the Antoine equation of Poling et al. (2001)")):
        if cas in table.index:
            try:
                p = fn(float(T), table.loc[cas])
            except (TypeError, ValueError, OverflowError):
                p = None
            if p is not None and math.isfinite(p) and p > 0:
                return float(p), label
    return None
