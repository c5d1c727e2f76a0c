"""Figures of the report (matplotlib, Agg backend), drawn from the results dict alone.

Figures, each written as ``NAME.png`` and ``NAME.svg``:

* ``distribution-<output>`` — the Monte Carlo histogram (``monte_carlo.histogram``) of
  the headline point, the coverage interval shaded, the linear (GUM) approximation
  overlaid as a normal or scaled-and-shifted t density (GUM G.6.2), and the limit
  when the output has one;
* ``curve-<output>`` — for outputs with more than one point: estimate against
  temperature with the Monte Carlo coverage band and the linear interval, phase
  changes marked as labelled vertical lines; a lower panel shows u(y) for both methods;
* ``drivers-<output>`` — horizontal bars of the variance shares of the headline point
  with their confidence intervals (``share_ci``) and the net correlation part;
* ``convergence`` — u(y) against the number of Monte Carlo trials, one panel per
  output in ``results["convergence"]``, with the final value ± the validation tolerance;
* ``plan-front`` — the planner's cost–uncertainty front (see :mod:`uqthermo.report`
  for the ``plan`` section's shape).

All user text reaching matplotlib goes through :func:`~uqthermo.report.style.mpl_text`.
"""

from __future__ import annotations

import io
import math
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from . import files, style
from .safety_marks import draw_marks, split_plateau
from .units import fmt_T, temperature_unit
from .style import ROLE, mpl_text
from .fields import coverage_probability, headline_index, limit_on_output, num, outputs, pair, points, slugs, text
from .rounding import fmt_fixed, fmt_temperature, pct_label, uncertainty_decimals
from .tables.design import limit_text, probability_cell

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.ticker import NullLocator  # noqa: E402


@dataclass
class FigureSpec:
    """A figure to draw: ``draw()`` returns a matplotlib Figure."""

    name: str
    section: str          # "output" | "convergence" | "plan"
    output_index: int | None
    title: str            # plain text (escaped by the templates)
    caption: str          # plain text (escaped by the templates)
    draw: Callable[[], Figure]


@dataclass
class RenderedFigure:
    name: str
    section: str
    output_index: int | None
    title: str
    caption: str
    png: bytes
    svg: bytes


SYMBOLS = {
    "reaction_enthalpy": "ΔᵣH",
    "heating_enthalpy": "ΔH",
    "heat_release": "Q̇",
    "adiabatic_temperature_rise": "ΔT_ad",
    "reaction_gibbs_energy": "ΔᵣG",
    "equilibrium_constant": "log₁₀ K",
}


def _sym(kind) -> str:
    return SYMBOLS.get(kind or "", "y")


def _titles(fig: Figure, main: str, sub: str | None = None) -> None:
    """Figure title at the top left (already-escaped text), optional grey subtitle."""
    import textwrap

    main = "\n".join(textwrap.wrap(main, 90)) or main
    if sub:
        fig.suptitle(main + "\n", x=0.008, ha="left", fontsize=10.5, fontweight="bold", color=style.INK, linespacing=1.5)
        fig.text(0.008, 1.0, "\n" + sub, ha="left", va="top", fontsize=8.5, color=style.GREY,
                 transform=fig.transFigure, linespacing=2.1)
    else:
        fig.suptitle(main, x=0.008, ha="left", fontsize=10.5, fontweight="bold", color=style.INK)


def _axis_label(symbol: str, unit: str) -> str:
    unit = mpl_text(unit or "1")
    if unit == "1":
        return symbol
    if "/" in unit or " " in unit:
        return f"{symbol} / ({unit})"
    return f"{symbol} / {unit}"


def _at(results: Mapping, output: Mapping, point: Mapping) -> str:
    """Where a point is, in the case's temperature unit with kelvin beside: "at 350 °C (623.15 K)"."""
    tunit = temperature_unit(results)
    start = output.get("kind") == "adiabatic_temperature_rise" and num(output.get("start_temperature_K")) is not None
    T = output.get("start_temperature_K") if start else point.get("temperature_K")
    if num(T) is None:
        return ""
    where = "from" if start else "at"
    k = f"{fmt_temperature(T)} K"
    return f"{where} {k}" if tunit == "K" else f"{where} {fmt_T(T, tunit)} ({k})"


def _nu(lin: Mapping) -> float:
    v = lin.get("effective_dof")
    if isinstance(v, str):
        return math.inf
    v = num(v)
    return math.inf if v is None or v > 1e6 else v


# ---------------------------------------------------------------------------
# (1) output distribution
# ---------------------------------------------------------------------------

def _draw_distribution(results: Mapping, output: Mapping, point: Mapping) -> Figure:
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
        ax.axvline(lim, color=ROLE["limit"], linewidth=1.8, linestyle="-.")
        pe = point.get("exceedance_probability")
        lab = f"limit: {limit_text(output)}" if limit_text(output) else "limit"
        ax.plot([], [], color=ROLE["limit"], linewidth=1.8, linestyle="-.", label=mpl_text(lab))
        if pe is not None:   # on its own legend line: the bound and the trials make it long
            ptxt = probability_cell(point, "exceedance_probability")
            ax.plot([], [], color="none", label=mpl_text(f"P {'' if ptxt.startswith('<') else '= '}{ptxt}"))
        if lo_x is not None:
            span = hi_x - lo_x
            lo_x, hi_x = min(lo_x, lim - 0.03 * span), max(hi_x, lim + 0.03 * span)
    if output.get("kind") == "adiabatic_temperature_rise" and lo_x is not None:
        lo_x, hi_x = draw_marks(ax, results, output, point, tuple(atom), ymax, (lo_x, hi_x))
    if lo_x is not None:
        ax.set_xlim(lo_x, hi_x)
    ax.set_ylim(0, ymax * 1.08)
    ax.set_xlabel(_axis_label(_sym(output.get("kind")), unit))
    ax.set_ylabel("probability density")
    _titles(fig, f"{mpl_text(text(output.get('name')))}: output distribution {_at(results, output, point)}")
    handles, labels = ax.get_legend_handles_labels()
    ncols = 2 if max(map(len, labels), default=0) <= 58 else 1
    fig.set_figheight(2.85 + 0.19 * math.ceil(len(labels) / ncols))     # the plot keeps its height beside a long legend
    fig.legend(handles, labels, loc="outside lower center", ncols=ncols, fontsize=8, frameon=False)
    ax.grid(axis="x", visible=False)
    return fig


# ---------------------------------------------------------------------------
# (2) curve outputs
# ---------------------------------------------------------------------------

def _draw_curve(results: Mapping, output: Mapping) -> Figure:
    pts = sorted(points(output), key=lambda p: num(p.get("temperature_K")) or 0.0)
    T = np.array([num(p.get("temperature_K")) or np.nan for p in pts])

    def arr(getter):
        return np.array([v if (v := getter(p)) is not None else np.nan for p in pts], dtype=float)

    mc_y = arr(lambda p: num((p.get("monte_carlo") or {}).get("mean")))
    mc_u = arr(lambda p: num((p.get("monte_carlo") or {}).get("standard_uncertainty")))
    mc_lo = arr(lambda p: pair((p.get("monte_carlo") or {}).get("coverage_interval"))[0])
    mc_hi = arr(lambda p: pair((p.get("monte_carlo") or {}).get("coverage_interval"))[1])
    li_y = arr(lambda p: num((p.get("linear") or {}).get("estimate")))
    li_u = arr(lambda p: num((p.get("linear") or {}).get("standard_uncertainty")))
    li_lo = arr(lambda p: pair((p.get("linear") or {}).get("coverage_interval"))[0])
    li_hi = arr(lambda p: pair((p.get("linear") or {}).get("coverage_interval"))[1])
    not_valid = np.array([p.get("linear_validated") is False for p in pts])
    p_cov = coverage_probability(results)
    unit = text(output.get("unit"))

    fig, (ax, axu) = plt.subplots(2, 1, figsize=(style.FIG_WIDTH_IN, 5.0), sharex=True,
                                  gridspec_kw={"height_ratios": [2.3, 1]}, layout="constrained")
    have_mc = np.isfinite(mc_y).any()
    y_main = mc_y if have_mc else li_y
    if np.isfinite(mc_lo).any():
        ax.fill_between(T, mc_lo, mc_hi, color=ROLE["mc_band"], alpha=0.75, linewidth=0,
                        label=f"{pct_label(p_cov)} coverage band (Monte Carlo)")
    if np.isfinite(li_lo).any():
        ax.plot(T, li_lo, color=ROLE["linear"], linestyle="--", linewidth=1.2, label=f"{pct_label(p_cov)} interval (linear)")
        ax.plot(T, li_hi, color=ROLE["linear"], linestyle="--", linewidth=1.2)
    ax.plot(T, y_main, color=ROLE["mc"], marker="o", markersize=3.8, linewidth=1.8,
            label="estimate (Monte Carlo mean)" if have_mc else "estimate (linear)")
    if not_valid.any():
        ax.plot(T[not_valid], y_main[not_valid], linestyle="none", marker="o", markersize=9, markerfacecolor="none",
                markeredgecolor=ROLE["linear"], markeredgewidth=1.3, label="linear method not validated")
    if np.isfinite(mc_u).any():
        axu.plot(T, mc_u, color=ROLE["mc"], marker="o", markersize=3.5, label="Monte Carlo")
    if np.isfinite(li_u).any():
        axu.plot(T, li_u, color=ROLE["linear"], linestyle="--", marker="s", markersize=3, markerfacecolor="white", label="linear (GUM)")

    # phase changes: dashed lines; labels in the headroom, close ones merged
    pcs = sorted([pc for pc in output.get("phase_changes") or [] if num(pc.get("temperature_K")) is not None],
                 key=lambda pc: num(pc["temperature_K"]))
    if pcs:
        span = (np.nanmax(T) - np.nanmin(T)) or 1.0
        groups: list[list[dict]] = []
        for pc in pcs:
            if groups and num(pc["temperature_K"]) - num(groups[-1][-1]["temperature_K"]) < 0.08 * span:
                groups[-1].append(pc)
            else:
                groups.append([pc])
        for gi, grp in enumerate(groups):
            lines = []
            for pc in grp:
                tp = num(pc["temperature_K"])
                for a in (ax, axu):
                    a.axvline(tp, color=ROLE["phase"], linewidth=1.0, linestyle=(0, (4, 2)), zorder=1)
                tr = text(pc.get("transition")).replace("-", " → ")
                lines.append(mpl_text(f"{text(pc.get('species'))} {tr} at {fmt_temperature(tp)} K"))
            t0 = num(grp[-1]["temperature_K"])
            right_room = (np.nanmax(T) - t0) > 0.3 * span
            ax.annotate("\n".join(lines), xy=(t0, 0.985), xycoords=("data", "axes fraction"),
                        xytext=(5 if right_room else -5, 0), textcoords="offset points", va="top",
                        ha="left" if right_room else "right", fontsize=7.8, color="#00684A",
                        bbox=dict(boxstyle="round,pad=0.25", facecolor="white", edgecolor="none", alpha=0.9))
        ax.plot([], [], color=ROLE["phase"], linewidth=1.0, linestyle=(0, (4, 2)), label="phase change")

    sym = _sym(output.get("kind"))
    ax.set_ylabel(_axis_label(sym, unit))
    axu.set_ylabel(_axis_label("u", unit))
    axu.set_xlabel("T / K")
    tunit = temperature_unit(results)
    if tunit != "K":      # the case's own unit on top (the concise section shows this figure)
        from .units import OFFSET, symbol

        a, b = OFFSET[tunit]
        top = ax.secondary_xaxis("top", functions=(lambda T: a * T + b, lambda t: (t - b) / a))
        top.set_xlabel(f"t / {symbol(tunit)}", fontsize=8.5)
        top.tick_params(labelsize=8)
    _titles(fig, f"{mpl_text(text(output.get('name')))}: {sym} against temperature")
    ax.legend(loc="lower left", fontsize=8, ncols=2)
    axu.legend(loc="upper left", fontsize=8, ncols=2)
    allv = np.r_[mc_lo, li_lo, y_main, mc_hi, li_hi]
    lo = np.nanmin(allv) if np.isfinite(allv).any() else 0.0
    hi = np.nanmax(allv) if np.isfinite(allv).any() else 1.0
    pad = (hi - lo) or 1.0
    ax.set_ylim(lo - 0.42 * pad, hi + (0.30 if pcs else 0.08) * pad)
    umax = np.nanmax(np.r_[mc_u, li_u]) if np.isfinite(np.r_[mc_u, li_u]).any() else 1
    axu.set_ylim(0, umax * 1.45)
    return fig


# ---------------------------------------------------------------------------
# (3) driver shares
# ---------------------------------------------------------------------------

MAX_BARS = 10


def _draw_drivers(output: Mapping, point: Mapping) -> Figure:
    from .drivers import driver_rows, share_text

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
    _titles(fig, f"{mpl_text(text(output.get('name')))}: what drives u(y) at T = {fmt_temperature(point.get('temperature_K'))} K",
            mpl_text(sub))
    if np.isfinite(err).any():
        ax.legend(loc="lower right", fontsize=8)
    return fig


def _drivers_caption(point: Mapping) -> str:
    """Caption of the driver figure: what the bars are and what they sum to."""
    from .drivers import rows_sum_note

    note = rows_sum_note(point) or "driver shares"
    ci = "; bars carry confidence intervals" if any(d.get("share_ci") for d in point.get("drivers") or []
                                                   if isinstance(d, Mapping)) else ""
    return note[0].upper() + note[1:] + ci + "."


# ---------------------------------------------------------------------------
# (4) Monte Carlo convergence
# ---------------------------------------------------------------------------

def _draw_convergence(results: Mapping) -> Figure:
    """u(y) against N per output; the final value and final ± δ as thin lines, one legend under the panels.

    The y-range follows the data (the last three quarters of the trials, where the value
    settles, plus the first points when they fit): a tolerance δ much wider than the
    scatter is drawn as lines at the panel edge (or named in the panel) instead of a band
    that would fill the plot.
    """
    conv = results.get("convergence") or {}
    by_name = {text(o.get("name")): o for o in outputs(results)}
    items = [(k, v) for k, v in conv.items() if isinstance(v, list) and v]
    n = len(items)
    ncols = min(n, 2)
    nrows = math.ceil(n / ncols)
    fig, axes = plt.subplots(nrows, ncols, figsize=(style.FIG_WIDTH_IN, 2.35 * nrows + 0.7), layout="constrained",
                             squeeze=False)
    for ax in axes.flat[n:]:
        ax.set_visible(False)
    for ax, (name, hist) in zip(axes.flat, items):
        arr = np.array([[num(a), num(b)] for a, b in (h[:2] for h in hist if isinstance(h, (list, tuple)) and len(h) >= 2)], dtype=float)
        arr = arr[np.isfinite(arr).all(axis=1)]
        o = by_name.get(text(name), {})
        unit = text(o.get("unit"))
        if arr.size:
            final = arr[-1, 1]
            pts = points(o)
            tol = None
            if pts:
                p = pts[headline_index(o)]
                tol = num((p.get("validation") or {}).get("tolerance"))
            ax.plot(arr[:, 0], arr[:, 1], color=ROLE["mc"], marker="o", markersize=2.8, linewidth=1.3, label="u(y)")
            ax.axhline(final, color=style.GREY, linewidth=0.9, linestyle="--", label="final u(y)")
            ax.set_xscale("log")
            ys = arr[:, 1]
            spread = max(np.ptp(ys), 1e-12 + abs(final) * 1e-4)
            lo, hi = ys.min() - 0.12 * spread, ys.max() + 0.12 * spread
            if tol:
                if final - tol >= lo - 2 * spread and final + tol <= hi + 2 * spread:
                    for v in (final - tol, final + tol):
                        ax.axhline(v, color=ROLE["linear"], linewidth=0.9, linestyle=":")
                    lo, hi = min(lo, final - tol - 0.05 * spread), max(hi, final + tol + 0.05 * spread)
                else:
                    ax.text(0.98, 0.04, mpl_text(f"final u ± δ = {fmt_fixed(final, uncertainty_decimals(tol))} ± {tol:g}: "
                                                 "δ wider than the axis"), transform=ax.transAxes, ha="right", va="bottom",
                            fontsize=7.2, color=ROLE["linear"])
            ax.set_ylim(lo, hi)
        ax.set_title(mpl_text(text(name)), fontsize=9.5)
        ax.set_xlabel("number of Monte Carlo trials N")
        ax.set_ylabel(_axis_label("u(y)", unit))
        ax.xaxis.set_minor_locator(NullLocator())          # minor ticks of a log axis cost more than they tell
    handles = [plt.Line2D([], [], color=ROLE["mc"], marker="o", markersize=2.8, linewidth=1.3),
               plt.Line2D([], [], color=style.GREY, linewidth=0.9, linestyle="--"),
               plt.Line2D([], [], color=ROLE["linear"], linewidth=0.9, linestyle=":")]
    fig.legend(handles, ["u(y) after N trials", "final u(y)", "final u(y) ± δ (numerical tolerance, JCGM 101 §7.9)"],
               loc="outside lower center", ncols=3, fontsize=8, frameon=False)
    _titles(fig, "Monte Carlo convergence of the standard uncertainty")
    return fig


# ---------------------------------------------------------------------------
# (5) planner front
# ---------------------------------------------------------------------------

def _set_label(s) -> str:
    s = [text(x) for x in (s or [])]
    return "+".join(s) if s else "now"


def draw_plan(plan: Mapping) -> Figure:
    front = [f for f in plan.get("front") or [] if num(f.get("cost")) is not None and num(f.get("U")) is not None]
    front.sort(key=lambda f: num(f["cost"]))
    evaluated = [e for e in plan.get("evaluated") or [] if num(e.get("cost")) is not None and num(e.get("U")) is not None]
    tgt = plan.get("target") or {}
    unit = text(tgt.get("unit"))
    cur = text(plan.get("currency")) or "cost units"
    fig, ax = plt.subplots(figsize=(style.FIG_WIDTH_IN, 3.8), layout="constrained")
    if evaluated:
        ax.scatter([num(e["cost"]) for e in evaluated], [num(e["U"]) for e in evaluated], s=14, color=style.LIGHT_GREY,
                   edgecolor=style.GREY, linewidth=0.4, label="other purchase sets", zorder=2)
    xs = [num(f["cost"]) for f in front]
    ys = [num(f["U"]) for f in front]
    if front:
        ax.step(xs, ys, where="post", color=ROLE["front"], linewidth=1.4, zorder=3)
        ax.scatter(xs, ys, s=26, color=ROLE["front"], zorder=4, label="cost–uncertainty front")
        labelled = [(xs[i], ys[i], mpl_text(_set_label(f.get("set")))) for i, f in enumerate(front)]
    tU = num(tgt.get("U"))
    if tU is not None:
        ax.axhline(tU, color=ROLE["limit"], linestyle="-.", linewidth=1.4, label=mpl_text(f"target U = {fmt_fixed(tU, 2)} {unit}"))
    bud = num(plan.get("budget"))
    if bud is not None:
        ax.axvline(bud, color=style.GREY, linestyle=":", linewidth=1.2, label=mpl_text(f"budget {int(bud)}"))
    best = plan.get("best") or {}
    if num(best.get("cost")) is not None and num(best.get("U")) is not None:
        ax.scatter([num(best["cost"])], [num(best["U"])], marker="*", s=190, color=ROLE["best"], edgecolor="white",
                   linewidth=0.6, zorder=5, label=mpl_text(f"recommended: {_set_label(best.get('set'))}"))
    ax.set_xlabel(mpl_text(f"cost / {cur}"))
    ax.set_ylabel(_axis_label(f"U ({pct_label(num(tgt.get('coverage_probability')) or 0.95)})", unit))
    where = ""
    if tgt.get("output"):
        where = f" for {text(tgt.get('output'))}"
        if num(tgt.get("temperature_K")) is not None:
            where += f" at {fmt_temperature(tgt.get('temperature_K'))} K"
    _titles(fig, "Data purchase plan: expanded uncertainty against cost", mpl_text(f"target{where}") if where else None)
    ax.legend(loc="upper right", fontsize=8)
    allU = ys + [num(e["U"]) for e in evaluated] + ([tU] if tU is not None else [])
    if allU and max(allU) > min(allU):
        du = max(allU) - min(allU)
        ax.set_ylim(min(allU) - 0.14 * du, max(allU) + 0.1 * du)   # room for labels below the lowest points
    allc = xs + [num(e["cost"]) for e in evaluated] + ([bud] if bud is not None else [])
    if allc and max(allc) > 0:
        ax.set_xlim(-0.03 * max(allc), max(allc) * 1.1)
    if front:
        place_labels(fig, ax, labelled)
    return fig


#: label offsets tried around a point (points): right-above, right-below, left-above, left-below, then further out
_OFFSETS = [(5, 4), (5, -11), (-5, 4), (-5, -11), (5, 14), (5, -21), (-5, 14), (-5, -21), (5, 24), (5, -31)]


def place_labels(fig: Figure, ax, items: list[tuple[float, float, str]]) -> None:
    """Label points without overlaps: each label takes the first offset whose box is clear.

    The layout is computed once (one draw) and then frozen, so the boxes measured are the
    boxes drawn. A label that finds no clear place is left out (the table lists every set).
    """
    fig.canvas.draw()
    fig.set_layout_engine("none")
    renderer = fig.canvas.get_renderer()
    taken = [m.get_window_extent(renderer) for m in ax.get_legend().get_texts()] if ax.get_legend() else []
    if ax.get_legend():
        taken.append(ax.get_legend().get_window_extent(renderer))
    axbox = ax.get_window_extent(renderer)
    figbox = fig.bbox
    pts = ax.transData.transform([(x, y) for x, y, _ in items]) if items else []
    for (x, y, label), (px, py) in zip(items, pts):
        for dx, dy in _OFFSETS:
            t = ax.annotate(label, (x, y), xytext=(dx, dy), textcoords="offset points", fontsize=7.5, color=style.INK,
                            ha="left" if dx > 0 else "right", va="bottom",
                            bbox=dict(boxstyle="round,pad=0.15", facecolor="white", edgecolor="none", alpha=0.85))
            bb = t.get_window_extent(renderer).expanded(1.04, 1.1)
            clash = (any(bb.overlaps(o) for o in taken) or bb.x0 < axbox.x0 or bb.x1 > figbox.x1 - 2
                     or bb.y1 > axbox.y1 + 8 or bb.y0 < axbox.y0)
            if not clash:
                taken.append(bb)
                break
            t.remove()


# ---------------------------------------------------------------------------
# assembly
# ---------------------------------------------------------------------------

def figure_specs(results: Mapping) -> list[FigureSpec]:
    """Every figure the results support, in report order."""
    from .fields import check_results

    check_results(results)
    specs: list[FigureSpec] = []
    for oi, (o, slug) in enumerate(zip(outputs(results), slugs(results))):
        pts = points(o)
        if not pts:
            continue
        name = text(o.get("name"))
        hp = pts[headline_index(o)]
        where = _at(results, o, hp)
        if len(pts) > 1:
            specs.append(FigureSpec(
                f"curve-{slug}", "output", oi, f"{name} against temperature",
                f"{name}: estimate against temperature with the {pct_label(coverage_probability(results))} coverage band from the Monte Carlo method "
                "(shaded) and the linear interval (dashed); vertical lines mark phase changes. Lower panel: standard uncertainty u(y).",
                (lambda o=o: _draw_curve(results, o))))
        hist = (hp.get("monte_carlo") or {}).get("histogram") or {}
        if hist.get("counts") or (hp.get("linear") or {}).get("standard_uncertainty"):
            cap = (f"{name} {where}: Monte Carlo histogram with the probabilistically symmetric coverage interval, and the linear (GUM) "
                   "approximation as a normal or scaled t density.")
            if len(pts) > 1:
                cap += " Shown at the temperature with the largest standard uncertainty."
            if limit_on_output(o, hp) is not None:
                cap += " The dash-dotted line is the limit."
            specs.append(FigureSpec(f"distribution-{slug}", "output", oi, f"{name}: output distribution", cap,
                                    (lambda o=o, hp=hp: _draw_distribution(results, o, hp))))
        if hp.get("drivers"):
            specs.append(FigureSpec(
                f"drivers-{slug}", "output", oi, f"{name}: drivers",
                f"{name} {where}: " + _drivers_caption(hp),
                (lambda o=o, hp=hp: _draw_drivers(o, hp))))
    from . import cp_figure

    for name, entries in cp_figure.figure_groups(results):
        specs.append(FigureSpec(name, "data", None, "Heat-capacity data used", cp_figure.caption(results),
                                (lambda entries=entries: cp_figure.draw(results, entries))))
    conv = results.get("convergence") or {}
    if any(isinstance(v, list) and v for v in conv.values()):
        specs.append(FigureSpec("convergence", "convergence", None, "Monte Carlo convergence",
                                "Standard uncertainty against the number of Monte Carlo trials; the band is the final value ± the numerical "
                                "tolerance δ used in the validation (JCGM 101 7.9 and §8).",
                                lambda: _draw_convergence(results)))
    plan = results.get("plan") or {}
    if isinstance(plan, Mapping) and plan.get("front"):
        specs.append(FigureSpec("plan-front", "plan", None, "Data purchase plan",
                                "Expanded uncertainty against the cost of the data bought: the front joins the purchase sets no other set "
                                "beats on both cost and U; the star is the recommended set.",
                                lambda: draw_plan(plan)))
    return specs


def render_figure(spec: FigureSpec) -> RenderedFigure:
    """Draw a figure and return its PNG and SVG bytes (the figure is closed)."""
    with style.figure_style():
        fig = spec.draw()
        try:
            png, svg = io.BytesIO(), io.BytesIO()
            # the layout is computed once and frozen: savefig would otherwise draw the whole figure
            # an extra time per format just to run the layout engine; PNG and SVG are the same drawing
            engine = fig.get_layout_engine()
            if engine is not None:
                engine.execute(fig)
                fig.set_layout_engine(None)     # no engine at all: savefig then skips its layout pre-draw
            fig.savefig(png, format="png", dpi=style.PNG_DPI, metadata={"Software": "uqthermo"},
                        pil_kwargs={"compress_level": style.PNG_COMPRESS_LEVEL})
            fig.savefig(svg, format="svg", metadata={"Creator": "uqthermo", "Date": None})
        finally:
            plt.close(fig)
    return RenderedFigure(spec.name, spec.section, spec.output_index, spec.title, spec.caption, png.getvalue(), svg.getvalue())


def render_figures(results: Mapping, processes: int | None = None) -> list[RenderedFigure]:
    """Every figure of the results, in report order (see :mod:`uqthermo.report.parallel` for ``processes``)."""
    from .parallel import render_all

    return render_all(figure_specs(results), render_figure, processes)


def make_figures(results: Mapping, out_dir: Path, _rendered: list[RenderedFigure] | None = None) -> dict[str, dict[str, Path]]:
    """Write every figure as ``out_dir/NAME.png`` and ``out_dir/NAME.svg``.

    ``out_dir`` is the figures directory itself (``write_report`` passes
    ``DIR/figures``); it is created when missing. Returns ``{name: {"png": path,
    "svg": path}}``. Files are written atomically.
    """
    out_dir = Path(out_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    rendered = _rendered if _rendered is not None else render_figures(results)
    written: dict[str, dict[str, Path]] = {}
    for f in rendered:
        paths = {}
        for ext, data in (("png", f.png), ("svg", f.svg)):
            p = out_dir / f"{f.name}.{ext}"
            files.atomic_write(p, data)
            paths[ext] = p
        written[f.name] = paths
    return written
