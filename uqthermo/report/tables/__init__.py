"""The report's tables, one module per part of the report (from the results dict alone).

Every table is a :class:`~uqthermo.report.tables.display.DisplayTable` of formatted strings
(numbers rounded by the rule in :mod:`uqthermo.report.rounding`), rendered alike by the HTML and
Markdown templates and the Word file; the CSV files carry full precision.

* :mod:`.display` — the display table and how an output's unit is written;
* :mod:`.overview` — results at a glance (one row per output);
* :mod:`.inputs` — input data, correlations, reactions; :mod:`.library_notes` — the data
  library's provenance notes under the input table;
* :mod:`.propagation` — Monte Carlo and linear (GUM) results with the validation;
* :mod:`.design` — one-sided bounds and margins, thermal-safety indicators, exceedance
  probabilities (and how a limit and a probability are written);
* :mod:`.drivers_whatif` — driver ranking and what-if;
* :mod:`.plan` — the data-purchase plan;
* :mod:`.frames` — the CSV tables as DataFrames (full precision).

The concise section's tables (statement, budget, Kirchhoff breakdown) are built in
:mod:`uqthermo.report.sections`.
"""
