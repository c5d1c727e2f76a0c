"""Zabransky et al.: critically evaluated heat capacities of liquids.

Owns the recommended liquid heat-capacity equations shipped by ``chemicals`` (file
``Zabransky.tsv``, read here directly because chemicals' objects drop the uncertainty class):
cubic splines in T/100 K and quasi-polynomials in the reduced temperature, for isobaric heat
capacities (``p``), heat capacities along saturation (``sat``) and less rigorous averaged values
(``C``), each piece with its validity range and uncertainty class I-VI::

    spline:            Cp/R = A1 + A2 (T/100) + A3 (T/100)² + A4 (T/100)³   (exact in Shomate form)
    quasi-polynomial:  Cp/R = A1 ln(1 - Tr) + A2/(1 - Tr) + A3 + A4 Tr + A5 Tr² + A6 Tr³,  Tr = T/Tc

Sources: M. Zabransky, V. Ruzicka Jr., V. Majer, E. S. Domalski, Heat Capacity of Liquids:
Critical Review and Recommended Values, J. Phys. Chem. Ref. Data Monograph 6 (1996);
M. Zabransky, V. Ruzicka Jr., E. S. Domalski, J. Phys. Chem. Ref. Data 30 (2001) 1199.

Uncertainty: each recommended piece carries a class I (best) to VI. The class limits are given in
the monograph's introduction; uqthermo reads the classes as relative standard uncertainties
I 0.1 %, II 0.3 %, III 1 %, IV 3 %, V 5 %, VI 10 % (a ladder recalled from memory of the
monograph, not checked against it here; therefore flagged as assumed). Over a temperature window
the worst class of the pieces it touches applies.
"""

from __future__ import annotations

import functools

import numpy as np

from .base import nan_to_none
from .candidates import CurveCandidate, SourceInfo

__all__ = ["info", "curves", "catalog", "scalar", "CLASS_RELATIVE_U", "pieces"]

CLASS_RELATIVE_U = {"I": 0.001, "II": 0.003, "III": 0.01, "IV": 0.03, "V": 0.05, "VI": 0.10}
_TYPES = (("p", "isobaric"), ("sat", "along saturation"), ("C", "averaged"))


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("Zabransky", "Zabransky et al., Heat Capacity of Liquids", "1996/2001",
                      "M. Zabransky, V. Ruzicka, V. Majer, E. S. Domalski, J. Phys. Chem. Ref. Data Monograph 6 "
                      "(1996); J. Phys. Chem. Ref. Data 30 (2001) 1199", "evaluated",
                      "uncertainty class I-VI per equation (read as relative u, see module docs; assumed)")


@functools.lru_cache(maxsize=1)
def pieces() -> dict:
    """{cas: [(type, "spline"|"quasi", class, Tmin, Tmax, coefficients, Tc), ...]}."""
    import os

    import chemicals.heat_capacity as hc

    path = os.path.join(hc.folder, "Zabransky.tsv")
    out: dict = {}
    with open(path, encoding="utf-8") as f:
        next(f)
        for line in f:
            v = line.rstrip("\n").split("\t")
            if len(v) < 17 or not v[0] or v[0] == "None":
                continue
            cas, typ, cls = v[0].strip(), v[2].strip(), v[3].strip()
            nums = [nan_to_none(x) if x.strip() else None for x in v[4:17]]
            tmin, tmax = nums[0], nums[1]
            spline = [x or 0.0 for x in nums[2:6]]
            quasi = [x or 0.0 for x in nums[6:12]]
            tc = nums[12]
            if tmin is None or tmax is None:
                continue
            if any(spline):
                out.setdefault(cas, []).append((typ, "spline", cls, tmin, tmax, spline, None))
            elif tc:
                out.setdefault(cas, []).append((typ, "quasi", cls, tmin, tmax, quasi, tc))
    return out


def catalog() -> dict[str, dict[str, set]]:
    return {c: {"heat_capacity": {"l"}} for c in pieces()}


def scalar(cas, quantity, phase, T=None):
    return None


def _spline_shomate(a, R):
    # Cp = R (A1 + A2 x + A3 x² + A4 x³), x = T/100 = 10 t
    return [R * a[0], R * a[1] * 10.0, R * a[2] * 100.0, R * a[3] * 1000.0, 0.0]


def _quasi(T, a, tc, R):
    T = np.asarray(T, dtype=float)
    tr = np.minimum(T / tc, 1.0 - 1e-12)
    return R * (a[0] * np.log(1.0 - tr) + a[1] / (1.0 - tr) + a[2] + tr * (tr * (tr * a[5] + a[4]) + a[3]))


def _class_u(classes) -> tuple[float, str]:
    worst = max(classes, key=lambda c: CLASS_RELATIVE_U.get(c, 0.10))
    return CLASS_RELATIVE_U.get(worst, 0.10), worst


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    if phase != "l" or cas not in pieces():
        return []
    from chemicals.heat_capacity import R

    from .candidates import shomate_eval

    out = []
    rows = pieces()[cas]
    for typ, label in _TYPES:
        spl = sorted((r for r in rows if r[0] == typ and r[1] == "spline"), key=lambda r: r[3])
        # contiguous blocks of spline pieces
        blocks, cur = [], []
        for r in spl:
            if cur and abs(r[3] - cur[-1][4]) > 1e-6:
                blocks.append(cur)
                cur = []
            cur.append(r)
        if cur:
            blocks.append(cur)
        for blk in blocks:
            ranges = [(r[3], r[4], _spline_shomate(r[5], R)) for r in blk]
            classes = [(r[3], r[4], r[2]) for r in blk]
            u, worst = _class_u([c for _, _, c in classes])
            out.append(CurveCandidate(
                info(), "l", cas, ranges[0][0], ranges[-1][1], lambda T, rr=ranges: shomate_eval(rr, T),
                form=f"Zabransky cubic spline ({label})", native=ranges, relative_u=u, u_basis="class",
                u_note="class " + ", ".join(f"{c} ({lo:g}-{hi:g} K)" for lo, hi, c in classes),
                note="; ".join(f"{lo:g}-{hi:g} K class {c}" for lo, hi, c in classes)))
        for r in rows:
            if r[0] == typ and r[1] == "quasi":
                _, _, cls, lo, hi, a, tc = r
                out.append(CurveCandidate(
                    info(), "l", cas, lo, hi, lambda T, a=a, tc=tc: _quasi(T, a, tc, R),
                    form=f"Zabransky quasi-polynomial ({label})", relative_u=CLASS_RELATIVE_U.get(cls, 0.10),
                    u_basis="class", u_note=f"class {cls}", note=f"{lo:g}-{hi:g} K class {cls}, Tc = {tc:g} K"))
    return out


def window_class_u(c: CurveCandidate, lo: float, hi: float) -> float:
    """Relative u of a Zabransky spline candidate over [lo, hi]: the worst class touched."""
    if not c.native or "class" not in c.u_note:
        return c.relative_u or 0.0
    import re

    worst = 0.0
    for m in re.finditer(r"class (\w+) \(([\d.]+)-([\d.]+) K\)", c.u_note):
        a, b = float(m.group(2)), float(m.group(3))
        if b >= lo - 1e-9 and a <= hi + 1e-9:
            worst = max(worst, CLASS_RELATIVE_U.get(m.group(1), 0.10))
    return worst or (c.relative_u or 0.0)



