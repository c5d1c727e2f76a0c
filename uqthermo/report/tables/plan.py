"""The data-purchase plan tables: the candidates and the cost–uncertainty front."""

from __future__ import annotations

from collections.abc import Mapping

from ..fields import num, text
from ..rounding import distinct_sig, fmt_cost, fmt_sig
from .display import DisplayTable

__all__ = ["plan_candidates_table", "plan_front_table"]


def plan_candidates_table(plan: Mapping) -> DisplayTable:
    cur = text(plan.get("currency")) or "cost units"
    t = DisplayTable("plan_candidates", "Candidate data purchases", ["Id", "Datum", "Action", "New u / old u", f"Cost / {cur}"], ["l", "l", "w", "r", "r"])
    for c in plan.get("candidates") or []:
        if not isinstance(c, Mapping):
            continue
        factor = fmt_sig(c.get("factor"), 2) if num(c.get("factor")) is not None else (
            f"u → {fmt_sig(c.get('u'), 2)}" if num(c.get("u")) is not None else "—")
        t.rows.append([text(c.get("id")) or "—", text(c.get("datum")), text(c.get("action") or c.get("note")) or "—", factor, fmt_cost(c.get("cost"))])
    return t


def plan_front_table(plan: Mapping) -> DisplayTable:
    cur = text(plan.get("currency")) or "cost units"
    tgt = plan.get("target") or {}
    unit = text(tgt.get("unit"))
    t = DisplayTable("plan_front", "Cost–uncertainty front (each set is the cheapest way to reach its U)",
                     [f"Cost / {cur}", f"U / {unit}" if unit else "U", "Purchases", "Meets target"], ["r", "r", "w", "l"])
    tU = num(tgt.get("U"))
    sig = distinct_sig([f.get("U") for f in plan.get("front") or [] if isinstance(f, Mapping)] + [tU])
    for f in plan.get("front") or []:
        if not isinstance(f, Mapping):
            continue
        U = num(f.get("U"))
        meets = "—" if tU is None or U is None else ("yes" if U <= tU else "no")
        t.rows.append([fmt_cost(f.get("cost")), fmt_sig(U, sig), text(f.get("set")) or "(none)", meets])
    return t
