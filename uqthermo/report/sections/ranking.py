"""Cut long rankings where they stop mattering: rows up to 99 % of the variance, the rest in one row.

A budget with eighteen data of which five carry 99.9 % of u²(y) reads better as five rows
and "13 other data, together 0.1 %". :func:`cut` keeps the largest items (by absolute
share) until their cumulative share reaches :data:`KEEP` of the total and returns the rest
separately, so that each table can summarise it in one row.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from ..fields import num

T = TypeVar("T")

#: cumulative share of the variance the listed rows cover
KEEP = 0.99


def cut(items: Sequence[T], share: Callable[[T], Any], keep: float = KEEP, min_rows: int = 1) -> tuple[list[T], list[T]]:
    """``(kept, rest)``: items by decreasing |share| until the kept ones cover ``keep`` of Σ|share|.

    Items without a share go to ``rest``. Order within ``kept`` is by decreasing |share|;
    ``rest`` keeps the input order. At least ``min_rows`` items are kept when there are any.
    A rest of a single item is not worth a summary row: it is kept too.
    """
    valued = [(abs(num(share(it)) or 0.0), i, it) for i, it in enumerate(items) if num(share(it)) is not None]
    total = sum(v for v, _, _ in valued)
    order = sorted(valued, key=lambda t: (-t[0], t[1]))
    kept_idx: list[int] = []
    acc = 0.0
    for v, i, _ in order:
        if len(kept_idx) >= min_rows and total > 0 and acc >= keep * total - 1e-15:
            break
        kept_idx.append(i)
        acc += v
    rest_idx = [i for i in range(len(items)) if i not in set(kept_idx)]
    if len(rest_idx) == 1:
        kept_idx += rest_idx
        rest_idx = []
    rest = [items[i] for i in rest_idx]
    kept = [items[i] for i in sorted(kept_idx, key=lambda i: (-(abs(num(share(items[i])) or 0.0)), i))]
    return kept, rest


__all__ = ["cut", "KEEP"]


def drivers_table(output, point, key):
    """The driver table (:func:`uqthermo.report.tables.drivers_whatif.drivers_table`) cut at 99 % of the variance."""
    from ..rounding import fmt_share
    from ..tables.drivers_whatif import drivers_table as full

    drivers = [d for d in point.get("drivers") or [] if hasattr(d, "get")]
    kept, rest = cut(drivers, lambda d: d.get("share"))
    t = full(output, dict(point, drivers=kept), key)
    if rest and t.rows:
        share = sum(num(d.get("share")) or 0.0 for d in rest)
        n_cols = len(t.columns)
        row = ["", f"{len(rest)} other data (together)", fmt_share(share)] + ["—"] * (n_cols - 3)
        at = len(kept)              # before the "correlations (net)" row, if any
        t.rows.insert(at, row)
        t.notes.append(f"Data are listed up to {round(100 * KEEP)} % of the variance; the others are summed in one row "
                       "(every datum is in tables/drivers.csv).")
    return t


def whatif_table(output, point, key, p_cov):
    """The what-if table (:func:`uqthermo.report.tables.drivers_whatif.whatif_table`) for the data that carry 99 % of the variance."""
    from ..tables.drivers_whatif import whatif_table as full

    drivers = [d for d in point.get("drivers") or [] if hasattr(d, "get")]
    rows = [w for w in point.get("whatif") or [] if hasattr(w, "get")]
    if not drivers or not rows:
        return full(output, point, key, p_cov)
    kept, rest = cut(drivers, lambda d: d.get("share"))
    keep = {d.get("datum") for d in kept}
    order = {d.get("datum"): i for i, d in enumerate(kept)}
    shown = sorted([w for w in rows if w.get("datum") in keep], key=lambda w: order.get(w.get("datum"), 1e9))
    others = [w for w in rows if w.get("datum") not in keep]
    t = full(output, dict(point, whatif=shown), key, p_cov)
    if others and t.rows:
        share = sum(num(d.get("share")) or 0.0 for d in rest)
        t.rows.append([f"{len(others)} other data (together {100 * share:.1f} % of the variance)", t.rows[0][1]]
                      + ["—"] * (len(t.columns) - 2))
        t.notes.append("The other data together carry less than "
                       f"{round(100 * (1 - KEEP))} % of the variance; their what-if rows are in tables/whatif.csv.")
    return t
