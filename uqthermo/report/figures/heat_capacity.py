"""The heat-capacity data actually used: Cp(T) of each species over its path, with its uncertainty.

Drawn from ``results["heat_capacity_curves"]`` (see :mod:`uqthermo.pipeline.report_data`):
one panel per species, each phase's curve with the band estimate ± k·u(Cp) (k from the
normal distribution for the run's coverage probability; u from the GUM law of
propagation, exact for a model linear in its coefficients), the part of the curve the
outputs integrate over drawn solid and the rest dashed, the validity range (shaded grey
outside it where extrapolation was allowed), the inner boundaries of piecewise models
(dotted) and the phase changes (green dashed, labelled). Temperatures in K (appendix).

Up to :data:`PANELS_PER_FIGURE` species per figure (``cp-data``, ``cp-data-2``, …).
"""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from .. import style
from ..style import ROLE, mpl_text
from ..fields import coverage_probability, num, text
from ..rounding import fmt_temperature, pct_label

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

PANELS_PER_FIGURE = 8
PHASE_COLORS = [style.PALETTE["blue"], style.PALETTE["vermillion"], style.PALETTE["purple"], style.PALETTE["orange"]]


def curves(results: Mapping) -> list[dict]:
    return [c for c in results.get("heat_capacity_curves") or [] if isinstance(c, Mapping) and c.get("phases")]


def figure_groups(results: Mapping) -> list[tuple[str, list[dict]]]:
    """``[(figure name, species entries)]`` in chunks of :data:`PANELS_PER_FIGURE`."""
    cs = curves(results)
    out = []
    for i in range(0, len(cs), PANELS_PER_FIGURE):
        out.append(("cp-data" if i == 0 else f"cp-data-{i // PANELS_PER_FIGURE + 1}", cs[i:i + PANELS_PER_FIGURE]))
    return out


def caption(results: Mapping) -> str:
    from scipy import stats

    p = coverage_probability(results)
    k = float(stats.norm.ppf(0.5 + p / 2))
    return (f"Heat capacities as used, per species: estimate (line) and {pct_label(p)} band ± {k:.2f}·u(Cp) (shaded) over "
            "the temperatures the outputs integrate over (solid; dashed beyond them), validity ranges (grey outside), "
            "inner range boundaries of piecewise models (dotted) and phase changes (green dashed). Temperatures in K.")


def draw(results: Mapping, entries: list[dict]) -> Figure:
    from scipy import stats

    n = len(entries)
    ncols = 1 if n == 1 else 2
    nrows = math.ceil(n / ncols)
    fig, axes = plt.subplots(nrows, ncols, figsize=(style.FIG_WIDTH_IN, 2.25 * nrows + 0.75), layout="constrained",
                             squeeze=False)
    for ax in axes.flat[n:]:
        ax.set_visible(False)
    k = float(stats.norm.ppf(0.5 + coverage_probability(results) / 2))
    marks: dict[str, bool] = {}
    for ax, entry in zip(axes.flat, entries):
        _panel(ax, entry, k, marks)
    handles = [plt.Line2D([], [], color=style.INK, linewidth=1.6),
               plt.Line2D([], [], color=style.INK, linewidth=1.0, linestyle="--"),
               plt.Rectangle((0, 0), 1, 1, color=ROLE["mc_band"])]
    labels = ["Cp over the temperatures used", "Cp beyond them", f"± {k:.2f}·u(Cp)"]
    if marks.get("phase"):
        handles.append(plt.Line2D([], [], color=ROLE["phase"], linewidth=1.0, linestyle=(0, (4, 2))))
        labels.append("phase change")
    if marks.get("boundary"):
        handles.append(plt.Line2D([], [], color=style.GREY, linewidth=0.8, linestyle=":"))
        labels.append("range boundary")
    fig.legend(handles, labels, loc="outside lower center", ncols=len(labels), fontsize=7.5, frameon=False)
    fig.suptitle("Heat-capacity data used", x=0.008, ha="left", fontsize=10.5, fontweight="bold", color=style.INK)
    return fig


def _panel(ax, entry: Mapping, k: float, marks: dict) -> None:
    sp = text(entry.get("species"))
    name = text(entry.get("name"))
    lo_all, hi_all = math.inf, -math.inf
    ymin, ymax = math.inf, -math.inf
    for i, ph in enumerate(entry.get("phases") or []):
        T = np.asarray(ph.get("temperature_K") or [], dtype=float)
        cp = np.asarray([np.nan if v is None else v for v in ph.get("cp") or []], dtype=float)
        u = np.asarray([0.0 if v is None else v for v in ph.get("standard_uncertainty") or []], dtype=float)
        if T.size == 0 or cp.size != T.size:
            continue
        color = PHASE_COLORS[i % len(PHASE_COLORS)]
        u = u if u.size == T.size else np.zeros_like(T)
        ax.fill_between(T, cp - k * u, cp + k * u, color=color, alpha=0.18, linewidth=0)
        used = ph.get("used_K") or [T[0], T[-1]]
        a, b = num(used[0]), num(used[1])
        inside = (T >= (a if a is not None else T[0]) - 1e-9) & (T <= (b if b is not None else T[-1]) + 1e-9)
        ax.plot(T, np.where(inside, np.nan, cp), color=color, linewidth=1.0, linestyle="--")
        ax.plot(T, np.where(inside, cp, np.nan), color=color, linewidth=1.8)
        ax.plot([], [], color=color, linewidth=1.8, label=mpl_text(f"{sp}({text(ph.get('phase'))}), {text(ph.get('model'))}"))
        lo_all, hi_all = min(lo_all, T[0]), max(hi_all, T[-1])
        finite = np.isfinite(cp)
        if finite.any():
            ymin = min(ymin, float(np.min((cp - k * u)[finite])))
            ymax = max(ymax, float(np.max((cp + k * u)[finite])))
        ranges = ph.get("ranges_K") or []
        for r_i, rg in enumerate(ranges):
            r_lo = num(rg[0])
            if r_i > 0 and r_lo is not None and T[0] < r_lo < T[-1]:
                ax.axvline(r_lo, color=style.GREY, linewidth=0.8, linestyle=":")
                marks["boundary"] = True
        if ranges and ph.get("extrapolation_allowed"):
            v_lo = num(ranges[0][0])
            v_hi = num(ranges[-1][1]) if len(ranges[-1]) > 1 else None
            if v_lo is not None and T[0] < v_lo:
                ax.axvspan(T[0], v_lo, color=style.LIGHT_GREY, alpha=0.5, linewidth=0)
            if v_hi is not None and T[-1] > v_hi:
                ax.axvspan(v_hi, T[-1], color=style.LIGHT_GREY, alpha=0.5, linewidth=0)
    if not math.isfinite(lo_all):
        ax.set_visible(False)
        return
    for tr in entry.get("transitions") or []:
        t = num(tr.get("temperature_K"))
        if t is None or not (lo_all <= t <= hi_all):
            continue
        ax.axvline(t, color=ROLE["phase"], linewidth=1.0, linestyle=(0, (4, 2)))
        ax.annotate(mpl_text(f"{text(tr.get('transition')).replace('-', ' → ')} at {fmt_temperature(t)} K"),
                    (t, 0.97), xycoords=("data", "axes fraction"), xytext=(-3, 0), textcoords="offset points",
                    fontsize=7, color="#00684A", rotation=90, va="top", ha="right")
        marks["phase"] = True
    valid = []
    for ph in entry.get("phases") or []:
        rg = ph.get("ranges_K") or []
        if rg:
            hi = rg[-1][1] if len(rg[-1]) > 1 else None
            valid.append(f"{text(ph.get('phase'))} {fmt_temperature(rg[0][0])}–{fmt_temperature(hi) if hi is not None else '∞'} K")
    title = f"{sp}" + (f" ({name})" if name and name != sp else "")
    ax.set_title(mpl_text(title), fontsize=9)
    if valid:
        ax.text(0.99, 0.03, mpl_text("valid: " + "; ".join(valid)), transform=ax.transAxes, ha="right", va="bottom",
                fontsize=6.8, color=style.GREY)
    pad = 0.12 * (ymax - ymin if ymax > ymin else max(abs(ymax), 1.0))
    ax.set_ylim(ymin - pad, ymax + 1.6 * pad)
    ax.legend(loc="upper left" if _rising(entry) else "lower left", fontsize=7, handlelength=1.4, borderpad=0.25)
    ax.set_xlim(lo_all, hi_all)
    ax.set_xlabel("T / K", fontsize=8.5)
    ax.set_ylabel("Cₚ / (J/(mol·K))", fontsize=8.5)
    ax.tick_params(labelsize=7.5)


__all__ = ["draw", "figure_groups", "caption", "curves", "PANELS_PER_FIGURE"]


def _rising(entry: Mapping) -> bool:
    """Whether Cp rises over the panel (the legend then goes top left, where the curves are low)."""
    first = [p for p in entry.get("phases") or [] if p.get("cp")]
    if not first:
        return True
    a, b = first[0]["cp"][0], first[-1]["cp"][-1]
    return a is None or b is None or b >= a
