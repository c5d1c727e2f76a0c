"""Read ``[[output]]`` tables: what the engineer wants computed (contract §2, output kinds)."""

from __future__ import annotations

import difflib
import math
from typing import Any

import numpy as np

from ..schema import OUTPUT_KINDS, Datum, OutputSpec, Settings
from . import design
from .amounts import molar_mass, read_species_amounts, species_ref, written_datum
from .fields import (
    Collector,
    check_name,
    is_table,
    make_datum,
    read_fraction,
    read_quantity,
    read_temperature,
    read_uncertain,
    register,
)

MAX_CURVE_POINTS = 2000

COMMON = {"name", "kind", "description", "design_value", "limit", "limit_side"}
KEYS = {
    "reaction_enthalpy": COMMON | {"reaction", "temperature", "temperatures", "basis", "mass_of"},
    "reaction_gibbs_energy": COMMON | {"reaction", "temperature", "temperatures", "basis", "mass_of"},
    "equilibrium_constant": COMMON | {"reaction", "temperature", "temperatures"},
    "heating_enthalpy": COMMON | {"species", "mixture", "from", "to", "basis"},
    "heat_release": COMMON | {"temperature", "extent_rate", "cooling_capacity", "feed"},
    "adiabatic_temperature_rise": COMMON | {"reaction", "start_temperature", "extent", "extent_species", "charge",
                                            "process_temperature", "accumulation", "mtt", "td24", "max_temperature",
                                            "basis", "constant_volume", "initial_pressure"},
}


def _temperatures(c: Collector, o: dict, key: str, out: OutputSpec, data: dict, allow_uncertain: bool = True) -> bool:
    has_t, has_ts = "temperature" in o, "temperatures" in o
    if has_t == has_ts:
        c.add(key, "give either temperature (one point, may be uncertain) or temperatures = { from, to, step }")
        return False
    if has_t:
        node = o["temperature"]
        if is_table(node) and allow_uncertain:
            parsed = read_uncertain(c, node, f"{key}.temperature", "temperature", temperature=True)
            if parsed is None:
                return False
            did = f"output.{out.name}.temperature"
            register(c, data, make_datum(did, "temperature", "temperature", parsed), f"{key}.temperature")
            out.temperature_nominal = parsed[0]
            if data[did].uncertain:
                out.temperature_datum = did
                out.temperatures = None
            else:
                out.temperatures = np.array([parsed[0]])
            return True
        t = read_temperature(c, node, f"{key}.temperature")
        if t is None:
            return False
        out.temperatures = np.array([t])
        out.temperature_nominal = t
        return True
    node = o["temperatures"]
    if isinstance(node, list):
        ts = [read_temperature(c, v, f"{key}.temperatures[{i}]") for i, v in enumerate(node)]
        if not ts or any(t is None for t in ts):
            if not ts:
                c.add(f"{key}.temperatures", "empty list of temperatures")
            return False
        out.temperatures = np.array(sorted(set(ts)))
    else:
        if not is_table(node) or not {"from", "to", "step"} <= set(node):
            c.add(f"{key}.temperatures", "must be { from = \"...\", to = \"...\", step = \"...\" } or a list of temperatures")
            return False
        c.unknown_keys(node, {"from", "to", "step"}, f"{key}.temperatures")
        lo = read_temperature(c, node["from"], f"{key}.temperatures.from")
        hi = read_temperature(c, node["to"], f"{key}.temperatures.to")
        step = read_quantity(c, node["step"], f"{key}.temperatures.step", "temperature", difference=True)
        if lo is None or hi is None or step is None:
            return False
        if step <= 0:
            c.add(f"{key}.temperatures.step", "step must be positive")
            return False
        if hi < lo:
            c.add(f"{key}.temperatures", "'to' must not be below 'from'")
            return False
        n = int(math.floor((hi - lo) / step + 1e-9)) + 1
        if n > MAX_CURVE_POINTS:
            c.add(f"{key}.temperatures.step", f"{n} temperatures is too many for one curve (at most {MAX_CURVE_POINTS}); use a larger step")
            return False
        ts = lo + step * np.arange(n)
        if hi - ts[-1] > 1e-6 * step:
            ts = np.append(ts, hi)
        out.temperatures = ts
    out.temperature_nominal = float(out.temperatures[0])
    return True


def _reaction(c: Collector, o: dict, key: str, reactions: dict) -> str | None:
    r = o.get("reaction")
    if not isinstance(r, str):
        c.add(f"{key}.reaction", "name the reaction, e.g. reaction = \"R1\"")
        return None
    if r not in reactions and c.has_problem(f"reaction.{r}"):
        return None     # the reaction's own problem is reported already
    if r not in reactions:
        close = difflib.get_close_matches(r, list(reactions), n=1)
        c.add(f"{key}.reaction", f"unknown reaction {r!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
        return None
    return r


def _expand_reaction_lists(c: Collector, node: list, reactions: dict):
    """Yield (index, output table); ``reactions = ["*"]`` (or a list of names) on a reaction output
    expands into one output ``NAME[REACTION]`` per reaction (large reaction sets, batch mode)."""
    for i, o in enumerate(node):
        if not (is_table(o) and "reactions" in o):
            yield i, o
            continue
        key = f"output[{i}].reactions"
        if o.get("kind") not in ("reaction_enthalpy", "reaction_gibbs_energy", "equilibrium_constant"):
            c.add(key, "a list of reactions is only for reaction_enthalpy, reaction_gibbs_energy and equilibrium_constant")
            continue
        if "reaction" in o:
            c.add(key, "give either reaction or reactions, not both")
            continue
        wanted = o["reactions"]
        if wanted == ["*"] or wanted == "*":
            wanted = list(reactions)
        if not isinstance(wanted, list) or not wanted or not all(isinstance(r, str) for r in wanted):
            c.add(key, "must be [\"*\"] (every reaction) or a list of reaction names")
            continue
        if not isinstance(o.get("name"), str) or not check_name(c, o["name"], f"output[{i}].name"):
            continue
        for r in wanted:
            item = {k: v for k, v in o.items() if k != "reactions"}
            item.update(reaction=r, name=f"{o['name']}[{r}]", _generated=True)
            yield i, item


def read_outputs(c: Collector, node: Any, species: dict, reactions: dict, data: dict[str, Datum],
                 settings: Settings) -> list[OutputSpec]:
    outs: list[OutputSpec] = []
    if node is None:
        c.add("output", "no outputs requested; add at least one [[output]] with name and kind")
        return outs
    if not isinstance(node, list) or not node:
        c.add("output", "must be an array of tables ([[output]])")
        return outs
    from ..limits import MAX_OUTPUTS, MAX_POINTS

    if len(node) > MAX_OUTPUTS:
        c.add("output", f"{len(node)} outputs; a case holds at most {MAX_OUTPUTS}")
        return outs
    names: set[str] = set()
    for i, o in _expand_reaction_lists(c, node, reactions):
        if len(names) >= MAX_OUTPUTS:
            c.add("output", f"more than {MAX_OUTPUTS} outputs (after expanding reactions = [\"*\"]); a case holds at "
                            f"most {MAX_OUTPUTS}")
            return outs
        key = f"output[{i}]"
        if not is_table(o):
            c.add(key, "must be a table with name and kind")
            continue
        name = o.get("name")
        generated = o.pop("_generated", False)
        if not isinstance(name, str) or not (generated or check_name(c, name, f"{key}.name")):
            if not isinstance(name, str):
                c.add(f"{key}.name", "give the output a name")
            continue
        key = f"output.{name}"
        if name in names:
            c.add(f"{key}.name", f"output name {name!r} is used twice")
            continue
        names.add(name)
        kind = o.get("kind")
        if kind not in OUTPUT_KINDS:
            close = difflib.get_close_matches(str(kind), OUTPUT_KINDS, n=1)
            c.add(f"{key}.kind", f"unknown kind {kind!r}" + (f" (did you mean {close[0]!r}?)" if close else
                                                             f"; use one of {', '.join(OUTPUT_KINDS)}"))
            continue
        c.unknown_keys(o, KEYS[kind], key)
        desc = o.get("description", "")
        out = OutputSpec(name=name, kind=kind, key=key, description=desc if isinstance(desc, str) else "")
        if "design_value" in o:
            dv = o["design_value"]
            if isinstance(dv, bool) or not isinstance(dv, (int, float)) or not math.isfinite(dv):
                c.add(f"{key}.design_value", "must be a number in the output's unit")
            else:
                out.design_value = float(dv)
        ok = _read_kind(c, o, key, out, species, reactions, data)
        ok = ok and design.read_basis(c, o, key, out, species, reactions)
        ok = ok and design.read_limit(c, o, key, out, data)
        if ok and kind == "adiabatic_temperature_rise":
            ok = design.read_volume(c, o, key, out, data) and _adiabatic_limit_side(c, key, out)
        if ok:
            outs.append(out)
    points = sum(len(o.temperatures) if o.temperatures is not None else 1 for o in outs)
    if points > MAX_POINTS:
        c.add("output", f"{points} output points (temperatures of all outputs together); a case holds at most "
                        f"{MAX_POINTS} — use larger temperature steps or fewer outputs")
    return outs


def _read_kind(c, o, key, out: OutputSpec, species, reactions, data) -> bool:
    kind = out.kind
    if kind in ("reaction_enthalpy", "reaction_gibbs_energy", "equilibrium_constant"):
        r = _reaction(c, o, key, reactions)
        ok = _temperatures(c, o, key, out, data)
        if r is None or not ok:
            return False
        out.reaction = r
        return True
    if kind == "heating_enthalpy":
        if ("species" in o) == ("mixture" in o):
            c.add(key, "give either species = \"X(l)\" (per mole) or mixture = { \"X(l)\" = \"2 mol\", ... }")
            return False
        t1 = read_temperature(c, o.get("from"), f"{key}.from") if "from" in o else None
        t2 = read_temperature(c, o.get("to"), f"{key}.to") if "to" in o else None
        if "from" not in o or "to" not in o:
            c.add(key, "give from and to temperatures")
            return False
        if t1 is None or t2 is None:
            return False
        out.t_from, out.t_to = t1, t2
        out.temperatures = np.array([t2])
        out.temperature_nominal = t2
        if "species" in o:
            sp = species_ref(c, o["species"], f"{key}.species", species)
            if sp is None:
                return False
            out.species, out.phase = sp
            return True
        mix = read_species_amounts(c, o["mixture"], f"{key}.mixture", species, data, f"output.{out.name}.mixture")
        if mix is None:
            return False
        out.mixture = mix
        return True
    if kind == "heat_release":
        t = _temperatures(c, {"temperature": o.get("temperature")} if "temperature" in o else {}, key, out, data)
        er = o.get("extent_rate")
        if not is_table(er) or not er:
            c.add(f"{key}.extent_rate", "give extent rates per reaction, e.g. { R1 = \"2 mol/s\" } or "
                                        "{ R1 = { feed = \"5 kmol/h\", conversion = { value = 0.9, u = 0.02 } } }")
            return False
        ok = t
        for rname, rate in er.items():
            rk = f"{key}.extent_rate.{rname}"
            if rname not in reactions and c.has_problem(f"reaction.{rname}"):
                ok = False
                continue
            if rname not in reactions:
                close = difflib.get_close_matches(rname, list(reactions), n=1)
                c.add(rk, f"unknown reaction {rname!r}" + (f" (did you mean {close[0]!r}?)" if close else ""))
                ok = False
                continue
            did = f"output.{out.name}.extent_rate.{rname}"
            if is_table(rate) and "feed" in rate:
                c.unknown_keys(rate, {"feed", "conversion", "key", "source"}, rk)
                divisor = 1.0
                mm: float | str = design.mass_hint(f"name the species fed: key = \"X\" (a species of {rname})")
                if "key" in rate:
                    kref = rate["key"]
                    nus = {p.species: p.nu for p in reactions[rname].participants}
                    if kref not in nus:
                        c.add(f"{rk}.key", f"{kref!r} does not take part in reaction {rname}")
                        ok = False
                        continue
                    divisor = abs(nus[kref])
                    mm = molar_mass(None, species[kref], rk) or "give the feed in mol/s or kmol/h"
                feed = read_uncertain(c, rate["feed"], f"{rk}.feed", "amount_rate", positive=True, molar_mass=mm,
                                      bounds=(0.0, math.inf), what="a feed flow")
                conv = read_uncertain(c, rate.get("conversion", 1.0), f"{rk}.conversion", "dimensionless",
                                      bounds=(0.0, 1.0), what="a conversion")
                if feed is None or conv is None:
                    ok = False
                    continue
                if not (0 <= conv[0] <= 1):
                    c.add(f"{rk}.conversion", f"conversion must lie in [0, 1], got {conv[0]:g}")
                    ok = False
                    continue
                register(c, data, written_datum(rate["feed"], f"{did}.feed", "feed rate", "amount_rate", feed,
                                                molar_mass=mm), f"{rk}.feed")
                register(c, data, make_datum(f"{did}.conversion", "conversion", "dimensionless", conv), f"{rk}.conversion")
                out.extent_rates[rname] = [f"{did}.feed", f"{did}.conversion"]
                out.extent_divisor[rname] = divisor
            else:
                parsed = read_uncertain(c, rate, rk, "amount_rate", molar_mass=design.mass_hint(
                    "write { feed = \"…kg/h\", key = \"X\" } with the species X whose mass flow it is"))
                if parsed is None:
                    ok = False
                    continue
                register(c, data, written_datum(rate, did, "extent rate", "amount_rate", parsed), rk)
                out.extent_rates[rname] = [did]
                out.extent_divisor[rname] = 1.0
        if "feed" in o:
            ok = design.read_feeds(c, o["feed"], key, out, species, data) and ok
            ok = ok and t and design.check_feed_phases(c, out, species, reactions)
        return ok
    # adiabatic_temperature_rise
    r = _reaction(c, o, key, reactions)
    t0 = read_temperature(c, o.get("start_temperature"), f"{key}.start_temperature") if "start_temperature" in o else None
    if "start_temperature" not in o:
        c.add(f"{key}.start_temperature", "give the temperature at which the reaction starts (e.g. \"60 degC\")")
    mm: float | str = design.mass_hint("name the species whose mass it is: extent_species = \"X\" (a species of the reaction)")
    if "extent_species" in o and r is not None:
        es = o["extent_species"]
        name = es.split("(")[0].strip() if isinstance(es, str) else None
        nus = [p.nu for p in reactions[r].participants if p.species == name]
        m = molar_mass(c, species[name], f"{key}.extent_species") if nus else None
        if not nus:
            c.add(f"{key}.extent_species", f"{es!r} does not take part in reaction {r}")
        elif m is not None and sum(nus) != 0:
            mm = abs(sum(nus)) * m          # mass of the species converted per mol of extent
    ext = (read_uncertain(c, o["extent"], f"{key}.extent", "amount", positive=True, molar_mass=mm,
                          bounds=(0.0, math.inf), what="an extent of reaction") if "extent" in o else None)
    if "extent" not in o:
        c.add(f"{key}.extent", "give the extent of reaction in mol (may be uncertain)")
    charge = (read_species_amounts(c, o["charge"], f"{key}.charge", species, data, f"output.{out.name}.charge")
              if "charge" in o else None)
    if "charge" not in o:
        c.add(f"{key}.charge", "give the charge that absorbs the heat, e.g. { \"S(l)\" = \"8 mol\" }")
    if r is None or t0 is None or ext is None or charge is None:
        return False
    out.reaction, out.start_temperature, out.charge = r, t0, charge
    out.temperatures = np.array([t0])
    out.temperature_nominal = t0
    did = f"output.{out.name}.extent"
    register(c, data, written_datum(o["extent"], did, "extent of reaction", "amount", ext, molar_mass=mm),
             f"{key}.extent")
    out.extent_datum = did
    for k in ("process_temperature", "max_temperature"):
        if k in o:
            v = read_temperature(c, o[k], f"{key}.{k}")
            if v is None:
                return False
            setattr(out, k, v)
    if not design.read_levels(c, o, key, out, data):
        return False
    if out.max_temperature and out.max_temperature <= t0:
        c.add(f"{key}.max_temperature", "must exceed the start temperature")
        return False
    if "accumulation" in o:
        a = read_fraction(c, o["accumulation"], f"{key}.accumulation", 0.0, 1.0,
                          example="0.6 or \"60 %\"; 1 = batch, all reactant accumulated")
        if a is None:
            return False
        out.accumulation = a
    return True


def _adiabatic_limit_side(c: Collector, key: str, out: OutputSpec) -> bool:
    """A limit the start temperature already violates is a unit slip (e.g. "90 K" written for "90 degC")."""
    if out.limit is None:
        return True
    t0 = out.start_temperature
    if out.limit_side == "above" and out.limit <= t0:
        c.add(f"{key}.limit", f"the limit ({out.limit:g} K) is not above the start temperature ({t0:g} K), so it is "
                              "exceeded with certainty; check its unit (degC?) or set limit_side = \"below\"")
        return False
    if out.limit_side == "below" and out.limit >= t0:
        c.add(f"{key}.limit", f"the lower limit ({out.limit:g} K) is not below the start temperature ({t0:g} K); "
                              "check its unit (degC?)")
        return False
    return True
