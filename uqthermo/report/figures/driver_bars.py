"""The ``drivers-<output>`` figure: horizontal bars of the variance shares of the headline point with their
confidence intervals (``share_ci``) and the covariance rows, the same rows as the terminal and the driver table
(:mod:`uqthermo.report.drivers`)."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .. import style
from ..fields import text
from ..rounding import fmt_temperature
from ..style import ROLE, mpl_text
from .labels import set_titles

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

__all__ = ["MAX_BARS", "draw_drivers", "drivers_caption"]


MAX_BARS = 10


def draw_drivers(output: Mapping, point: Mapping) -> Figure:
    """The ``drivers-<output>`` figure of one point: one bar per driver row (:func:`uqthermo.report.drivers.driver_rows`)."""
    from ..drivers import driver_rows, share_text

    rows = driver_rows(point, max_data=MAX_BARS, skip_zero=True)
    labels = [mpl_text(r.label.replace("covariance ", "").replace(" ~ ", " ~\n") + " (cov.)" if r.kind == "covariance"
                       else r.label) for r in rows]
    vals = [100 * r.share for r in rows]
    los, his = [], []
    for r, v in zip(rows, vals):
        los.append(v - 100 * r.share_ci[0] if r.share_ci else np.nan)
        his.append(100 * r.share_ci[1] - v if r.share_ci else np.nan)
    colors = [{"datum": ROLE["driver"], "others": style.GREY}.get(r.kind, ROLE["correlation"]) for r in rows]
    hatches = ["////" if r.kind == "covariance" else "" for r in rows]
    texts = [f"{share_text(r.share)} %" for r in rows]
    n = len(vals)
    fig, ax = plt.subplots(figsize=(style.FIG_WIDTH_IN, 1.25 + 0.34 * max(n, 2)), layout="constrained")
    y = np.arange(n)[::-1]
    bars = ax.barh(y, vals, color=colors, height=0.62, edgecolor="white", linewidth=0.5)
    for b, h in zip(bars, hatches):
        if h:
            b.set_hatch(h)
            b.set_edgecolor("white")
    err = np.array([los, his], dtype=float)
    if np.isfinite(err).any():
        ok = np.isfinite(err).all(axis=0)
        ax.errorbar(np.asarray(vals)[ok], y[ok], xerr=np.abs(err[:, ok]), fmt="none", ecolor=style.INK,
                    elinewidth=1.0, capsize=3, label="confidence interval")
    vmax = max([abs(v) for v in vals] + [1.0])
    right = [v + (his[i] if np.isfinite(his[i]) else 0) for i, v in enumerate(vals)]
    for i, (yy, v) in enumerate(zip(y, vals)):
        x = right[i] if v >= 0 else 0.0     # a negative bar's value sits right of the zero line
        ax.text(x + 0.012 * vmax, yy, texts[i], va="center", ha="left", fontsize=8, color=style.INK)
    ax.set_yticks(y, labels)
    ax.axvline(0, color=style.GREY, linewidth=0.8)
    lo_lim = min(0.0, min(vals) * 1.25)
    ax.set_xlim(lo_lim - (0.02 * vmax if lo_lim < 0 else 0), max(right + [0]) * 1.18 + 0.02 * vmax)
    ax.grid(axis="y", visible=False)
    method = point.get("drivers_method")
    if method == "linear":
        ax.set_xlabel("share of $u^2(y)$ / % (the rows sum to 100 %)")
        sub = "linear variance contributions by datum (GUM budget)"
        if any(r.kind == "covariance" for r in rows):
            sub = "GUM budget by datum; hatched: covariance terms of correlated data, signed (JCGM 100 §5.2.2)"
    else:
        ax.set_xlabel("first-order Sobol index $S_1$ / %" if method == "sobol" else "share / %")
        sub = "ranking by first-order Sobol indices" if method == "sobol" else f"ranking by {text(method) or 'shares'}"
    set_titles(fig, f"{mpl_text(text(output.get('name')))}: what drives u(y) at T = {fmt_temperature(point.get('temperature_K'))} K",
            mpl_text(sub))
    if np.isfinite(err).any():
        ax.legend(loc="lower right", fontsize=8)
    return fig


def drivers_caption(point: Mapping) -> str:
    """Caption of the driver figure: what the bars are and what they sum to."""
    from ..drivers import rows_sum_note

    note = rows_sum_note(point) or "driver shares"
    ci = "; bars carry confidence intervals" if any(d.get("share_ci") for d in point.get("drivers") or []
                                                   if isinstance(d, Mapping)) else ""
    return note[0].upper() + note[1:] + ci + "."
