"""Read the design and safety keys of ``[[output]]`` tables: limits, MTT/TD24, mass basis,
constant volume and the feed streams of an open-system heat balance (docs/case-format.md §11).

Every limit and level takes the uncertain-quantity forms of any datum; an uncertain one becomes a
datum (``output.NAME.limit``, ``output.NAME.cooling_capacity``, ``output.NAME.mtt``,
``output.NAME.td24``, ``output.NAME.initial_pressure``, ``output.NAME.feed[i].temperature``,
``output.NAME.feed[i].SPECIES.PHASE``) whose uncertainty enters the probabilities (and their
drivers) like any other input.
"""

from __future__ import annotations

import math
from typing import Any

from ...errors import UqthermoError
from ..schema import FeedStream, OutputSpec
from .amounts import molar_mass, read_species_amounts
from .fields import Collector, is_table, make_datum, read_uncertain, register, report_unit

LIMIT_SIDES = ("above", "below")


def as_written(node: Any) -> str:
    """The user's text of a quantity (its value as typed)."""
    if is_table(node):
        node = node.get("value", "")
    return node if isinstance(node, str) else repr(node)


def output_dimension(out: OutputSpec) -> str:
    """The dimension a limit of this output is written in (the output's own quantity)."""
    if out.kind == "adiabatic_temperature_rise":
        return "temperature"
    if out.kind == "heat_release":
        return "power"
    if out.kind == "equilibrium_constant":
        return "dimensionless"
    if out.basis == "mass":
        return "specific_energy"
    if out.kind == "heating_enthalpy" and out.mixture:
        return "energy"
    return "molar_energy"


def read_limit(c: Collector, o: dict, key: str, out: OutputSpec, data: dict) -> bool:
    """``limit`` (+ ``limit_side``) on any kind; ``cooling_capacity`` on heat_release (a limit, side above)."""
    names = [k for k in ("limit", "cooling_capacity") if k in o]
    if "limit_side" in o and not names:
        c.add(f"{key}.limit_side", "limit_side goes with a limit")
        return False
    if not names:
        return True
    if len(names) > 1:
        c.add(key, "give either limit or cooling_capacity (the cooling capacity is the limit of the heat to remove)")
        return False
    name = names[0]
    side = o.get("limit_side", "above")
    if side not in LIMIT_SIDES:
        c.add(f"{key}.limit_side", f"must be \"above\" (probability that the output exceeds the limit) or \"below\" "
                                   f"(probability that it falls below), got {side!r}")
        return False
    if name == "cooling_capacity" and side != "above":
        c.add(f"{key}.limit_side", "a cooling capacity is exceeded from above; leave limit_side out")
        return False
    dim = output_dimension(out)
    parsed = read_uncertain(c, o[name], f"{key}.{name}", dim, temperature=dim == "temperature")
    if parsed is None:
        return False
    did = f"output.{out.name}.{name}"
    label = "cooling capacity" if name == "cooling_capacity" else "limit"
    register(c, data, make_datum(did, label, dim, parsed), f"{key}.{name}")
    _, f = report_unit(dim)
    out.limit = parsed[0] * f
    out.limit_datum = did
    out.limit_side = side
    out.limit_label = label
    out.as_written["limit"] = as_written(o[name])
    return True


def read_levels(c: Collector, o: dict, key: str, out: OutputSpec, data: dict) -> bool:
    """MTT and TD24 of an adiabatic output: temperatures, each exact or uncertain."""
    ok = True
    for name in ("mtt", "td24"):
        if name not in o:
            continue
        parsed = read_uncertain(c, o[name], f"{key}.{name}", "temperature", temperature=True)
        if parsed is None:
            ok = False
            continue
        did = f"output.{out.name}.{name}"
        register(c, data, make_datum(did, "MTT" if name == "mtt" else "TD24", "temperature", parsed), f"{key}.{name}")
        setattr(out, name, parsed[0])
        setattr(out, f"{name}_datum", did)
        out.as_written[name] = as_written(o[name])
    return ok


def read_basis(c: Collector, o: dict, key: str, out: OutputSpec, species: dict, reactions: dict) -> bool:
    """``basis = "mass"``: results per kg (reaction outputs: per kg of ``mass_of``, a species of the reaction)."""
    if "basis" not in o:
        if "mass_of" in o:
            c.add(f"{key}.mass_of", "mass_of goes with basis = \"mass\"")
            return False
        return True
    b = o["basis"]
    if b not in ("molar", "mass"):
        c.add(f"{key}.basis", f"must be \"molar\" (per mol, the default) or \"mass\" (per kg), got {b!r}")
        return False
    if b == "molar":
        return True
    if out.kind in ("heat_release", "equilibrium_constant"):
        c.add(f"{key}.basis", f"{out.kind} has no mass basis (it is a rate in kW, or a number)")
        return False
    out.basis = "mass"
    if out.kind in ("reaction_enthalpy", "reaction_gibbs_energy"):
        ref = o.get("mass_of")
        r = reactions.get(out.reaction)
        if not isinstance(ref, str) or r is None:
            c.add(f"{key}.mass_of", "with basis = \"mass\" name the species whose mass is the basis, e.g. mass_of = \"EPX3\" "
                                    "(kJ per kg of EPX3 converted)")
            return False
        name = ref.split("(")[0].strip()
        nus = [p for p in r.participants if p.species == name]
        if not nus:
            c.add(f"{key}.mass_of", f"{name!r} does not take part in reaction {out.reaction}")
            return False
        m = molar_mass(c, species[name], f"{key}.mass_of")
        if m is None:
            return False
        out.mass_of = name
        out.mass_per_unit = abs(sum(p.nu for p in nus)) * m
        if out.mass_per_unit <= 0:
            c.add(f"{key}.mass_of", f"{name!r} has no net stoichiometric coefficient in reaction {out.reaction}")
            return False
        return True
    if "mass_of" in o:
        c.add(f"{key}.mass_of", "only reaction_enthalpy and reaction_gibbs_energy name mass_of; here the basis is "
                                "the species or charge itself")
        return False
    if out.kind == "heating_enthalpy" and out.species:
        m = molar_mass(c, species[out.species], f"{key}.species")
        if m is None:
            return False
        out.mass_per_unit = m
    return True


def read_volume(c: Collector, o: dict, key: str, out: OutputSpec, data: dict) -> bool:
    """``constant_volume = true`` (ideal-gas ΔU balance) and ``initial_pressure`` (closed vessel)."""
    cv = o.get("constant_volume", False)
    if not isinstance(cv, bool):
        c.add(f"{key}.constant_volume", "must be true or false")
        return False
    out.constant_volume = cv
    if "initial_pressure" in o:
        if not cv:
            c.add(f"{key}.initial_pressure", "the final pressure is computed for a closed vessel: add constant_volume = true")
            return False
        parsed = read_uncertain(c, o["initial_pressure"], f"{key}.initial_pressure", "pressure", positive=True,
                                bounds=(0.0, math.inf), what="a pressure")
        if parsed is None:
            return False
        did = f"output.{out.name}.initial_pressure"
        register(c, data, make_datum(did, "initial pressure", "pressure", parsed), f"{key}.initial_pressure")
        out.initial_pressure_datum = did
        out.as_written["initial_pressure"] = as_written(o["initial_pressure"])
    return True


def read_feeds(c: Collector, node: Any, key: str, out: OutputSpec, species: dict, data: dict) -> bool:
    """``[[output.feed]]`` streams of an open-system heat_release: temperature and flows (mol/s or kg/h)."""
    if not isinstance(node, list) or not node or not all(is_table(x) for x in node):
        c.add(f"{key}.feed", "must be an array of tables: [[output.feed]] with temperature and flows")
        return False
    ok = True
    for i, f in enumerate(node):
        fk = f"{key}.feed[{i}]"
        c.unknown_keys(f, {"temperature", "flows", "name", "source", "note"}, fk)
        if "temperature" not in f or "flows" not in f:
            c.add(fk, "a feed stream needs temperature (where it enters) and flows = { \"A(g)\" = \"10 kmol/h\", ... }")
            ok = False
            continue
        parsed = read_uncertain(c, f["temperature"], f"{fk}.temperature", "temperature", temperature=True)
        if parsed is None:
            ok = False
            continue
        tid = f"output.{out.name}.feed[{i}].temperature"
        register(c, data, make_datum(tid, "feed temperature", "temperature", parsed), f"{fk}.temperature")
        stream = FeedStream(key=fk, temperature=parsed[0], temperature_datum=tid if data[tid].uncertain else "")
        flows = read_species_amounts(c, f["flows"], f"{fk}.flows", species, data, f"output.{out.name}.feed[{i}]", "flow")
        if flows is None:
            ok = False
            continue
        stream.flows.update(flows)
        out.feeds.append(stream)
    return ok


def check_feed_phases(c: Collector, out: OutputSpec, species: dict, reactions: dict) -> bool:
    """A fed species that takes part in a reaction must reach the reactor temperature in the phase its
    equation gives it (otherwise the open-system balance would not close by Hess's law)."""
    t_out = out.temperature_nominal
    ok = True
    for stream in out.feeds:
        for (sp, ph) in stream.flows:
            try:
                reached = species[sp].final_phase(ph, stream.temperature, t_out)
            except UqthermoError as e:
                c.add(f"{stream.key}.flows", f"{sp}({ph}): {e.message}")
                ok = False
                continue
            for rname in out.extent_rates:
                used = {p.phase for p in reactions[rname].participants if p.species == sp}
                if used and reached not in used:
                    c.add(f"{stream.key}.flows", f"{sp} is fed as {ph} and reaches the reactor temperature "
                                                 f"({t_out:g} K) as {reached}, but reaction {rname} uses "
                                                 f"{sp}({'/'.join(sorted(used))}); write the equation with the phase the "
                                                 "species has in the reactor")
                    ok = False
    return ok


def mass_hint(what: str) -> str:
    """The message for a mass written where the species is not known."""
    return f"to convert it to mol, {what}"


def finite_number(x: Any) -> bool:
    return not isinstance(x, bool) and isinstance(x, (int, float)) and math.isfinite(x)
