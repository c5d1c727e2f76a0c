"""Table and figure numbers, given in the order the reader meets them.

:func:`uqthermo.report.render.build_context` builds its table and figure entries unnumbered
(``n`` is None), part by part: the concise section first, then the appendix. The templates
print them in another order than they are built (the appendix shows the input data before the
results summary, the heat-capacity figure before the per-output figures). :func:`number`
walks the finished context in the order both templates (``report.html.j2`` and
``report.md.j2``) print it and sets ``n`` = 1, 2, 3… on every table and, separately, on every
figure. Captions, anchors (``id="table-N"``), alt texts and every cross-reference (a figure
drawn in the concise section and referred to from the appendix) read the same entry, so they
all carry the final number; the Word file is built from the HTML page and carries it too.
Nothing is rewritten after rendering, so user text ("NIST-JANAF Table 5") stays as written.
"""

from __future__ import annotations

from collections.abc import Mapping
from typing import Any

__all__ = ["document_order", "number", "table_entry"]


def table_entry(table: Any) -> dict:
    """A table as the templates take it, not yet numbered: ``{"n": None, "t": table}``."""
    return {"n": None, "t": table}


def document_order(ctx: Mapping) -> list[tuple[str, dict]]:
    """``("table" | "figure", entry)`` of every table and figure the templates print, in their order.

    Mirrors the templates: change one, change the other (the report tests read the numbers
    back from the rendered HTML, Markdown and Word files). A driver figure is printed only
    with its driver table, so it is listed only then.
    """
    c = ctx["concise"]
    items: list[tuple[str, Any]] = [("table", c["design"]), ("table", c["kirchhoff"])]
    for o in c["per_output"]:                                   # 1.x Uncertainty budgets
        items += [("table", o["table"]), ("figure", o["figure"])]
    items += [("table", ctx["inputs"]), ("table", ctx["correlations"]), ("table", ctx["reactions"])]
    items += [("figure", f) for f in ctx["data_figures"]]       # A.3 Input data
    items.append(("table", ctx["summary"]))                     # A.4 Results in full
    for o in ctx["outputs"]:
        items += [("figure", f) for f in o["figures"]]
        items += [("table", t) for t in o["tables"]]
        items.append(("table", o["kirchhoff_table"]))
        if o["drivers_table"]:
            items += [("figure", o["drivers_figure"]), ("table", o["drivers_table"])]
        items.append(("table", o["whatif_table"]))
    items.append(("figure", ctx["convergence_figure"]))
    plan = ctx["plan"] or {}                                    # A.5 Data purchase plan
    items += [("figure", plan.get("figure")), ("table", plan.get("candidates")), ("table", plan.get("front"))]
    return [(kind, e) for kind, e in items if e]


def number(ctx: Mapping) -> None:
    """Number the context's tables 1, 2, 3… and its figures 1, 2, 3… in document order (in place)."""
    count = {"table": 0, "figure": 0}
    for kind, entry in document_order(ctx):
        count[kind] += 1
        entry["n"] = count[kind]
