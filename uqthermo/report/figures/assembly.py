"""Which figures the results support, in report order, and drawing them: PNG and SVG bytes per figure
(in forked workers where that pays, :mod:`.parallel`), written atomically as ``figures/NAME.png|svg``."""

from __future__ import annotations

import io
from collections.abc import Callable, Mapping
from dataclasses import dataclass
from pathlib import Path

from .. import files, style
from ..fields import check_results, coverage_probability, headline_index, limit_on_output, outputs, points, slugs, text
from ..rounding import pct_label
from .convergence import draw_convergence
from .curve import draw_curve
from .distribution import draw_distribution
from .driver_bars import draw_drivers, drivers_caption
from .labels import location_text
from .plan_front import draw_plan

import matplotlib.pyplot as plt  # noqa: E402  (style sets the Agg backend first)
from matplotlib.figure import Figure  # noqa: E402

__all__ = ["FigureSpec", "RenderedFigure", "figure_specs", "render_figure", "render_figures", "make_figures"]


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


def figure_specs(results: Mapping) -> list[FigureSpec]:
    """Every figure the results support, in report order."""

    check_results(results)
    specs: list[FigureSpec] = []
    for oi, (o, slug) in enumerate(zip(outputs(results), slugs(results))):
        pts = points(o)
        if not pts:
            continue
        name = text(o.get("name"))
        hp = pts[headline_index(o)]
        where = location_text(results, o, hp)
        if len(pts) > 1:
            specs.append(FigureSpec(
                f"curve-{slug}", "output", oi, f"{name} against temperature",
                f"{name}: estimate against temperature with the {pct_label(coverage_probability(results))} coverage band from the Monte Carlo method "
                "(shaded) and the linear interval (dashed); vertical lines mark phase changes. Lower panel: standard uncertainty u(y).",
                (lambda o=o: draw_curve(results, o))))
        hist = (hp.get("monte_carlo") or {}).get("histogram") or {}
        if hist.get("counts") or (hp.get("linear") or {}).get("standard_uncertainty"):
            cap = (f"{name} {where}: Monte Carlo histogram with the probabilistically symmetric coverage interval, and the linear (GUM) "
                   "approximation as a normal or scaled t density.")
            if len(pts) > 1:
                cap += " Shown at the temperature with the largest standard uncertainty."
            if limit_on_output(o, hp) is not None:
                cap += " The dash-dotted line is the limit."
            specs.append(FigureSpec(f"distribution-{slug}", "output", oi, f"{name}: output distribution", cap,
                                    (lambda o=o, hp=hp: draw_distribution(results, o, hp))))
        if hp.get("drivers"):
            specs.append(FigureSpec(
                f"drivers-{slug}", "output", oi, f"{name}: drivers",
                f"{name} {where}: " + drivers_caption(hp),
                (lambda o=o, hp=hp: draw_drivers(o, hp))))
    from . import heat_capacity

    for name, entries in heat_capacity.figure_groups(results):
        specs.append(FigureSpec(name, "data", None, "Heat-capacity data used", heat_capacity.caption(results),
                                (lambda entries=entries: heat_capacity.draw(results, entries))))
    conv = results.get("convergence") or {}
    if any(isinstance(v, list) and v for v in conv.values()):
        specs.append(FigureSpec("convergence", "convergence", None, "Monte Carlo convergence",
                                "Standard uncertainty against the number of Monte Carlo trials; the band is the final value ± the numerical "
                                "tolerance δ used in the validation (JCGM 101 7.9 and §8).",
                                lambda: draw_convergence(results)))
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
    """Every figure of the results, in report order (see :mod:`uqthermo.report.figures.parallel` for ``processes``)."""
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
