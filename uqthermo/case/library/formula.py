"""Chemical formulas: Hill order, phase suffixes, CAS-number syntax.

Owns the parsing of formulas written in case files and in the datasets (``CH3C(O)OH``,
``CuSO4.5H2O``, ``[CN]-``, ``H2O (g)``) and their normalisation to Hill order
(E. A. Hill, J. Am. Chem. Soc. 22 (1900) 478-494), which is how species are matched by formula
across the data sources.
"""

from __future__ import annotations

import re

__all__ = ["hill_formula", "try_hill", "split_phase", "CAS_RE", "element_counts"]

_ELEMENTS = set(
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se "
    "Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb "
    "Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm "
    "Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og D".split()
)
_PHASE_SUFFIX = re.compile(r"\s*\(([a-z]{1,3}(?:,[^()]*)?)\)\s*$")
_CAS = re.compile(r"^\d{2,7}-\d{2}-\d$")
_TOKEN = re.compile(r"([A-Z][a-z]?)|(\()|(\))|(\[)|(\])|(\d+(?:\.\d+)?)")


def _split_phase(text: str) -> tuple[str, str | None]:
    m = _PHASE_SUFFIX.search(text)
    if m:
        return text[: m.start()].strip(), m.group(1).split(",")[0]
    return text.strip(), None


def _parse_counts(s: str) -> dict[str, float]:
    stack: list[dict[str, float]] = [{}]
    closers: list[str] = []
    pos = 0
    last: dict[str, float] | str | None = None
    while pos < len(s):
        m = _TOKEN.match(s, pos)
        if not m:
            raise ValueError(f"unexpected {s[pos]!r}")
        el, op, cp, ob, cb, num = m.groups()
        pos = m.end()
        if el:
            if el not in _ELEMENTS:
                raise ValueError(f"unknown element {el!r}")
            stack[-1][el] = stack[-1].get(el, 0.0) + 1.0
            last = el
        elif op or ob:
            stack.append({})
            closers.append(")" if op else "]")
            last = None
        elif cp or cb:
            if not closers or closers.pop() != (")" if cp else "]"):
                raise ValueError("unbalanced brackets")
            grp = stack.pop()
            for k, v in grp.items():
                stack[-1][k] = stack[-1].get(k, 0.0) + v
            last = grp
        else:
            n = float(num)
            if isinstance(last, str):
                stack[-1][last] += n - 1.0
            elif isinstance(last, dict):
                for k, v in last.items():
                    stack[-1][k] += v * (n - 1.0)
            else:
                raise ValueError("count without an element or group")
            last = None
    if closers:
        raise ValueError("unbalanced brackets")
    return stack[0]


def _parse_formula(text: str) -> tuple[dict[str, float], int]:
    s = text.strip().replace(" ", "")
    charge = 0
    # Trailing charge: "+2"/"-2" after the formula (ATcT "[He]+2"), or a bare sign ("CN-",
    # "O2-": the digits before a bare sign are the atom count, charge 1).
    m = re.search(r"([+-])(\d+)$", s)
    if m and m.start() > 0:
        charge = int(m.group(2)) * (1 if m.group(1) == "+" else -1)
        s = s[: m.start()]
    else:
        m = re.search(r"[+-]$", s)
        if m and m.start() > 0:
            charge = 1 if m.group(0) == "+" else -1
            s = s[: m.start()]
    counts: dict[str, float] = {}
    parts = re.split(r"[.·*]", s)
    for part in parts:
        if not part:
            raise ValueError("empty formula part")
        mult = 1.0
        mm = re.match(r"^(\d+(?:\.\d+)?)(?=[A-Z(\[])", part)
        if mm and len(parts) > 1:
            mult = float(mm.group(1))
            part = part[mm.end():]
        for k, v in _parse_counts(part).items():
            counts[k] = counts.get(k, 0.0) + mult * v
    if not counts:
        raise ValueError("no elements")
    return counts, charge


def _fmt_count(v: float) -> str:
    if abs(v - 1.0) < 1e-12:
        return ""
    if abs(v - round(v)) < 1e-9:
        return str(int(round(v)))
    return f"{v:g}"


def hill_formula(text: str) -> str:
    """Normalise a chemical formula to Hill order.

    Hill system (E. A. Hill, J. Am. Chem. Soc. 22 (1900) 478-494): with carbon present, C first,
    then H, then the other elements alphabetically; without carbon, all elements alphabetically.
    Groups in parentheses/brackets, counts, hydrate dots (``CuSO4.5H2O``) and a trailing phase
    suffix (``(g)``) are accepted; a trailing charge is kept as ``+``/``-``/``+2``...

    Parameters
    ----------
    text : str
        e.g. ``"CH3C(O)OH"``, ``"[CN]-"``, ``"H2O (g)"``.

    Returns
    -------
    str
        e.g. ``"C2H4O2"``, ``"CN-"``, ``"H2O"``.

    Raises
    ------
    ValueError
        Text that is not a formula.
    """
    body, _ = _split_phase(text)
    counts, charge = _parse_formula(body)
    counts = {k: v for k, v in counts.items() if abs(v) > 1e-12}
    if "C" in counts:
        order = ["C"] + (["H"] if "H" in counts else []) + sorted(k for k in counts if k not in ("C", "H"))
    else:
        order = sorted(counts)
    out = "".join(f"{k}{_fmt_count(counts[k])}" for k in order)
    if charge:
        out += ("+" if charge > 0 else "-") + (str(abs(charge)) if abs(charge) != 1 else "")
    return out


def _try_hill(text) -> str | None:
    if not isinstance(text, str) or not text.strip():
        return None
    try:
        return hill_formula(text)
    except (ValueError, KeyError, IndexError):
        return None



# public names for the other library modules
split_phase = _split_phase
try_hill = _try_hill
CAS_RE = _CAS


def element_counts(text: str) -> dict[str, float]:
    """Element counts of a formula (charge dropped), e.g. ``{"C": 7.0, "H": 8.0}``.

    Raises
    ------
    ValueError
        Text that is not a formula.
    """
    body, _ = _split_phase(text)
    counts, _charge = _parse_formula(body)
    return {k: v for k, v in counts.items() if abs(v) > 1e-12}
