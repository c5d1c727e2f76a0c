"""Data-purchase planning: the cheapest set of measurements that meets an uncertainty target.

Each *candidate* is a measurement one could buy for one datum: the datum's standard
uncertainty would become ``std`` (or be multiplied by ``factor``) at a ``cost`` (and an
optional lead time). A *selection* is a subset of the candidates; buying two candidates
for the same datum keeps the better one (smallest factor). The planner finds

* the cheapest selection whose output uncertainty meets the target **at every output
  point** (the worst point decides: for a curve, the worst temperature), optionally within
  a budget; or, with only a budget, the selection with the smallest worst-point uncertainty
  that fits the budget;
* the Pareto front of cost against the worst-point uncertainty.

One module per stage:

* :mod:`.candidates` — the question: candidate measurements and the uncertainty target;
* :mod:`.planner` — the entry points :func:`~uqthermo.uq.planning.planner.plan_linear` and
  :func:`~uqthermo.uq.planning.planner.plan_purchases`: the output uncertainty of a
  selection, from the linear quadratic form or a common-random-number Monte Carlo sample;
* :mod:`.search` — the optimiser (exact enumeration or greedy + local improvement), the
  Pareto front and the resulting :class:`~uqthermo.uq.planning.search.PurchasePlan`.

This package never imports the physics, the case layer or the report.
"""
