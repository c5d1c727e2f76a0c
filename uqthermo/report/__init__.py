"""Report layer: tables, figures, HTML and Markdown from a results dict alone.

Entry points
------------
* :func:`write_report` — ``report.html``, ``report.md``, ``figures/*.png|svg``,
  ``tables/*.csv`` into a directory (atomic writes); returns the paths written.
* :func:`render_html`, :func:`render_markdown` — the report as a string.
* :func:`make_figures` — the figures as files; :func:`results_table` — one
  DataFrame row per output point; :class:`ResultsView` — the notebook view.

This layer never imports :mod:`uqthermo.thermo`, :mod:`uqthermo.uq` or
:mod:`uqthermo.case`: it reads the results dict (format ``uqthermo.results/1``,
see the project brief) and nothing else. Missing optional keys are tolerated.

Keys read beyond the contract's minimum
---------------------------------------
``case``: title, file, sha256, description. ``run``: seed, samples, sampling,
version, method ("linear" | "monte-carlo" | "both"), date, engine, duration_s,
reference_temperature_K, coverage_probability, adaptive, python, numpy.
``inputs[]``: datum, quantity, stated, distribution, estimate (number or list),
standard_uncertainty (number or list), unit, source, n_parameters, library.
``correlations[]``: between [a, b], coefficient. ``reactions[]``: name, equation,
anchor. ``outputs[]``: name, kind, unit, description, reaction, equation, limit_K,
optional start_temperature_K and limit_applies_to ("final_temperature" — default for
adiabatic_temperature_rise — or "rise"), optional headline_index,
phase_changes[] {species, transition, temperature_K}, points[] with linear,
monte_carlo (incl. one_sided, histogram), coverage_probability, linear_validated,
validation, drivers[] {datum, share, share_ci}, drivers_method, optional
drivers_reason, correlation_share, sensitivity {method, S1, ST, delta: {datum:
[value, ci_half_width]}}, whatif[], margins {P95, P99} (percentile minus estimate),
exceedance_probability, exceedance_standard_error. ``convergence``:
{output name: [[N, u], ...]} (u of the headline point). ``warnings``, ``cautions``.

The ``plan`` section (data-purchase planner)
--------------------------------------------
::

    "plan": {
      "target":  {"output": "R1_dH", "temperature_K": 623.15, "U": 1.0,
                  "unit": "kJ/mol", "coverage_probability": 0.95},
      "currency": "EUR",                 # label for costs (free text)
      "budget": 30000,                   # optional
      "U_now": 1.92,                     # optional: U with today's data
      "method": "linear",                # optional: how U of each set was computed
      "candidates": [{"id": "A", "datum": "CH4.g.heat_capacity",
                      "action": "new Cp measurement", "factor": 0.5,   # new u / old u
                      "cost": 18000}],
      "front":     [{"cost": 0, "U": 1.92, "set": []},                # Pareto-optimal sets,
                    {"cost": 6000, "U": 1.58, "set": ["C"]}],          # sorted by cost
      "evaluated": [{"cost": ..., "U": ..., "set": [...]}],            # optional: all sets tried
      "best":      {"cost": 28000, "U": 1.27, "set": ["B", "C", "D"],
                    "meets_target": true}
    }

``U`` values are expanded uncertainties of the target output point in
``target.unit``; ``set`` lists candidate ids.
"""

from .figures.assembly import make_figures
from .notebook import ResultsView
from .render import render_html, render_markdown, write_report
from .tables.frames import results_table

__all__ = ["write_report", "render_html", "render_markdown", "make_figures", "results_table", "ResultsView"]
