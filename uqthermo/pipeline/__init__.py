"""What a command calls: the job (case → model → propagation), results assembly and
publishing output folders (:mod:`uqthermo.pipeline.publish`: atomic, locked, with a
manifest of the files written).

This package sits between the command line (``uqthermo/cli.py`` and the command
modules) and the layers below it (``case``, ``uq``, ``thermo``, ``report``); importing it
is light (each module imports what it needs).
"""
