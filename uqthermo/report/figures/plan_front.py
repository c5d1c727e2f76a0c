"""The ``plan-front`` figure: the planner's cost–uncertainty front (see :mod:`uqthermo.report` for the ``plan``
section's shape), with the point labels placed without overlaps."""

from __future__ import annotations

from collections.abc import Mapping

from .. import style
from ..fields import num, text
from ..rounding import fmt_fixed, fmt_temperature, pct_label
from ..style import ROLE, mpl_text
from .labels import axis_label, set_titles

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

__all__ = ["draw_plan", "place_labels"]


def _set_label(s) -> str:
    s = [text(x) for x in (s or [])]
    return "+".join(s) if s else "now"


def draw_plan(plan: Mapping) -> Figure:
    """The ``plan-front`` figure of a results dict's ``plan`` section (also drawn by ``uqthermo plan``)."""
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
        relative = unit.strip() == "of target"      # U as a multiple of each output's target: the target is 1
        ax.axhline(tU, color=ROLE["limit"], linestyle="-.", linewidth=1.4,
                   label=mpl_text("target U (1 = each output's target)" if relative else f"target U = {fmt_fixed(tU, 2)} {unit}"))
    bud = num(plan.get("budget"))
    if bud is not None:
        ax.axvline(bud, color=style.GREY, linestyle=":", linewidth=1.2, label=mpl_text(f"budget {int(bud)}"))
    best = plan.get("best") or {}
    if num(best.get("cost")) is not None and num(best.get("U")) is not None:
        ax.scatter([num(best["cost"])], [num(best["U"])], marker="*", s=190, color=ROLE["best"], edgecolor="white",
                   linewidth=0.6, zorder=5, label=mpl_text(f"recommended: {_set_label(best.get('set'))}"))
    ax.set_xlabel(mpl_text(f"cost / {cur}"))
    ulab = f"U ({pct_label(num(tgt.get('coverage_probability')) or 0.95)})"
    ax.set_ylabel(mpl_text(f"{ulab} / target U") if unit.strip() == "of target" else axis_label(ulab, unit))
    where = ""
    if tgt.get("output"):
        where = f" for {text(tgt.get('output'))}"
        if num(tgt.get("temperature_K")) is not None:
            where += f" at {fmt_temperature(tgt.get('temperature_K'))} K"
    set_titles(fig, "Data purchase plan: expanded uncertainty against cost", mpl_text(f"target{where}") if where else None)
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
