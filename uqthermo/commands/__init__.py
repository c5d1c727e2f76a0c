"""The commands, one module per verb (argument parsing lives in :mod:`uqthermo.cli`).

Each module ``run``, ``check``, ``report``, ``plan``, ``fit`` and ``data`` has an
``execute(args) -> int`` that returns the exit code; :mod:`.terminal` holds what they print.
A command calls the pipeline (:mod:`uqthermo.pipeline`) and prints; it computes nothing itself.
"""
