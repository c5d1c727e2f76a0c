"""Read ``[[correlation]]``: correlation coefficients between two uncertain data (Pearson, as in the
GUM, or Spearman rank coefficients converted for the Gaussian copula)."""

from __future__ import annotations

import difflib
import math
from typing import Any

from ..schema import Datum
from .fields import Collector, is_table

__all__ = ["read_correlations"]


def read_correlations(c: Collector, node: Any, data: dict[str, Datum]) -> list[tuple[str, str, float]]:
    """Read ``[[correlation]]`` as ``(datum a, datum b, Pearson correlation)`` triples."""
    out: list[tuple[str, str, float]] = []
    if not isinstance(node, list):
        c.add("correlation", "must be an array of tables ([[correlation]])")
        return out
    seen: set[frozenset] = set()
    for i, item in enumerate(node):
        key = f"correlation[{i}]"
        if not is_table(item):
            c.add(key, "must be a table with 'between' and 'coefficient'")
            continue
        c.unknown_keys(item, {"between", "coefficient", "rank_coefficient", "source", "note"}, key)
        between = item.get("between")
        rank = "rank_coefficient" in item
        if rank == ("coefficient" in item):
            c.add(key, "give either coefficient (Pearson correlation, as in the GUM) or rank_coefficient (Spearman)")
            continue
        r = item.get("rank_coefficient" if rank else "coefficient")
        ckey = f"{key}.{'rank_coefficient' if rank else 'coefficient'}"
        if not (isinstance(between, list) and len(between) == 2 and all(isinstance(b, str) for b in between)):
            c.add(f"{key}.between", "must list exactly two datum ids, e.g. [\"CO2.g.formation_enthalpy\", \"H2O.g.formation_enthalpy\"]")
            continue
        ok = True
        for b in between:
            if b not in data:
                close = difflib.get_close_matches(b, list(data), n=1)
                c.add(f"{key}.between", f"unknown datum {b!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
                ok = False
            elif not data[b].uncertain:
                c.add(f"{key}.between", f"datum {b!r} is exact; a correlation needs two uncertain data")
                ok = False
            elif len(data[b].distributions) != 1:
                c.add(f"{key}.between", f"datum {b!r} has {len(data[b].distributions)} coefficients; correlate whole curves through relative_u, or give a covariance inside the datum")
                ok = False
        if between[0] == between[1]:
            c.add(f"{key}.between", "a datum cannot be correlated with itself")
            ok = False
        if isinstance(r, bool) or not isinstance(r, (int, float)) or not math.isfinite(r):
            c.add(ckey, f"must be a number in [-1, 1], got {r!r}")
            ok = False
        elif abs(r) > 1:
            c.add(ckey, f"correlation coefficient {r} lies outside [-1, 1]")
            ok = False
        pair = frozenset(between) if isinstance(between, list) and all(isinstance(b, str) for b in between) else None
        if ok and pair in seen:
            c.add(f"{key}.between", "this pair is correlated twice")
            ok = False
        if ok and rank:
            # Spearman ρ_S → the Gaussian copula's normal-score r = 2 sin(π ρ_S/6) → the Pearson correlation
            # of these two marginals (what the linear method and the input table use)
            from ...uq.inputs import normal_score_from_spearman, pearson_from_normal_score

            r = pearson_from_normal_score(data[between[0]].distributions[0], data[between[1]].distributions[0],
                                          normal_score_from_spearman(float(r)))
        if ok:
            seen.add(pair)
            out.append((between[0], between[1], float(r)))
    return out
