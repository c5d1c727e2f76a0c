"""The GUM uncertainty budget of an output point (JCGM 100:2008, 5.1.3, 5.2.2 and annex H).

Rendered from the point's ``budget`` block of results.json::

    "budget": {"method": "linear", "unit": "<output unit>", "variance": u²(y), "standard_uncertainty": u(y),
      "rows": [{"quantity", "datum", "estimate", "standard_uncertainty", "unit", "sensitivity_coefficient",
                "contribution" (= c_i·u(x_i), signed, output unit), "variance" (= c_i²u²(x_i)),
                "share" (= variance / u²(y)), "dof" (null = infinite)}, …],
      "covariance_rows": [{"between": [q_i, q_j], "correlation": r_ij,
                           "variance": 2 c_i c_j u_i u_j r_ij (signed), "share": variance / u²(y)}, …]}

with Σ rows.variance + Σ covariance_rows.variance = u²(y) (the law of propagation of
uncertainty, GUM 5.2.2). The table lists one row per input quantity X_i — estimate x_i,
u(x_i), unit, sensitivity coefficient c_i = ∂f/∂x_i, contribution c_i·u(x_i) in the
output's unit, share of u²(y), degrees of freedom ν_i — up to 99 % of the variance (the
rest summarised in one row), then each correlation term as its own row, then the
combined standard uncertainty. ``tables/budget-<output>.csv`` holds every row of every
point at full precision.

Rounding: u(x_i) to two significant digits and x_i to the same decimal position (GUM
7.2.6); c_i and the contributions to three significant digits; shares in percent with one
decimal.

Every number of the table is a :class:`~uqthermo.report.sections.numbers.Num` carrying its
path in results.json (ops ``sum`` and ``rss`` for the summary row: the sum of the shares,
the root sum of squares of the contributions).
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any

import pandas as pd

from ..fields import num, outputs, points, slugs, text
from ..rounding import fmt_dof, fmt_fixed, fmt_sig, fmt_u, fmt_value, uncertainty_decimals
from ..tables.display import DisplayTable
from ..units import amount_as_written
from . import numbers as N
from .numbers import Num
from .ranking import cut

#: correlation terms smaller than this share of u²(y) are summarised in one row
MIN_COVARIANCE_SHARE = 0.005


def has_budget(point: Mapping) -> bool:
    b = point.get("budget")
    return isinstance(b, Mapping) and isinstance(b.get("rows"), list) and bool(b.get("rows"))


def _sig(v: Any, where: str, sig: int = 3) -> Num:
    return Num(fmt_sig(v, sig), where)


def budget_table(output: Mapping, oi: int, k: int, key: str, slug: str, label: str = "") -> DisplayTable:
    """The budget table of point ``k`` of output ``oi`` (empty when the point has no ``budget``)."""
    p = points(output)[k]
    b = p.get("budget") if has_budget(p) else None
    unit = text((b or {}).get("unit")) or text(output.get("unit")) or "1"
    ustr = "" if unit in ("", "1") else f" / {unit}"
    cols = ["Input quantity X_i", "Estimate x_i", "u(x_i)", "Unit of x_i", "Sensitivity c_i",
            f"Contribution c_i·u(x_i){ustr}", "Share of u²(y) / %", "ν_i"]
    t = DisplayTable(key, f"GUM uncertainty budget of {text(output.get('name'))}{label}", cols,
                     ["l", "r", "r", "w", "r", "r", "r", "r"])
    if b is None:
        return t
    base = N.path("outputs", oi, "points", k, "budget")
    rows = [r for r in b.get("rows") or [] if isinstance(r, Mapping)]
    indexed = list(enumerate(rows))
    kept, rest = cut(indexed, lambda ir: ir[1].get("variance") if num(ir[1].get("variance")) is not None else ir[1].get("share"))
    for j, r in kept:
        rp = N.path(base, "rows", j)
        u = num(r.get("standard_uncertainty"))
        d = uncertainty_decimals(u)
        est = (Num(fmt_fixed(r.get("estimate"), d), N.path(rp, "estimate")) if d is not None
               else Num(fmt_value(r.get("estimate")), N.path(rp, "estimate")))
        written = amount_as_written(r)
        t.rows.append([
            (text(r.get("quantity")) or text(r.get("datum"))) + (f" ({text(written)})" if written else ""), est,
            Num(fmt_u(u), N.path(rp, "standard_uncertainty")) if d is not None else Num("0 (exact)" if u == 0 else "—"),
            text(r.get("unit")) or "1",
            _sig(r.get("sensitivity_coefficient"), N.path(rp, "sensitivity_coefficient")),
            _sig(r.get("contribution"), N.path(rp, "contribution"), 2),
            N.percent(r.get("share"), 1, N.path(rp, "share")),
            Num(fmt_dof(r.get("dof"), infinite_if_missing=True), N.path(rp, "dof") if num(r.get("dof")) is not None else ""),
        ])
    if rest:
        paths = [N.path(base, "rows", j) for j, _ in rest]
        share = sum(num(r.get("share")) or 0.0 for _, r in rest)
        rss = math.sqrt(sum((num(r.get("contribution")) or 0.0) ** 2 for _, r in rest))
        t.rows.append([f"{len(rest)} other quantities (together)", "", "", "", "",
                       Num(fmt_sig(rss, 2), " ".join(N.path(p, "contribution") for p in paths), "rss"),
                       Num(fmt_fixed(100 * share, 1), " ".join(N.path(p, "share") for p in paths), "sum_percent"), ""])
    covs = [(j, c) for j, c in enumerate(b.get("covariance_rows") or []) if isinstance(c, Mapping)]
    big = [(j, c) for j, c in covs if abs(num(c.get("share")) or 0.0) >= MIN_COVARIANCE_SHARE]
    small = [(j, c) for j, c in covs if (j, c) not in big]
    for j, c in big:
        cp = N.path(base, "covariance_rows", j)
        a, bb = (list(c.get("between") or []) + ["", ""])[:2]
        t.rows.append([f"correlation r({text(a)}, {text(bb)}) = {fmt_sig(c.get('correlation'), 3)}", "", "", "", "",
                       "", N.percent(c.get("share"), 1, N.path(cp, "share")), ""])
    if small:
        share = sum(num(c.get("share")) or 0.0 for _, c in small)
        t.rows.append([f"{len(small)} other correlation terms (together)", "", "", "", "", "",
                       Num(fmt_fixed(100 * share, 1), " ".join(N.path(base, "covariance_rows", j, "share") for j, _ in small),
                           "sum_percent"), ""])
    uy = num(b.get("standard_uncertainty"))
    if uy is None and num(b.get("variance")) is not None:
        uy = math.sqrt(max(num(b.get("variance")), 0.0))
    t.rows.append(["Combined standard uncertainty u(y)", "", "", "", "",
                   Num(fmt_u(uy), N.path(base, "standard_uncertainty")), "", ""])
    t.notes.append("c_i = ∂f/∂x_i in (unit of y)/(unit of x_i); u²(y) = Σ c_i²u²(x_i) + Σ 2c_ic_ju(x_i)u(x_j)r_ij "
                   "(GUM 5.2.2). Correlation terms are listed as their own rows (share of u²(y), signed). "
                   f"Rows are listed up to {int(round(100 * 0.99))} % of the variance; every row is in "
                   f"tables/budget-{slug}.csv.")
    return t


def budget_frames(results: Mapping) -> dict[str, pd.DataFrame]:
    """``{"budget-<output>": DataFrame}`` for every output with a budget: every row of every point, full precision."""
    out = {}
    cols = ["output", "temperature_K", "row", "quantity", "datum", "estimate", "standard_uncertainty", "unit",
            "sensitivity_coefficient", "contribution", "variance", "share", "dof", "between_1", "between_2", "correlation"]
    for o, slug in zip(outputs(results), slugs(results)):
        rows = []
        for p in points(o):
            if not has_budget(p):
                continue
            b = p["budget"]
            T = num(p.get("temperature_K"))
            for r in b.get("rows") or []:
                if isinstance(r, Mapping):
                    rows.append({"output": o.get("name"), "temperature_K": T, "row": "quantity",
                                 **{c: r.get(c) for c in cols[3:13]}})
            for c in b.get("covariance_rows") or []:
                if isinstance(c, Mapping):
                    a, bb = (list(c.get("between") or []) + [None, None])[:2]
                    rows.append({"output": o.get("name"), "temperature_K": T, "row": "covariance",
                                 "variance": c.get("variance"), "share": c.get("share"), "between_1": a, "between_2": bb,
                                 "correlation": c.get("correlation")})
            rows.append({"output": o.get("name"), "temperature_K": T, "row": "combined", "unit": b.get("unit"),
                         "standard_uncertainty": b.get("standard_uncertainty"), "variance": b.get("variance"), "share": 1.0})
        if rows:
            out[f"budget-{slug}"] = pd.DataFrame(rows, columns=cols)
    return out


__all__ = ["budget_table", "budget_frames", "has_budget"]
