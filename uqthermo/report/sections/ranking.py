"""Cut long rankings where they stop mattering: rows up to 99 % of the variance, the rest in one row.

A budget with eighteen data of which five carry 99.9 % of u²(y) reads better as five rows
and "13 other data, together 0.1 %". :func:`cut` keeps the largest items (by absolute
share) until their cumulative share reaches :data:`KEEP` of the total and returns the rest
separately, so that each table can summarise it in one row.
"""

from __future__ import annotations

from collections.abc import Callable, Sequence
from typing import Any, TypeVar

from ..tables import num

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
