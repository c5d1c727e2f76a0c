"""Which datum drives the spread: linear variance shares and grouped global indices.

Everything here is ranked **by datum** (one sourced property, e.g. all coefficients of one
heat-capacity curve), never by raw coefficient. One module per method, plus what they share:

* :mod:`.linear_shares` — linear contribution shares (GUM law of propagation, JCGM 100:2008
  §5.2), with the cross-datum correlation part reported separately;
* :mod:`.sobol` — Sobol' first-order and total indices grouped by datum (Saltelli et al.
  2010 estimators, as in SALib), with bootstrap confidence intervals;
* :mod:`.delta` — Borgonovo's moment-independent δ index, a cross-check of the Sobol' ranking;
* :mod:`.ranking` — the linearity check and the automatic choice between those methods
  (:func:`~uqthermo.uq.sensitivity.ranking.rank_drivers`);
* :mod:`.driver` — one datum's share of an output's variance, the entry every method yields;
* :mod:`.evaluation` — datum groups of columns and the chunked evaluation of a design.

This package is model-agnostic: it never imports the physics, the case layer or the report.
"""
