"""Notebook view of a results dict: an HTML table in Jupyter, a DataFrame on request."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import pandas as pd
from markupsafe import Markup

from . import style
from .fields import check_results, text
from .rounding import fmt_value
from .tables.frames import results_table
from .tables.overview import summary_table


class ResultsView:
    """Read-only view of a results dict (format ``uqthermo.results/1``).

    ``_repr_html_()`` renders a compact, escaped summary table (one row per output
    at its headline point) for Jupyter; :meth:`to_dataframe` gives every output
    point with full precision (:func:`uqthermo.report.results_table`).
    """

    def __init__(self, results: Mapping):
        self.results = check_results(results)

    def to_dataframe(self) -> pd.DataFrame:
        """One row per output point (full precision)."""
        return results_table(self.results)

    def write_report(self, out_dir, formats=("html", "md"), figures=True) -> dict[str, Path]:
        """Write the full report into ``out_dir`` (see :func:`uqthermo.report.write_report`)."""
        from .render import write_report

        return write_report(self.results, Path(out_dir), formats=formats, figures=figures)

    def _repr_html_(self) -> str:
        from .render import environment

        case = self.results.get("case") or {}
        run = self.results.get("run") or {}
        meta = []
        if run.get("samples") is not None:
            meta.append(f"N = {fmt_value(run.get('samples'))} ({text(run.get('sampling')) or 'sampling not stated'})")
        if run.get("seed") is not None:
            meta.append(f"seed {text(run.get('seed'))}")
        if run.get("version"):
            meta.append(f"uqthermo {text(run.get('version'))}")
        env = environment("html")
        tmpl = env.get_template("notebook.html.j2")
        return tmpl.render(title=text(case.get("title")) or "uqthermo results", meta=" · ".join(meta),
                           table=summary_table(self.results), n_warnings=len(self.results.get("warnings") or []),
                           css=Markup(style.NOTEBOOK_CSS))

    def __repr__(self) -> str:
        t = summary_table(self.results)
        lines = [f"ResultsView({text((self.results.get('case') or {}).get('title')) or 'untitled'!r})"]
        for r in t.rows:
            lines.append(f"  {r[0]}: {r[3]} ± {r[4]} {r[6]} at {r[2].rstrip(' *')} K, {r[5]}")
        return "\n".join(lines)
