"""The ``curve-<output>`` figure, for outputs with more than one point: estimate against temperature with the
Monte Carlo coverage band and the linear interval, phase changes marked as labelled vertical lines; a lower
panel shows u(y) for both methods."""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from .. import style
from ..fields import coverage_probability, num, pair, points, text
from ..rounding import fmt_temperature, pct_label
from ..style import ROLE, mpl_text
from ..units import temperature_unit
from .labels import axis_label, axis_symbol, set_titles

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

__all__ = ["draw_curve"]


def draw_curve(results: Mapping, output: Mapping) -> Figure:
    """The ``curve-<output>`` figure: estimate and coverage band against temperature, u(y) below."""
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

    sym = axis_symbol(output.get("kind"))
    ax.set_ylabel(axis_label(sym, unit))
    axu.set_ylabel(axis_label("u", unit))
    axu.set_xlabel("T / K")
    tunit = temperature_unit(results)
    if tunit != "K":      # the case's own unit on top (the concise section shows this figure)
        from ..units import OFFSET, symbol

        a, b = OFFSET[tunit]
        top = ax.secondary_xaxis("top", functions=(lambda T: a * T + b, lambda t: (t - b) / a))
        top.set_xlabel(f"t / {symbol(tunit)}", fontsize=8.5)
        top.tick_params(labelsize=8)
    set_titles(fig, f"{mpl_text(text(output.get('name')))}: {sym} against temperature")
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
