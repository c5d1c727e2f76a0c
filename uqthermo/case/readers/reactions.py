"""Read ``[reaction.*]`` tables: equations, element balance, measured-enthalpy anchors."""

from __future__ import annotations

import difflib
from typing import Any

from ...errors import UqthermoError
from ...thermo.reaction import Reaction, check_balance, parse_equation
from ..schema import Datum
from .fields import PHASE_ALIASES, Collector, check_name, is_table, make_datum, read_temperature, read_uncertain, register


def resolve_phase(species, phase: str | None) -> str | None:
    """The phase symbol to use for ``species`` written with state ``phase`` (s ↔ cr aliases)."""
    if phase is None:
        return next(iter(species.phases)) if len(species.phases) == 1 else None
    if phase in species.phases:
        return phase
    alias = PHASE_ALIASES.get(phase)
    if alias in species.phases:
        return alias
    return phase


def read_reactions(c: Collector, node: Any, species: dict, data: dict[str, Datum]) -> dict[str, Reaction]:
    out: dict[str, Reaction] = {}
    if not is_table(node):
        c.add("reaction", "must be a table of reactions ([reaction.NAME])")
        return out
    for name, r in node.items():
        key = f"reaction.{name}"
        if not check_name(c, name, key):
            continue
        if not is_table(r):
            c.add(key, "must be a table with an equation")
            continue
        c.unknown_keys(r, {"equation", "measured_enthalpy", "source", "note", "description"}, key)
        eq = r.get("equation")
        if not isinstance(eq, str) or not eq.strip():
            c.add(f"{key}.equation", "give equation = \"A(g) + 2 B(g) -> C(g)\"")
            continue
        try:
            participants = parse_equation(eq)
        except UqthermoError as e:
            c.add(f"{key}.equation", e.message)
            continue
        ok = True
        fixed = []
        for p in participants:
            if p.species not in species and c.has_problem(f"species.{p.species}"):
                ok = False      # the species' own problem is reported already
                continue
            if p.species not in species:
                close = [n for n in species if n.lower() == p.species.lower()] or \
                    difflib.get_close_matches(p.species, list(species), n=1)
                c.add(f"{key}.equation", f"unknown species {p.species!r}" +
                      (f" (did you mean {close[0]!r}?)" if close else " (define it under [species.%s])" % p.species))
                ok = False
                continue
            sp = species[p.species]
            ph = resolve_phase(sp, p.phase)
            if ph is None:
                c.add(f"{key}.equation", f"give the state of {p.species} (e.g. {p.species}(g)); it has phases {', '.join(sp.phases)}")
                ok = False
                continue
            if ph not in sp.phases and c.has_problem(f"species.{p.species}.{ph}"):
                ok = False
                continue
            if ph not in sp.phases:
                c.add(f"{key}.equation", f"{p.species}({p.phase}) has no phase data; define [species.{p.species}.{p.phase}] "
                      f"(known phases: {', '.join(sp.phases) or 'none'})")
                ok = False
                continue
            fixed.append(type(p)(p.nu, p.species, ph))
        if not ok:
            continue
        net: dict[tuple, float] = {}
        for p in fixed:
            net[(p.species, p.phase)] = net.get((p.species, p.phase), 0.0) + p.nu
        if all(abs(v) < 1e-12 for v in net.values()):
            c.add(f"{key}.equation", "the equation cancels out (every species appears equally on both sides); "
                                     "nothing reacts")
            continue
        measured = None
        if "measured_enthalpy" in r:
            m = r["measured_enthalpy"]
            mk = f"{key}.measured_enthalpy"
            if not is_table(m) or "temperature" not in m:
                c.add(mk, "needs value, its uncertainty and the temperature it was measured at, e.g. "
                          "{ value = \"-165 kJ/mol\", u = \"1 kJ/mol\", temperature = \"298.15 K\" }")
                continue
            tm = read_temperature(c, m["temperature"], f"{mk}.temperature")
            parsed = read_uncertain(c, {k: v for k, v in m.items() if k != "temperature"}, mk, "molar_energy")
            if tm is None or parsed is None:
                continue
            register(c, data, make_datum(f"reaction.{name}.measured_enthalpy", "measured reaction enthalpy",
                                         "molar_energy", parsed), mk)
            measured = (parsed[0], tm)
        try:
            rx = Reaction(name=name, equation=eq, participants=fixed, measured_enthalpy=measured)
            check_balance(rx, species)
        except UqthermoError as e:
            c.add(f"{key}.equation", e.message)
            continue
        out[name] = rx
    c.skipped.update(f"reaction.{name}" for name in node if name not in out)
    return out
