"""The ``convergence`` figure: u(y) against the number of Monte Carlo trials, one panel per output in
``results["convergence"]``, with the final value ± the validation tolerance (JCGM 101 §7.9)."""

from __future__ import annotations

import math
from collections.abc import Mapping

import numpy as np

from .. import style
from ..fields import headline_index, num, outputs, points, text
from ..rounding import fmt_fixed, uncertainty_decimals
from ..style import ROLE, mpl_text
from .labels import axis_label, set_titles

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402
from matplotlib.ticker import NullLocator  # noqa: E402

__all__ = ["draw_convergence"]


def draw_convergence(results: Mapping) -> Figure:
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
        ax.set_ylabel(axis_label("u(y)", unit))
        ax.xaxis.set_minor_locator(NullLocator())          # minor ticks of a log axis cost more than they tell
    handles = [plt.Line2D([], [], color=ROLE["mc"], marker="o", markersize=2.8, linewidth=1.3),
               plt.Line2D([], [], color=style.GREY, linewidth=0.9, linestyle="--"),
               plt.Line2D([], [], color=ROLE["linear"], linewidth=0.9, linestyle=":")]
    fig.legend(handles, ["u(y) after N trials", "final u(y)", "final u(y) ± δ (numerical tolerance, JCGM 101 §7.9)"],
               loc="outside lower center", ncols=3, fontsize=8, frameon=False)
    set_titles(fig, "Monte Carlo convergence of the standard uncertainty")
    return fig
