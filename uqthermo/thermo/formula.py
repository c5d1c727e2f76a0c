"""Chemical formulas: element counts and charge numbers.

:func:`parse_formula` reads a formula such as ``"CH3COOH"``, ``"CuSO4·5H2O"``, ``"[Fe(CN)6]4-"``
or ``"H2O(g)"`` into element counts (used for element balances and molar masses);
:func:`formula_charge` reads its trailing charge. Element symbols are those of the IUPAC
periodic table (plus ``D`` for deuterium). No physics and no I/O: the modules of reactions
(:mod:`uqthermo.thermo.reaction`), species and molar masses build on it.
"""

from __future__ import annotations

import re

from ..errors import PhysicsError

__all__ = ["parse_formula", "formula_charge", "STATE_SUFFIX_RE"]

_ELEMENTS = frozenset("""
H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se Br Kr
Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb Dy Ho Er Tm Yb
Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm Bk Cf Es Fm Md No Lr Rf
Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og D
""".split())

_HYDRATE_DOTS = "·•∙⋅*"
STATE_SUFFIX_RE = re.compile(r"\s*\(([a-z][a-z0-9,]*)\)\s*$")
_CHARGE_RE = re.compile(r"(?:\^((?:\d+\.?\d*|\.\d+)?)([+-])|\^?([+-])((?:\d+\.?\d*|\.\d+)?)|\^([+-]+)|([+-]{2,}))$")
_NUM_RE = re.compile(r"\d+(?:\.\d+)?|\.\d+")
_OPEN = {"(": ")", "[": "]", "{": "}"}


def _split_charge(formula: str) -> tuple[str, float]:
    """Strip an optional trailing charge: ``+``, ``-``, ``+2``, ``-2``, ``^2+``, ``^2-``, ``++``, ``[...]4-``."""
    mb = re.search(r"\](\d+)([+-])$", formula)  # complex-ion convention: [Fe(CN)6]4-
    if mb:
        return formula[:mb.start() + 1], (1.0 if mb.group(2) == "+" else -1.0) * float(mb.group(1))
    m = _CHARGE_RE.search(formula)
    if not m or m.start() == 0:
        return formula, 0.0
    g = m.groups()
    if g[1]:  # ^N+
        mag = float(g[0]) if g[0] else 1.0
        sign = 1.0 if g[1] == "+" else -1.0
    elif g[2]:  # +N
        mag = float(g[3]) if g[3] else 1.0
        sign = 1.0 if g[2] == "+" else -1.0
    else:  # ++ / ^++
        s = g[4] or g[5]
        if len(set(s)) != 1:
            raise PhysicsError(f"formula '{formula}': cannot read the charge '{s}'")
        mag, sign = float(len(s)), 1.0 if s[0] == "+" else -1.0
    return formula[:m.start()], sign * mag


def _parse_group(text: str, pos: int, closer: str | None, whole: str) -> tuple[dict[str, float], int]:
    counts: dict[str, float] = {}
    while pos < len(text):
        ch = text[pos]
        if closer is not None and ch == closer:
            return counts, pos + 1
        if ch in _OPEN:
            inner, pos = _parse_group(text, pos + 1, _OPEN[ch], whole)
            if not inner:
                raise PhysicsError(f"formula '{whole}': empty group")
            mult = 1.0
            m = _NUM_RE.match(text, pos)
            if m:
                mult, pos = float(m.group()), m.end()
            for el, n in inner.items():
                counts[el] = counts.get(el, 0.0) + n * mult
            continue
        if ch.isupper():
            sym = ch
            if pos + 1 < len(text) and text[pos + 1].islower():
                sym = text[pos:pos + 2]
            if sym not in _ELEMENTS and len(sym) == 2 and ch in _ELEMENTS:
                sym = ch
            if sym not in _ELEMENTS:
                raise PhysicsError(f"formula '{whole}': unknown element '{sym}'")
            pos += len(sym)
            n = 1.0
            m = _NUM_RE.match(text, pos)
            if m:
                n, pos = float(m.group()), m.end()
            counts[sym] = counts.get(sym, 0.0) + n
            continue
        if ch in ")]}":
            raise PhysicsError(f"formula '{whole}': unmatched '{ch}'")
        raise PhysicsError(f"formula '{whole}': unexpected character '{ch}'")
    if closer is not None:
        raise PhysicsError(f"formula '{whole}': missing '{closer}'")
    return counts, pos


def _clean_formula(formula: str) -> str:
    if not isinstance(formula, str) or not formula.strip():
        raise PhysicsError(f"formula must be a non-empty string (got {formula!r})")
    f = formula.strip()
    m = STATE_SUFFIX_RE.search(f)
    if m and m.start() > 0:
        f = f[:m.start()]
    return f.replace(" ", "")


def parse_formula(formula: str) -> dict[str, float]:
    """Element counts of a chemical formula.

    Supports nested groups ``()``, ``[]``, ``{}`` with multipliers, fractional counts
    (``Fe0.947O``), hydrates joined by ``·`` or ``*`` with a leading multiplier
    (``CuSO4·5H2O``), an optional trailing charge (``SO4^2-``, ``NH4+``, ``Fe+3``; see
    :func:`formula_charge`) and an optional trailing state symbol (``(g)``).

    Examples
    --------
    >>> parse_formula("CH3COOH")
    {'C': 2.0, 'H': 4.0, 'O': 2.0}

    Raises
    ------
    PhysicsError
        For an unreadable formula or an unknown element symbol.
    """
    f, _ = _split_charge(_clean_formula(formula))
    parts = re.split(f"[{re.escape(_HYDRATE_DOTS)}]", f)
    total: dict[str, float] = {}
    for i, part in enumerate(parts):
        if not part:
            raise PhysicsError(f"formula '{formula}': empty part around a hydrate dot")
        mult = 1.0
        m = _NUM_RE.match(part)
        if m:
            if i == 0:
                raise PhysicsError(f"formula '{formula}' starts with a number")
            mult, part = float(m.group()), part[m.end():]
        counts, _ = _parse_group(part, 0, None, formula)
        if not counts:
            raise PhysicsError(f"formula '{formula}' contains no elements")
        for el, n in counts.items():
            total[el] = total.get(el, 0.0) + n * mult
    return {el: n for el, n in total.items() if n != 0.0}


def formula_charge(formula: str) -> float:
    """Charge number of a formula written with a trailing charge (``"SO4^2-"`` -> -2, ``"Na+"`` -> 1).

    Forms: ``+``/``-`` (one unit), ``+N``/``-N``, ``^N+``/``^N-``, ``++`` and ``[...]N-`` after a
    square bracket (complex ions). Note that ``"Fe3+"``
    reads as Fe3 with charge +1: write ``"Fe+3"`` or ``"Fe^3+"`` for the trivalent ion.
    """
    return _split_charge(_clean_formula(formula))[1]
