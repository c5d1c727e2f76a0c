"""The readers of a case file's TOML sections, each turning one section into typed objects.

:mod:`uqthermo.case.loader` reads the file and calls them in order; they share the field parsers
and the problem collector of :mod:`.fields` and never import the loader.

==========================  ==========================================================================
:mod:`.fields`              problem collector, quantity/temperature/percent/uncertain-quantity parsers
:mod:`.settings`            ``[settings]``
:mod:`.species`             ``[species.*]``: identity, phases, transitions
:mod:`.heat_capacity`       ``heat_capacity`` of a phase: the Cp models and their uncertainty
:mod:`.library_named`       ``{ library = "<dataset>" }`` references (named datasets)
:mod:`.library_auto`        ``{ library = "auto" }`` references (source selection)
:mod:`.temperature_windows` the temperature windows ``library = "auto"`` curves must cover
:mod:`.reactions`           ``[reaction.*]``
:mod:`.outputs`             ``[[output]]``
:mod:`.design`              design and safety keys of an output (limits, MTT/TD24, feed streams)
:mod:`.correlations`        ``[[correlation]]``
:mod:`.candidates`          ``[[candidate]]`` (purchase planning)
:mod:`.document`            ``[document]`` and the display temperature unit
:mod:`.plausibility`        warnings for valid input that is probably a slip
:mod:`.distributions`       the statistics layer's distributions from what a case states
==========================  ==========================================================================
"""
