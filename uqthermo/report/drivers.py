"""The driver rows of one output point, as the terminal, the driver figure and the driver table show them.

One source for all three, so they show the same rows and the same numbers:

* linear ranking (GUM): each datum's own variance c_gᵀΣ_gg c_g as a fraction of u²(y), then the
  covariance terms between correlated data as their own signed rows (JCGM 100:2008 §5.2.2,
  eq. (16)); the rows of a point sum to 100 % — a negative covariance row is variance that the
  correlation removes, and a datum's row can then exceed 100 %;
* Sobol' ranking: first-order indices S1 (with their confidence intervals); these need not sum
  to 100 % (interactions), and no covariance rows appear (Sobol' ranking is used only for
  independent data).

Presentation only: reads the results dict (``drivers``, ``covariance_terms``, ``drivers_method``).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from typing import Any

from .fields import num, text
from .rounding import fmt_share

__all__ = ["DriverRow", "driver_rows", "rows_sum_note", "share_text"]


@dataclass(frozen=True)
class DriverRow:
    """One row: ``kind`` is ``"datum"``, ``"others"`` (the data not listed, summed) or ``"covariance"``."""

    label: str
    share: float
    kind: str
    share_ci: tuple[float, float] | None = None


def share_text(share: float) -> str:
    """A share as the terminal, figure and tables print it: percent with one decimal (half away from zero)."""
    s = fmt_share(share)
    return "0.0" if s in ("-0.0", "−0.0") else s


def covariance_label(between: Any) -> str:
    a, b = (list(between) + ["?", "?"])[:2]
    return f"covariance {text(a)} ~ {text(b)}"


def driver_rows(point: Mapping, max_data: int | None = None, skip_zero: bool = False) -> list[DriverRow]:
    """The point's driver rows: data (largest first), optionally "N other data", then covariance rows.

    ``max_data`` limits the data listed by name; the rest are summed into one ``"others"`` row,
    so that for a linear ranking the rows still sum to 100 %. With ``skip_zero`` data whose share
    prints as 0.0 % go into that row too, and an "others" row that prints as 0.0 % is left out.
    """
    drivers = [d for d in point.get("drivers") or [] if isinstance(d, Mapping) and num(d.get("share")) is not None]
    def zero(d) -> bool:
        ci = d.get("share_ci")
        hi = num(ci[1]) if isinstance(ci, (list, tuple)) and len(ci) == 2 else None
        return share_text(float(num(d["share"]))) == "0.0" and (hi is None or share_text(hi) == "0.0")

    named = [d for d in drivers if not (skip_zero and zero(d))]
    shown = named if max_data is None else named[:max_data]
    ids = {id(d) for d in shown}
    rest = [d for d in drivers if id(d) not in ids]
    out = []
    for d in shown:
        ci = d.get("share_ci")
        ci = ((float(num(ci[0])), float(num(ci[1]))) if isinstance(ci, (list, tuple)) and len(ci) == 2
              and num(ci[0]) is not None and num(ci[1]) is not None else None)
        out.append(DriverRow(text(d.get("datum")), float(num(d["share"])), "datum", ci))
    if rest:
        total = float(sum(num(d["share"]) for d in rest))
        if not (skip_zero and share_text(total) == "0.0"):
            out.append(DriverRow(f"{len(rest)} other data", total, "others"))   # counted as the tables count
    if point.get("drivers_method") == "linear":
        for c in point.get("covariance_terms") or []:
            if isinstance(c, Mapping) and num(c.get("share")) is not None:
                out.append(DriverRow(covariance_label(c.get("between") or []), float(num(c["share"])), "covariance"))
    return out


def rows_sum_note(point: Mapping) -> str:
    """One sentence saying what the rows are and that (for a linear ranking) they sum to 100 %."""
    if point.get("drivers_method") == "linear":
        if point.get("covariance_terms"):
            return ("shares of u²(y) (GUM budget by datum); the covariance rows between correlated data are signed "
                    "(JCGM 100 §5.2.2), and all rows sum to 100 %")
        return "shares of u²(y) (GUM budget by datum); the rows sum to 100 %"
    if point.get("drivers_method") == "sobol":
        return "first-order Sobol' indices S1 (they need not sum to 100 %: interactions)"
    return ""
