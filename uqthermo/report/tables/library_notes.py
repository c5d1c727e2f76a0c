"""Notes under the report's input table for data taken from the library (``library = "auto"``).

For every input whose results.json row carries a ``provenance`` record, one line gives the
selected source and why, the basis of its uncertainty (stated, published, spread, assumed,
user), whether it is an ESTIMATE, and the other sources' values side by side (for a heat
capacity: each curve's range and whether it covers the case's window). Rendered from the results
dict alone.
"""

from __future__ import annotations

from typing import Any, Mapping

from ..fields import text

__all__ = ["provenance_notes"]


def _num(x: Any, unit: str) -> str:
    try:
        return f"{float(x):.6g} {unit}".strip()
    except (TypeError, ValueError):
        return "—"


def provenance_notes(rows: list[Mapping]) -> list[str]:
    """One note per library datum (empty when no input came from the library's selection rules)."""
    out = []
    for i in rows:
        p = i.get("provenance")
        if not isinstance(p, Mapping):
            continue
        basis = text(p.get("uncertainty_basis"))
        flag = " ESTIMATE (group contribution, not measured)." if p.get("estimate") else ""
        if p.get("assumed"):
            flag += " Uncertainty ASSUMED: check it."
        srcs = p.get("sources") or []
        if "window_K" in p:
            w = p.get("window_K") or [None, None]
            side = "; ".join(
                f"{text(s.get('source'))} {_num(s.get('range_K', [None])[0], '')}-{_num(s.get('range_K', [None, None])[1], 'K')}"
                f"{' (covers)' if s.get('covers_window') else ''}" for s in srcs if isinstance(s, Mapping))
            what = f"curves for {_num(w[0], '')}-{_num(w[1], 'K')}: {side}"
        else:
            unit = text(p.get("unit"))
            side = "; ".join(f"{text(s.get('source'))} {_num(s.get('value'), unit)}"
                             + (" (estimate)" if s.get("estimate") else "") for s in srcs if isinstance(s, Mapping))
            what = f"sources: {side}"
        out.append(f"{text(i.get('datum'))}: library ({text(p.get('selection'))}) — {text(p.get('selected'))}; "
                   f"{text(p.get('reason'))}. Uncertainty: {basis} — {text(p.get('uncertainty_reason'))}.{flag} {what}.")
    return out
