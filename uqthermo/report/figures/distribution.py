"""The ``distribution-<output>`` figure: the Monte Carlo histogram (``monte_carlo.histogram``) of the headline
point, the coverage interval shaded, the linear (GUM) approximation overlaid as a normal or scaled-and-shifted
t density (GUM G.6.2), and the limit when the output has one (with the safety marks of an adiabatic rise,
:mod:`.safety_marks`)."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from .. import style
from ..fields import coverage_probability, limit_on_output, num, pair, text
from ..rounding import fmt_fixed, pct_label, uncertainty_decimals
from ..style import ROLE, mpl_text
from ..tables.design import limit_text, probability_cell
from .labels import axis_label, axis_symbol, location_text, set_titles
from .safety_marks import band_text, draw_marks, draw_threshold, split_plateau, threshold_u

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

__all__ = ["draw_distribution"]


def _nu(lin: Mapping) -> float:
    v = lin.get("effective_dof")
    if isinstance(v, str):
        return math.inf
    v = num(v)
    return math.inf if v is None or v > 1e6 else v


def draw_distribution(results: Mapping, output: Mapping, point: Mapping) -> Figure:
    """The ``distribution-<output>`` figure of one point: Monte Carlo histogram, linear density, limit."""
    from scipy import stats

    mc = point.get("monte_carlo") or {}
    lin = point.get("linear") or {}
    hist = mc.get("histogram") or {}
    edges = np.asarray(hist.get("edges") or [], dtype=float)
    counts = np.asarray(hist.get("counts") or [], dtype=float)
    unit = text(output.get("unit"))
    p_cov = coverage_probability(results, point)
    u = num(mc.get("standard_uncertainty")) or num(lin.get("standard_uncertainty"))
    dec = uncertainty_decimals(u)

    fig, ax = plt.subplots(figsize=(style.FIG_WIDTH_IN, 3.9), layout="constrained")
    lo_x, hi_x = (edges[0], edges[-1]) if edges.size else (None, None)
    atom: tuple[float | None, float] = (None, 0.0)
    if edges.size >= 2 and counts.size == edges.size - 1 and counts.sum() > 0:
        widths = np.diff(edges)
        total = counts.sum()
        counts, *atom = split_plateau(output, point, edges, counts)   # a boiling plateau is drawn as a spike
        dens = counts / (total * widths)
        n_lab = f"Monte Carlo histogram, N = {int(num(mc.get('samples')) or counts.sum())}"
        lo, hi = pair(mc.get("coverage_interval"))
        inside = lo is not None and hi is not None
        ax.stairs(dens, edges, fill=True, color="#DCE9F4", label=None if inside else n_lab)
        if inside:
            ax.stairs(dens, np.clip(edges, lo, hi), fill=True, color=ROLE["mc_band"], label=n_lab)
        lim = limit_on_output(output, point)
        below = isinstance(output.get("limit"), Mapping) and output["limit"].get("side") == "below"
        if lim is not None and not below and lim < edges[-1]:
            ax.stairs(dens, np.clip(edges, lim, edges[-1]), fill=True, color=ROLE["limit"], alpha=0.45, hatch="////",
                      label="beyond the limit")
        elif lim is not None and below and lim > edges[0]:
            ax.stairs(dens, np.clip(edges, edges[0], lim), fill=True, color=ROLE["limit"], alpha=0.45, hatch="////",
                      label="beyond the limit")
        ax.stairs(dens, edges, color=ROLE["mc"], linewidth=0.9)
        ymax = dens.max()
    else:
        ymax = 1.0
    lo, hi = pair(mc.get("coverage_interval"))
    if lo is not None and hi is not None:
        for x in (lo, hi):
            ax.axvline(x, color=ROLE["mc"], linewidth=1.2, linestyle="-")
        ax.plot([], [], color=ROLE["mc"], linewidth=1.2,
                label=f"{pct_label(p_cov)} interval (MC) [{fmt_fixed(lo, dec)}, {fmt_fixed(hi, dec)}]")
    y_lin, u_lin = num(lin.get("estimate")), num(lin.get("standard_uncertainty"))
    if y_lin is not None and u_lin and u_lin > 0:
        nu = _nu(lin)
        a = lo_x if lo_x is not None else y_lin - 5 * u_lin
        b = hi_x if hi_x is not None else y_lin + 5 * u_lin
        xs = np.linspace(min(a, y_lin - 4.5 * u_lin), max(b, y_lin + 4.5 * u_lin), 600)
        if math.isfinite(nu) and nu > 0:
            pdf = stats.t.pdf((xs - y_lin) / u_lin, nu) / u_lin
            lab = f"linear (GUM): scaled t, ν_eff = {int(round(nu))}"
        else:
            pdf = stats.norm.pdf(xs, y_lin, u_lin)
            lab = "linear (GUM): normal"
        ax.plot(xs, pdf, color=ROLE["linear"], linewidth=1.6, linestyle="--", label=lab)
        ymax = max(ymax, pdf.max())
        llo, lhi = pair(lin.get("coverage_interval"))
        if llo is not None and lhi is not None:
            for x in (llo, lhi):
                ax.axvline(x, color=ROLE["linear"], linewidth=1.0, linestyle=":")
            ax.plot([], [], color=ROLE["linear"], linewidth=1.0, linestyle=":",
                    label=f"{pct_label(p_cov)} interval (linear) [{fmt_fixed(llo, dec)}, {fmt_fixed(lhi, dec)}]")
        if lo_x is None:
            lo_x, hi_x = xs[0], xs[-1]
    lim = limit_on_output(output, point)
    if lim is not None:
        u_lim = threshold_u(output.get("limit"))     # the limit's unit is the output's (K for a final temperature)
        draw_threshold(ax, lim, u_lim, ROLE["limit"], "-.", 1.8)
        pe = point.get("exceedance_probability")
        lab = f"limit: {limit_text(output)}" if limit_text(output) else "limit"
        lab += band_text(u_lim, text((output.get("limit") or {}).get("unit")) or "")
        ax.plot([], [], color=ROLE["limit"], linewidth=1.8, linestyle="-.", label=mpl_text(lab))
        if pe is not None:   # on its own legend line: the bound and the trials make it long
            ptxt = probability_cell(point, "exceedance_probability")
            ax.plot([], [], color="none", label=mpl_text(f"P {'' if ptxt.startswith('<') else '= '}{ptxt}"))
        if lo_x is not None:
            span = hi_x - lo_x
            lo_x, hi_x = min(lo_x, lim - 2 * u_lim - 0.03 * span), max(hi_x, lim + 2 * u_lim + 0.03 * span)
    if output.get("kind") == "adiabatic_temperature_rise" and lo_x is not None:
        lo_x, hi_x = draw_marks(ax, results, output, point, tuple(atom), ymax, (lo_x, hi_x))
    if lo_x is not None:
        ax.set_xlim(lo_x, hi_x)
    ax.set_ylim(0, ymax * 1.08)
    ax.set_xlabel(axis_label(axis_symbol(output.get("kind")), unit))
    ax.set_ylabel("probability density")
    set_titles(fig, f"{mpl_text(text(output.get('name')))}: output distribution {location_text(results, output, point)}")
    handles, labels = ax.get_legend_handles_labels()
    ncols = 2 if max(map(len, labels), default=0) <= 58 else 1
    fig.set_figheight(2.85 + 0.19 * math.ceil(len(labels) / ncols))     # the plot keeps its height beside a long legend
    fig.legend(handles, labels, loc="outside lower center", ncols=ncols, fontsize=8, frameon=False)
    ax.grid(axis="x", visible=False)
    return fig
