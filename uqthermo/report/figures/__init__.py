"""Figures of the report (matplotlib, Agg backend), drawn from the results dict alone.

Figures, each written as ``NAME.png`` and ``NAME.svg``, one module per figure:

* :mod:`.distribution` — ``distribution-<output>``: the Monte Carlo histogram of the headline point
  with the linear (GUM) approximation and the limit; :mod:`.safety_marks` adds the boiling pile-up,
  MTT and T_D24 for an adiabatic temperature rise;
* :mod:`.curve` — ``curve-<output>`` (outputs with more than one point): estimate against
  temperature with the coverage band, u(y) below;
* :mod:`.driver_bars` — ``drivers-<output>``: the variance shares of the headline point;
* :mod:`.heat_capacity` — ``cp-data``: Cp(T) of each species over its path, with its uncertainty;
* :mod:`.convergence` — ``convergence``: u(y) against the number of Monte Carlo trials;
* :mod:`.plan_front` — ``plan-front``: the planner's cost–uncertainty front.

:mod:`.labels` holds the titles and axis labels they share; :mod:`.assembly` lists the figures the
results support (:func:`~.assembly.figure_specs`), draws them (:func:`~.assembly.render_figures`,
in forked workers by :mod:`.parallel` where that pays) and writes them (:func:`~.assembly.make_figures`).
All user text reaching matplotlib goes through :func:`~uqthermo.report.style.mpl_text`.
"""
