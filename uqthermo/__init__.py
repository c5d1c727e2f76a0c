"""uqthermo — reaction enthalpy at operating temperature with a defensible uncertainty.

Layers (data flows one way):

* :mod:`uqthermo.thermo` — pure physics: heat-capacity models, species paths with
  phase changes, reactions (Kirchhoff's law), energy balances. No I/O, no statistics.
* :mod:`uqthermo.uq` — model-agnostic statistics: input distributions, correlations,
  sampling, GUM linear propagation, JCGM 101 Monte Carlo, sensitivity, planning.
  Never imports the physics.
* :mod:`uqthermo.case` — I/O: case files (TOML), units (pint), validation, errors,
  and the builder that turns a case into a vectorised model ``f(X[N, D]) -> Y[N, M]``.
* :mod:`uqthermo.report` — presentation: tables, figures, HTML/Markdown reports.
* :mod:`uqthermo.cli` — the command line.
"""

__version__ = "0.1.0"
