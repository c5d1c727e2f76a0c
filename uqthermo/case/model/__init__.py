"""The vectorised model of a case, ``f(X[N, D]) -> Y[N, M]``, and what is computed beside it.

==========================  ==========================================================================
:mod:`.layout`              input columns (one per uncertain datum used) and output columns
:mod:`.builder`             :func:`~.builder.build_model`: the per-output model functions, in row blocks
:mod:`.reaction_table`      all formation-anchored reactions from one shared species table
:mod:`.balances`            the energy-balance outputs (adiabatic rise, MTSR, open-system duty)
:mod:`.dependence`          which data each output can depend on
:mod:`.checks`              :func:`~.checks.check_model`: the model at the best estimates and the probes
:mod:`.probes`              the input tails and what-if variants a run will reach
:mod:`.breakdown`           Kirchhoff terms of the reaction enthalpies as functions of the inputs
:mod:`.cp_curves`           the heat-capacity curves a case uses, as functions of the inputs
==========================  ==========================================================================
"""
