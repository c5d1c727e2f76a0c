"""Probabilities in the concise section (exceedance of a limit, MTSR above MTT / T_D24, …).

Uses the project's one presentation helper for probabilities, ``style.probability_text``,
when it is available (it states zero hits as an upper bound), else the report's percent
format rounded at the Monte Carlo standard error.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

from .. import style
from ..fields import num
from ..rounding import fmt_probability
from . import numbers as N
from .numbers import Num


def probability_parts(point: Mapping, key: str, base: str) -> list[Any]:
    """``[Num]`` for ``point[key + "_probability"]`` (or ``point[key]``), with its upper bound when known."""
    pk = f"{key}_probability" if f"{key}_probability" in point else key
    p = point.get(pk)
    if num(p) is None:
        return ["—"]
    se = point.get(f"{key}_standard_error") if f"{key}_standard_error" in point else point.get(f"{pk}_standard_error")
    ub_key = f"{key}_upper_bound" if f"{key}_upper_bound" in point else f"{pk}_upper_bound"
    ub = point.get(ub_key)
    stem = pk[: -len("_probability")] if pk.endswith("_probability") else pk
    trials = next((point.get(k) for k in (f"{stem}_trials", f"{pk}_trials", "trials") if point.get(k) is not None),
                  (point.get("monte_carlo") or {}).get("samples"))
    helper = getattr(style, "probability_text", None)
    if helper is not None:
        try:
            s = helper(num(p), num(ub), int(trials) if num(trials) is not None else None)
        except TypeError:
            s = None
        if s:
            return [Num(str(s), N.path(base, pk) + (f" {N.path(base, ub_key)}" if ub is not None else ""), "probability")]
    return [Num(fmt_probability(p, se), N.path(base, pk), "percent")]


__all__ = ["probability_parts"]
