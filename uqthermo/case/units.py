"""Units of measure for case files (pint), converted once to the engine's SI-molar units.

Inside the engine every quantity is SI-molar: temperatures in K, enthalpies in J/mol,
entropies and heat capacities in J/(mol·K), amounts in mol, rates in mol/s, power in W.
Case files write quantities as strings such as ``"-74.6 kJ/mol"``, ``"350 degC"`` or
``"12 cal/(mol*K)"``; this module parses them with pint and checks their dimension.

Temperatures are special: an *absolute* temperature in ``degC``/``degF`` is an offset
scale, but an *uncertainty* (or step, or half-width) of a temperature is a difference,
so ``u = "5 degC"`` means 5 K. :func:`parse_quantity` takes ``difference=True`` for
those.
"""

from __future__ import annotations

import math
import re
from dataclasses import dataclass
from functools import lru_cache

import pint

__all__ = ["Dimension", "DIMENSIONS", "parse_quantity", "ureg", "UnitProblem", "MissingUnit", "format_unit"]


@lru_cache(maxsize=1)
def _registry() -> pint.UnitRegistry:
    reg = pint.UnitRegistry(autoconvert_offset_to_baseunit=True)
    return reg


def ureg() -> pint.UnitRegistry:
    """The shared pint registry (created on first use)."""
    return _registry()


@dataclass(frozen=True)
class Dimension:
    """A physical dimension the engine expects, with its internal SI-molar unit."""

    name: str          # human name, e.g. "molar enthalpy"
    si_unit: str       # engine unit, e.g. "J/mol"
    example: str       # an example of a valid unit for messages, e.g. "kJ/mol"


DIMENSIONS: dict[str, Dimension] = {
    "molar_energy": Dimension("molar energy", "J/mol", "kJ/mol"),
    "molar_entropy": Dimension("molar entropy/heat capacity", "J/(mol*K)", "J/(mol*K)"),
    "temperature": Dimension("temperature", "K", "K or degC"),
    "amount": Dimension("amount of substance", "mol", "mol or kmol"),
    "amount_rate": Dimension("amount rate", "mol/s", "mol/s or kmol/h"),
    "dimensionless": Dimension("dimensionless number", "", "a plain number or %"),
    "energy": Dimension("energy", "J", "kJ"),
    "power": Dimension("power", "W", "kW"),
    "mass": Dimension("mass", "kg", "kg, g, t or lb"),
    "mass_rate": Dimension("mass rate", "kg/s", "kg/h"),
    "specific_energy": Dimension("specific energy", "J/kg", "kJ/kg"),
    "pressure": Dimension("pressure", "Pa", "bar or kPa"),
}

# ASCII digits only: str.isdigit-style Unicode digits ("７００", "٣") are rejected with a clear message
_NUMBER = re.compile(r"^\s*([-+]?(?:[0-9]+\.?[0-9]*|\.[0-9]+)(?:[eE][-+]?[0-9]+)?)\s*(.*?)\s*$")
_REPLACEMENTS = (
    ("\u2212", "-"), ("\u2013", "-"), ("°C", "degC"), ("°F", "degF"), ("℃", "degC"),
    ("·", "*"), ("⋅", "*"), ("\u00a0", " "), ("µ", "u"),
)


class UnitProblem(ValueError):
    """A value that cannot be read as the expected quantity (message is one line)."""


class MissingUnit(UnitProblem):
    """A plain number where a quantity with a unit is expected."""


def _normalise(text: str) -> str:
    for old, new in _REPLACEMENTS:
        text = text.replace(old, new)
    return text.strip()


@lru_cache(maxsize=512)
def _parse_units(unit_text: str) -> pint.Unit:
    return ureg().parse_units(unit_text)


def parse_quantity(value: object, dimension: str, *, difference: bool = False) -> float:
    """Convert a case-file quantity to the engine unit of ``dimension``.

    Parameters
    ----------
    value : str or number
        ``"-74.6 kJ/mol"``, ``"350 degC"``, ``"2 %"``; a bare number is accepted only
        for dimensionless quantities.
    dimension : str
        A key of :data:`DIMENSIONS`.
    difference : bool
        Read a temperature as a *difference* (uncertainties, half-widths, steps):
        ``degC``/``degF`` then mean kelvin-sized/rankine-sized intervals.

    Returns
    -------
    float
        Magnitude in the engine unit (K, J/mol, J/(mol·K), mol, mol/s, 1, J, W).

    Raises
    ------
    UnitProblem
        Not a number with a unit, unknown unit, wrong dimension, NaN or infinite.
    """
    dim = DIMENSIONS[dimension]
    if isinstance(value, bool):
        raise UnitProblem(f"expected a {dim.name} such as \"1.0 {dim.example}\", got a boolean")
    if isinstance(value, (int, float)):
        magnitude = float(value)
        unit_text = ""
    elif isinstance(value, str):
        text = _normalise(value)
        m = _NUMBER.match(text)
        if not m:
            raise UnitProblem(f"cannot read {value!r} as a number with a unit (e.g. \"1.0 {dim.example}\")")
        magnitude = float(m.group(1))
        unit_text = m.group(2)
    else:
        raise UnitProblem(f"expected a {dim.name} as a string such as \"1.0 {dim.example}\", got {type(value).__name__}")
    if not math.isfinite(magnitude):
        raise UnitProblem(f"{value!r} is not a finite number")
    if unit_text == "":
        if dimension == "dimensionless":
            return magnitude
        first, *more = re.split(r",\s*|\s+or\s+", dim.example)
        also = f" (or {', '.join(more)})" if more else ""
        raise MissingUnit(f"{value!r} has no unit; write it with a unit of {dim.name}, e.g. \"{magnitude:g} {first}\"{also}")
    if difference:
        unit_text = re.sub(r"\bdeg(C|F)\b", r"delta_deg\1", unit_text)
        unit_text = re.sub(r"\b(celsius|fahrenheit)\b", r"delta_\1", unit_text)
    try:
        units = _parse_units(unit_text)
    except Exception:  # pint raises several error types for unknown or malformed units
        raise UnitProblem(f"unknown unit {unit_text!r} in {value!r}") from None
    reg = ureg()
    try:
        q = reg.Quantity(magnitude, units).to(dim.si_unit) if dim.si_unit else reg.Quantity(magnitude, units).to("")
    except pint.DimensionalityError:
        raise UnitProblem(
            f"{value!r} is not {'an' if dim.name[0] in 'aeiou' else 'a'} {dim.name} (unit {unit_text!r} has the wrong dimension; use e.g. {dim.example})"
        ) from None
    except Exception:
        raise UnitProblem(f"cannot convert {value!r} to {dim.si_unit or 'a plain number'}") from None
    out = float(q.magnitude)
    if not math.isfinite(out):
        raise UnitProblem(f"{value!r} is not a finite quantity")
    return out


def format_unit(dimension: str) -> str:
    """The report unit of a dimension (kJ/mol for molar energies, as the contract states)."""
    return {
        "molar_energy": "kJ/mol",
        "molar_entropy": "J/(mol*K)",
        "temperature": "K",
        "amount": "mol",
        "amount_rate": "mol/s",
        "dimensionless": "1",
        "energy": "kJ",
        "power": "kW",
        "mass": "kg",
        "mass_rate": "kg/s",
        "specific_energy": "kJ/kg",
        "pressure": "kPa",
    }[dimension]
