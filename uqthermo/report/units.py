"""Temperatures in the user's unit: the case's outputs written in °C are reported in °C.

results.json keeps every temperature in kelvin (``*_K`` keys) and records the unit the
case's outputs were written in as ``display_units.temperature`` (``"degC"``, ``"degF"`` or
``"K"``). The concise section of the report shows absolute temperatures in that unit; the
appendix keeps kelvin. Temperature *differences* (an adiabatic rise, a standard
uncertainty of a temperature) stay in kelvin: 1 K = 1 °C as a difference.

Conversions (exact, ISO 80000-5): t/°C = T/K − 273.15; t/°F = 1.8·T/K − 459.67.
"""

from __future__ import annotations

import re
from collections.abc import Mapping
from typing import Any

from .fields import num
from .rounding import fmt_temperature

SYMBOL = {"K": "K", "degC": "°C", "degF": "°F"}
OFFSET = {"K": (1.0, 0.0), "degC": (1.0, -273.15), "degF": (1.8, -459.67)}


def temperature_unit(results: Mapping) -> str:
    """``"degC"``, ``"degF"`` or ``"K"`` (default) from ``results["display_units"]``."""
    u = ((results.get("display_units") or {}) if isinstance(results.get("display_units"), Mapping) else {}).get("temperature")
    return u if u in SYMBOL else "K"


def symbol(unit: str) -> str:
    return SYMBOL.get(unit, "K")


def from_kelvin(T: Any, unit: str) -> float | None:
    """Absolute temperature in ``unit`` (None when missing)."""
    v = num(T)
    if v is None:
        return None
    a, b = OFFSET.get(unit, (1.0, 0.0))
    return a * v + b


def fmt_T(T: Any, unit: str, with_symbol: bool = True) -> str:
    """An absolute temperature in ``unit``, to at most two decimals (trailing zeros dropped): ``"350 °C"``."""
    v = from_kelvin(T, unit)
    if v is None:
        return "—"
    s = fmt_temperature(round(v, 10))
    return f"{s} {symbol(unit)}" if with_symbol else s


def as_written(text: Any) -> str:
    """A quantity as the user wrote it, with unit symbols made readable: ``"90 degC"`` → ``"90 °C"``."""
    if not isinstance(text, str):
        return ""
    s = " ".join(text.split())
    s = re.sub(r"\bdelta_degC\b", "K", s)
    s = re.sub(r"\bdegC\b", "°C", s)
    s = re.sub(r"\bdegF\b", "°F", s)
    return s


def amount_as_written(row: Mapping) -> str:
    """An amount or flow as the user wrote it (``as_written`` of an ``inputs[]`` or budget row: "252 kg",
    "4600 kg/h"), or "" when missing or in the row's own unit ("10 mol" beside mol adds nothing)."""
    w = as_written(row.get("as_written")) if isinstance(row, Mapping) else ""
    if not w:
        return ""
    unit = re.sub(r"^[\s0-9.eE+\-]+", "", w).strip()
    return "" if unit == str(row.get("unit") or "") else w


def limit_text(output: Mapping, unit: str) -> str:
    """The output's limit, unrounded as the user wrote it when results.json keeps it (``limit.as_written``),
    else ``limit_K`` in the display unit."""
    lim = output.get("limit")
    if isinstance(lim, Mapping) and isinstance(lim.get("as_written"), str) and lim.get("as_written").strip():
        return as_written(lim["as_written"])
    value = num(lim.get("value")) if isinstance(lim, Mapping) else None
    if value is None:
        value = num(output.get("limit_K"))
    return fmt_T(value, unit) if value is not None else ""


__all__ = ["temperature_unit", "symbol", "from_kelvin", "fmt_T", "as_written", "amount_as_written", "limit_text"]
