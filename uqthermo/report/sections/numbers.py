"""Numbers of the concise section that carry their provenance in results.json.

Every number printed in the concise section is a :class:`Num`: its text plus the JSON
path(s) of the value(s) it shows and how it was derived (``op``). The HTML report writes
them as ``<span class="num" data-path="…" data-op="…">text</span>``, so that a test (or a
reviewer with the browser's inspector) can check each printed number against
results.json; Markdown and Word print the text only.

Paths are ``/``-separated keys and list indices from the top of results.json, e.g.
``outputs/0/points/3/monte_carlo/mean``; they hold no user text (only indices and the
fixed key names of the format). Operations:

* ``value`` — the value at the path, rounded as printed;
* ``degC``, ``degF`` — a temperature in K converted (t/°C = T/K − 273.15; t/°F = 1.8 T/K − 459.67);
* ``percent`` — 100 × the value;
* ``halfwidth`` — half the width of the interval at the path ([lo, hi] → (hi − lo)/2);
* ``ratio`` — first value divided by the second (paths separated by a space; a first path
  that ends in an interval stands for its half-width);
* ``count`` — an integer count (printed with thin-space digit groups in prose).
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

from ..fields import num
from ..rounding import fmt_fixed, fmt_temperature, uncertainty_decimals
from ..units import from_kelvin, symbol

THIN = "\u202f"   # narrow no-break space: digit groups in prose (SI brochure 5.4.4)


@dataclass(frozen=True)
class Num:
    """A printed number and where it comes from (see the module docstring)."""

    text: str
    path: str = ""
    op: str = "value"

    def __str__(self) -> str:
        return self.text

    def __bool__(self) -> bool:
        return bool(self.text) and self.text != "—"


class Parts(list):
    """Text made of strings and :class:`Num` (a table cell or a sentence); ``str()`` joins them."""

    def __str__(self) -> str:
        return "".join(str(p) for p in self)


def path(*parts: Any) -> str:
    return "/".join(str(p) for p in parts)


def value(v: Any, dec: int | None, where: str) -> Num:
    return Num(fmt_fixed(v, dec), where, "value")


def temperature(T_K: Any, unit: str, where: str, with_symbol: bool = True, dec: int | None = None) -> Num:
    """An absolute temperature in the display unit (``where`` is the path of the kelvin value).

    ``dec``: decimals of an estimated temperature (from its standard uncertainty, GUM 7.2.6); stated
    temperatures are shown to at most two decimals without trailing zeros.
    """
    v = from_kelvin(T_K, unit)
    if v is None:
        return Num("—")
    s = fmt_fixed(v, max(dec, 0)) if dec is not None else fmt_temperature(round(v, 10))
    return Num(f"{s} {symbol(unit)}" if with_symbol else s, where, {"degC": "degC", "degF": "degF"}.get(unit, "value"))


def percent(v: Any, dec: int, where: str) -> Num:
    x = num(v)
    return Num("—" if x is None else fmt_fixed(100 * x, dec), where, "percent")


def count(n: Any, where: str, prose: bool = True) -> Num:
    x = num(n)
    if x is None:
        return Num("—")
    s = f"{int(round(x)):,}".replace(",", THIN if prose else "")
    return Num(s, where, "count")


def u_decimals(u: Any) -> int | None:
    return uncertainty_decimals(u)


def join(parts: Sequence[Any]) -> str:
    """Plain text of a sequence of strings and :class:`Num` (Markdown, Word, terminal)."""
    return "".join(str(p) for p in parts)


__all__ = ["Num", "Parts", "THIN", "path", "value", "temperature", "percent", "count", "join", "u_decimals"]


def limit(output, oi: int, unit: str) -> Num:
    """The output's limit as the user wrote it (``limit.as_written``, op ``as_written``), else ``limit_K`` converted."""
    from ..units import as_written, limit_text

    lim = output.get("limit")
    if hasattr(lim, "get") and isinstance(lim.get("as_written"), str) and lim.get("as_written").strip():
        return Num(as_written(lim["as_written"]), path("outputs", oi, "limit", "as_written"), "as_written")
    if hasattr(lim, "get") and lim.get("value") is not None:
        return temperature(lim.get("value"), unit, path("outputs", oi, "limit", "value")) if lim.get("unit") in (None, "K") \
            else Num(limit_text(output, unit), path("outputs", oi, "limit", "value"))
    return temperature(output.get("limit_K"), unit, path("outputs", oi, "limit_K"))
