"""The field parsers every case-file section reader shares, and the collector of problems.

What a reader needs to read one key: :class:`Collector` (records one problem per defect, with
its key path, and the warnings), the parsers of a quantity with units (:func:`read_quantity`,
:func:`read_temperature`, :func:`read_percent`), of an uncertain quantity (:func:`read_uncertain`,
contract §2), of a name (:func:`check_name`) and of a matrix (:func:`matrix`), and the making
and registering of a datum (:func:`make_datum`, :func:`register`, :func:`report_unit`). The
section readers of this package and :mod:`uqthermo.case.loader` import it; it imports none of them.
"""

from __future__ import annotations

import difflib
import math
import re
from typing import Any

import numpy as np

from ...errors import InputError, Problem, UqthermoError
from ..limits import MAX_NAME_LENGTH, short_key
from ..schema import Datum
from ..units import DIMENSIONS, MissingUnit, UnitProblem, parse_quantity
from . import distributions as dist

__all__ = ["Collector", "PHASE_SYMBOLS", "PHASE_ALIASES", "QUANTITY_KEYS", "DISTRIBUTIONS", "CP_MODELS", "POLY_TERMS",
           "POLY_POWERS", "MASS_OF", "is_table", "read_quantity", "read_temperature", "read_percent",
           "fraction_value", "read_fraction", "read_uncertain", "outside_bounds_warning", "OUTSIDE_WARN", "check_name", "report_unit", "make_datum", "register", "matrix"]

PHASE_SYMBOLS = ("g", "l", "s", "cr", "aq")
PHASE_ALIASES = {"s": "cr", "cr": "s", "c": "cr"}
QUANTITY_KEYS = {"value", "u", "U", "k", "half_width", "distribution", "relative_u", "dof",
                 "lower", "upper", "source", "note", "library", "id", "name"}
DISTRIBUTIONS = ("normal", "rectangular", "uniform", "triangular", "lognormal", "student-t", "truncated-normal")
CP_MODELS = ("constant", "polynomial", "shomate", "nasa7")
POLY_TERMS = ("a", "b", "c", "d", "e")
POLY_POWERS = {"a": 0, "b": 1, "c": 2, "d": 3, "e": -2}

_NAME_RE = re.compile(r"^[A-Za-z][A-Za-z0-9_+\-]*$")


class Collector:
    """Accumulates problems for one file."""

    def __init__(self, file: str):
        self.file = file
        self.problems: list[Problem] = []
        self.warnings: list[str] = []
        self.skipped: set[str] = set()    # keys of items not built because of problems elsewhere

    def add(self, key: str, message: str) -> None:
        self.problems.append(Problem(self.file, key, message))

    def warn(self, key: str, message: str) -> None:
        self.warnings.append(f"{key}: {message}" if key else message)

    def unknown_keys(self, node: dict, allowed, key: str) -> None:
        for k in node:
            if k not in allowed:
                close = difflib.get_close_matches(str(k), list(allowed), n=1)
                hint = f" (did you mean {close[0]!r}?)" if close else f" (allowed: {', '.join(sorted(allowed))})"
                self.add(f"{key}.{k}" if key else str(k), f"unknown key{hint}")

    def has_problem(self, key: str) -> bool:
        """True if a problem was already recorded at ``key`` or below it (to avoid follow-on noise)."""
        return key in self.skipped or any(p.key == key or p.key.startswith((key + ".", key + "["))
                                          for p in self.problems)

    def raise_if_any(self) -> None:
        if self.problems:
            err = InputError(self.problems)
            err.warnings = list(self.warnings)   # shown by `check` beside the problems
            raise err


# ----------------------------------------------------------------------------- helpers

def _fmt(x: float) -> str:
    return f"{x:.6g}"


def is_table(x: Any) -> bool:
    """Whether a TOML value is a table (a dict once parsed)."""
    return isinstance(x, dict)


#: the mass dimension an amount (rate) may be written in, converted with a molar mass
MASS_OF = {"amount": "mass", "amount_rate": "mass_rate"}


def read_quantity(c: Collector, value: Any, key: str, dimension: str, *, difference: bool = False,
              molar_mass: float | str | None = None) -> float | None:
    """Parse ``value`` as ``dimension``; an amount (rate) may also be a mass (rate) when ``molar_mass``
    (kg/mol) is given — a string there is the hint shown when a mass cannot be converted."""
    try:
        return parse_quantity(value, dimension, difference=difference)
    except UnitProblem as e:
        if dimension in MASS_OF and molar_mass is not None:
            try:
                m = parse_quantity(value, MASS_OF[dimension], difference=difference)
            except UnitProblem:
                pass
            else:
                if isinstance(molar_mass, str):
                    c.add(key, f"{value!r} is a mass; {molar_mass}")
                    return None
                return m / molar_mass
        msg = str(e)
        if dimension in MASS_OF and isinstance(molar_mass, (int, float)) and isinstance(e, MissingUnit):
            unit = DIMENSIONS[MASS_OF[dimension]].example.split(",")[0]      # "kg", "kg/h"
            msg += f"; a mass{' flow' if MASS_OF[dimension] == 'mass_rate' else ''} such as \"{value if isinstance(value, (int, float)) else str(value).strip()} {unit}\" is converted with the molar mass"
        c.add(key, msg)
        return None


def read_temperature(c: Collector, value: Any, key: str) -> float | None:
    """Parse an absolute temperature (K); refuse one at or below absolute zero or beyond any data."""
    t = read_quantity(c, value, key, "temperature")
    if t is not None and t <= 0:
        c.add(key, f"temperature {value!r} is at or below absolute zero; give a positive absolute temperature")
        return None
    if t is not None and t > 1e5:
        c.add(key, f"temperature {value!r} is beyond any thermochemical data ({_fmt(t)} K)")
        return None
    return t


def read_percent(c: Collector, value: Any, key: str) -> float | None:
    """Parse a relative uncertainty (``"2 %"`` or 0.02) as a fraction in (0, 1); warn when a plain number
    of 0.05 or more was probably meant in per cent."""
    r = read_quantity(c, value, key, "dimensionless")
    if r is None:
        return None
    if not (r > 0):
        c.add(key, "relative uncertainty must be positive (write the quantity as a plain string to make it exact)")
        return None
    if r >= 1:
        c.add(key, f"relative uncertainty {value!r} is 100 % or more; check the value (e.g. \"2 %\" or 0.02)")
        return None
    if not isinstance(value, str) and r >= 0.05:
        c.warn(key, f"the plain number {value!r} is read as a fraction, {100 * r:g} %; write \"{value!r} %\" if per cent was meant")
    return r


def fraction_value(value: Any) -> float | None:
    """A fraction written as a plain number (0.6) or a percentage string (``"60 %"``, ``"60%"``,
    ``"60 percent"``, ``"0.6"``); None when it is neither (or not finite). Every fraction key of
    the case reads through here, so all of them accept the same forms (docs/case-format.md)."""
    if isinstance(value, bool):
        return None
    if isinstance(value, (int, float)):
        x = float(value)
    elif isinstance(value, str):
        try:
            x = float(parse_quantity(value, "dimensionless"))
        except (UnitProblem, UqthermoError, ValueError):
            return None
    else:
        return None
    return x if math.isfinite(x) else None


def read_fraction(c: Collector, value: Any, key: str, low: float, high: float, *, low_open: bool = False,
                  high_open: bool = False, example: str = "0.6 or \"60 %\"") -> float | None:
    """Parse a fraction (:func:`fraction_value`) within [low, high] (open ends as flagged); record the
    problem and return None otherwise."""
    x = fraction_value(value)
    lo_b, hi_b = ("(" if low_open else "["), (")" if high_open else "]")
    if x is None or (x <= low if low_open else x < low) or (x >= high if high_open else x > high):
        c.add(key, f"must be a fraction in {lo_b}{low:g}, {high:g}{hi_b} (a number or a percentage, e.g. {example}); "
                   f"got {value!r}")
        return None
    return x


_REPORT = {
    "molar_energy": ("kJ/mol", 1e-3),
    "molar_entropy": ("J/(mol*K)", 1.0),
    "temperature": ("K", 1.0),
    "amount": ("mol", 1.0),
    "amount_rate": ("mol/s", 1.0),
    "dimensionless": ("1", 1.0),
    "power": ("kW", 1e-3),
    "energy": ("kJ", 1e-3),
    "specific_energy": ("kJ/kg", 1e-3),
    "pressure": ("kPa", 1e-3),
}


#: probability outside a quantity's physical bounds above which its distribution is warned about
OUTSIDE_WARN = 1e-3


def read_uncertain(c: Collector, node: Any, key: str, dimension: str, *, positive: bool = False,
                   temperature: bool = False, molar_mass: float | str | None = None,
                   user_u: bool = True, bounds: tuple[float, float] | None = None,
                   what: str = "") -> tuple[float, Any, str, str] | None:
    """Read an uncertain quantity: a plain string (exact) or a table (contract §2).

    Returns ``(estimate, distribution, stated, source)`` in engine units, or ``None``
    after recording the problem. ``molar_mass`` (kg/mol): an amount (rate) may be written
    as a mass (rate), e.g. ``"252 kg"`` or ``"900 kg/h"`` (see :func:`read_quantity`).
    ``user_u=False``: the uncertainty was set by the data library, not written by the user, so
    the warning on a u larger than the value (a slip in writing it) does not apply.
    ``bounds`` (engine units): the physical range of the quantity (``what``: its name, e.g. "an
    amount"); a distribution with more than :data:`OUTSIDE_WARN` of its probability outside is
    warned about (the trials draw such values as they are), see :func:`outside_bounds_warning`.
    """
    reader = (lambda v, k: read_temperature(c, v, k)) if temperature else (
        lambda v, k: read_quantity(c, v, k, dimension, molar_mass=molar_mass))
    if not is_table(node):
        v = reader(node, key)
        if v is None:
            return None
        if positive and v <= 0:
            c.add(key, f"must be positive, got {node!r}")
            return None
        return v, dist.exact(v), "exact", ""
    c.unknown_keys(node, QUANTITY_KEYS, key)
    if "value" not in node:
        c.add(key, "missing 'value' (e.g. value = \"1.0 " + {"molar_energy": "kJ/mol", "temperature": "K"}.get(dimension, "unit") + "\")")
        return None
    v = reader(node["value"], f"{key}.value")
    if v is None:
        return None
    if positive and v <= 0:
        c.add(f"{key}.value", f"must be positive, got {node['value']!r}")
        return None
    source = node.get("source", "")
    if not isinstance(source, str):
        c.add(f"{key}.source", "must be a string")
        source = ""
    kinds = [k for k in ("u", "U", "half_width", "relative_u") if k in node]
    if len(kinds) > 1:
        c.add(key, f"give only one of u, U (with k), half_width or relative_u; found {', '.join(kinds)}")
        return None
    dname = node.get("distribution", "normal")
    if not isinstance(dname, str) or dname not in DISTRIBUTIONS:
        c.add(f"{key}.distribution", f"unknown distribution {dname!r}; use one of {', '.join(DISTRIBUTIONS)}")
        return None
    if dname == "uniform":
        dname = "rectangular"
    if not kinds:
        if dname != "normal":
            c.add(key, f"distribution {dname!r} needs an uncertainty (u, U with k, half_width or relative_u)")
            return None
        return v, dist.exact(v), "exact", source

    def _diff(val: Any, k: str) -> float | None:
        # uncertainties are differences: "5 degC" means 5 K
        x = read_quantity(c, val, k, dimension, difference=True, molar_mass=molar_mass)
        if x is None:
            return None
        if not (x > 0):
            c.add(k, "uncertainty must be positive (write the quantity as a plain string to make it exact)")
            return None
        return x

    kind = kinds[0]
    stated = ""
    std = None
    half = None
    if kind == "u":
        std = _diff(node["u"], f"{key}.u")
        stated = f"u = {node['u']}"
    elif kind == "U":
        if "k" not in node:
            c.add(f"{key}.k", "an expanded uncertainty U needs its coverage factor k (e.g. k = 2)")
            return None
        kf = node["k"]
        if isinstance(kf, bool) or not isinstance(kf, (int, float)) or not math.isfinite(kf) or kf <= 0:
            c.add(f"{key}.k", f"coverage factor must be a positive number, got {kf!r}")
            return None
        U = _diff(node["U"], f"{key}.U")
        if U is not None:
            std = U / float(kf)
        stated = f"U = {node['U']} (k = {kf})"
        if kf > 13 or kf < 1:   # t_0.975 with one degree of freedom is 12.7; k < 1 makes U smaller than u
            c.warn(f"{key}.k", f"coverage factor k = {kf:g} is outside anything in use (about 1 to 3; up to 12.7 for a "
                               "95 % t-interval with one degree of freedom); was a confidence level (e.g. 95) or a "
                               f"count written as k? It is used as stated: u = U/k")
    elif kind == "half_width":
        half = _diff(node["half_width"], f"{key}.half_width")
        stated = f"half-width {node['half_width']}"
        if dname not in ("rectangular", "triangular"):
            c.add(f"{key}.distribution", "half_width goes with distribution = \"rectangular\" or \"triangular\"")
            return None
    elif kind == "relative_u":
        r = read_percent(c, node["relative_u"], f"{key}.relative_u")
        if r is not None:
            if v == 0:
                c.add(f"{key}.relative_u", "a relative uncertainty of a zero value is zero; give u instead")
                return None
            std = abs(v) * r
            if temperature and isinstance(node["value"], str) and re.search(r"deg\s*[CF]|°|℃", node["value"]):
                c.warn(f"{key}.relative_u", f"a relative uncertainty of a temperature is taken of the absolute value: "
                                            f"{node['relative_u']} of {_fmt(v)} K = {_fmt(std)} K, not of the "
                                            f"{node['value']!r} number; give u in K if that was meant")
        stated = f"relative u = {node['relative_u']}"
    if std is None and half is None:
        return None
    if kind != "half_width" and dname in ("rectangular", "triangular"):
        # u given with a rectangular/triangular shape: convert to the half-width (GUM 4.3.7, 4.3.9)
        half = std * (math.sqrt(3.0) if dname == "rectangular" else math.sqrt(6.0))
    try:
        if dname == "normal":
            d = dist.normal(v, std)
        elif dname in ("rectangular", "triangular"):
            d = dist.rectangular(v, half) if dname == "rectangular" else dist.triangular(v, half)
        elif dname == "lognormal":
            if v <= 0:
                c.add(f"{key}.distribution", "a lognormal quantity must have a positive value")
                return None
            d = dist.lognormal(v, std)
        elif dname == "student-t":
            dof = node.get("dof")
            if isinstance(dof, bool) or not isinstance(dof, (int, float)) or not (dof > 2) or not math.isfinite(dof):
                c.add(f"{key}.dof", "student-t needs degrees of freedom dof > 2 (so that u is finite)")
                return None
            d = dist.student_t(v, std, float(dof))
            stated += f", t with {dof:g} dof"
        else:  # truncated-normal
            lo = node.get("lower")
            hi = node.get("upper")
            lo_v = reader(lo, f"{key}.lower") if lo is not None else -math.inf
            hi_v = reader(hi, f"{key}.upper") if hi is not None else math.inf
            if lo_v is None or hi_v is None:
                return None
            if lo is None and hi is None:
                c.add(key, "truncated-normal needs lower and/or upper bounds")
                return None
            if not (lo_v < v < hi_v):
                c.add(key, "the value must lie strictly between lower and upper")
                return None
            d = dist.truncated_normal(v, std, lo_v, hi_v)
    except UqthermoError as e:
        c.add(key, e.message)
        return None
    sd = float(getattr(d, "std", 0.0))
    if v != 0 and sd > abs(v) and user_u:
        c.warn(key, f"the standard uncertainty is {100 * sd / abs(v):.0f} % of the value; a relative uncertainty written "
                    "as u (use relative_u = \"… %\"), or a unit slip in u? It is used as stated")
    if bounds is not None and sd > 0 and bounds[0] <= v <= bounds[1]:   # a value outside is the caller's error
        note = outside_bounds_warning(d, v, bounds, what)
        if note:
            c.warn(key, note)
    if temperature and getattr(d, "std", 0.0) > 0:
        lo = d.ppf_at(1e-9)
        if not lo > 0:
            c.add(key, f"this distribution reaches {_fmt(lo)} K (at probability 1e-9), at or below absolute zero; "
                       "give a smaller uncertainty, or a bounded one (rectangular, or truncated-normal with lower)")
            return None
    return v, d, stated, source


def outside_bounds_warning(d, v: float, bounds: tuple[float, float], what: str) -> str:
    """The warning for a distribution ``d`` (estimate ``v``) of a quantity that lies in ``bounds``
    = (lo, hi) by its nature, when P(x < lo) + P(x > hi) exceeds :data:`OUTSIDE_WARN`; "" otherwise.

    A probability density assigned to an input should hold only values the quantity can take
    (JCGM 101:2008 clause 6 assigns it from what is known about the quantity); Monte Carlo trials
    take every drawn value as it is, so a negative amount or a conversion above 1 enters the results.
    """
    lo, hi = bounds
    p_lo = d.cdf_at(lo) if math.isfinite(lo) else 0.0
    p_hi = 1.0 - d.cdf_at(hi) if math.isfinite(hi) else 0.0
    if not p_lo + p_hi > OUTSIDE_WARN:
        return ""
    if p_hi <= OUTSIDE_WARN / 10:
        p, side = p_lo, f"below {_fmt(lo)}"
    elif p_lo <= OUTSIDE_WARN / 10:
        p, side = p_hi, f"above {_fmt(hi)}"
    else:
        p, side = p_lo + p_hi, f"outside [{_fmt(lo)}, {_fmt(hi)}]"
    if v == lo or v == hi:
        fix = ("a value at its bound with an uncertainty around it draws impossible values half the time; if it lies "
               "in a range next to the bound, write the middle of that range with distribution = \"rectangular\" and "
               "half_width = half of it")
    else:
        fix = ("if it is known to stay inside, give a bounded distribution (truncated-normal with lower/upper at the "
               "bounds, rectangular or triangular inside them" + (", or lognormal" if not math.isfinite(hi) else "") + ")")
    return (f"this distribution puts {min(100 * p, 99.9):.3g} % of its probability {side}, where {what} cannot lie; "
            f"the Monte Carlo trials use such values as drawn; {fix}")


def check_name(c: Collector, name: str, key: str) -> bool:
    """Whether ``name`` is a valid species/reaction/output name (records the problem if not)."""
    if isinstance(name, str) and len(name) > MAX_NAME_LENGTH:
        c.add(key.replace(name, short_key(name)), f"name is {len(name)} characters long; at most {MAX_NAME_LENGTH}")
        return False
    if not isinstance(name, str) or not _NAME_RE.match(name):
        c.add(key, f"name {name!r} must start with a letter and use only letters, digits, '_', '+' or '-'")
        return False
    return True


def report_unit(dimension: str) -> tuple[str, float]:
    """Report unit and the factor engine → report for a dimension."""
    return _REPORT[dimension]


def make_datum(id: str, quantity: str, dimension: str, parsed: tuple[float, Any, str, str], *, species: str = "",
               phase: str = "", library: str = "", molar_mass: float | str | None = None) -> Datum:
    """A single-variable datum from :func:`read_uncertain`'s result (``molar_mass``, kg/mol: an amount
    that may be written as a mass — kept so that a candidate's ``u`` may be a mass too)."""
    v, d, stated, source = parsed
    unit, f = report_unit(dimension)
    return Datum(id=id, quantity=quantity, unit=unit, to_report=f, kind="scalar", distributions=[d],
                 variable_names=[id], correlation=None, stated=stated, source=source, species=species,
                 phase=phase, library=library, nominal=v,
                 molar_mass=float(molar_mass) if isinstance(molar_mass, (int, float)) else None)


def register(c: Collector, data: dict[str, Datum], datum: Datum, key: str) -> None:
    """Add ``datum`` to ``data`` under its id (a problem at ``key`` if the id is taken)."""
    if datum.id in data:
        c.add(key, f"datum {datum.id!r} is defined twice")
        return
    data[datum.id] = datum


def matrix(c: Collector, node: Any, n: int, key: str) -> np.ndarray | None:
    """Read an n×n numeric matrix (list of lists)."""
    if not (isinstance(node, list) and len(node) == n and all(isinstance(r, list) and len(r) == n for r in node)):
        c.add(key, f"must be a {n}×{n} matrix (a list of {n} lists of {n} numbers)")
        return None
    try:
        m = np.array(node, dtype=float)
    except (TypeError, ValueError):
        c.add(key, "matrix entries must be numbers")
        return None
    if not np.all(np.isfinite(m)):
        c.add(key, "matrix entries must be finite numbers")
        return None
    return m
