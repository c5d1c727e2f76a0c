"""Titles and labels every figure writes the same way: the output's symbol, axis labels, where a point is."""

from __future__ import annotations

from collections.abc import Mapping

from .. import style
from ..fields import num
from ..rounding import fmt_temperature
from ..style import mpl_text
from ..units import fmt_T, temperature_unit

from matplotlib.figure import Figure  # noqa: E402  (style sets the Agg backend first)

__all__ = ["SYMBOLS", "axis_symbol", "set_titles", "axis_label", "location_text"]


SYMBOLS = {
    "reaction_enthalpy": "ΔᵣH",
    "heating_enthalpy": "ΔH",
    "heat_release": "Q̇",
    "adiabatic_temperature_rise": "ΔT_ad",
    "reaction_gibbs_energy": "ΔᵣG",
    "equilibrium_constant": "log₁₀ K",
}


def axis_symbol(kind) -> str:
    """The symbol of an output kind on a figure axis ("ΔᵣH", "log₁₀ K"; "y" for an unknown kind)."""
    return SYMBOLS.get(kind or "", "y")


def set_titles(fig: Figure, main: str, sub: str | None = None) -> None:
    """Figure title at the top left (already-escaped text), optional grey subtitle."""
    import textwrap

    main = "\n".join(textwrap.wrap(main, 90)) or main
    if sub:
        fig.suptitle(main + "\n", x=0.008, ha="left", fontsize=10.5, fontweight="bold", color=style.INK, linespacing=1.5)
        fig.text(0.008, 1.0, "\n" + sub, ha="left", va="top", fontsize=8.5, color=style.GREY,
                 transform=fig.transFigure, linespacing=2.1)
    else:
        fig.suptitle(main, x=0.008, ha="left", fontsize=10.5, fontweight="bold", color=style.INK)


def axis_label(symbol: str, unit: str) -> str:
    """An axis label "symbol / unit" (the unit in parentheses when it has a slash or a space; no unit when dimensionless)."""
    unit = mpl_text(unit or "1")
    if unit == "1":
        return symbol
    if "/" in unit or " " in unit:
        return f"{symbol} / ({unit})"
    return f"{symbol} / {unit}"


def location_text(results: Mapping, output: Mapping, point: Mapping) -> str:
    """Where a point is, in the case's temperature unit with kelvin beside: "at 350 °C (623.15 K)"."""
    tunit = temperature_unit(results)
    start = output.get("kind") == "adiabatic_temperature_rise" and num(output.get("start_temperature_K")) is not None
    T = output.get("start_temperature_K") if start else point.get("temperature_K")
    if num(T) is None:
        return ""
    where = "from" if start else "at"
    k = f"{fmt_temperature(T)} K"
    return f"{where} {k}" if tunit == "K" else f"{where} {fmt_T(T, tunit)} ({k})"
