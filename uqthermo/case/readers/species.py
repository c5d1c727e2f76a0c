"""Read ``[species.*]`` tables: formula and identity, phases (formation enthalpy, standard entropy),
phase transitions and library look-ups; the heat-capacity curves are read by :mod:`.heat_capacity`."""

from __future__ import annotations

from typing import Any

from ...errors import UqthermoError
from ...thermo.formula import parse_formula
from ...thermo.species import Phase, Species, Transition
from ..schema import Datum, Settings
from .fields import (
    PHASE_ALIASES,
    PHASE_SYMBOLS,
    Collector,
    check_name,
    is_table,
    make_datum,
    read_uncertain,
    register,
)
from .heat_capacity import read_heat_capacity

SPECIES_KEYS = {"formula", "name", "cas", "smiles", "note", "transition", "source"} | set(PHASE_SYMBOLS)
PHASE_KEYS = {"formation_enthalpy", "standard_entropy", "heat_capacity", "note", "source"}
MAX_ABS_ENTHALPY = 1e8      # J/mol (100 000 kJ/mol): far beyond any molecule


def read_species(c: Collector, node: Any, data: dict[str, Datum], settings: Settings, *, library: bool = True,
                 demands: list | None = None) -> dict[str, Species]:
    """Read ``[species.*]``; ``demands`` (from :mod:`.temperature_windows`) give the temperature
    windows that ``library = "auto"`` heat-capacity curves must cover."""
    from .library_auto import SpeciesLibrary

    out: dict[str, Species] = {}
    if node is None:
        c.add("species", "no species defined; add at least one [species.NAME] table")
        return out
    if not is_table(node):
        c.add("species", "must be a table of species ([species.NAME])")
        return out
    if not node:
        c.add("species", "no species defined; add at least one [species.NAME] table")
        return out
    from ..limits import MAX_SPECIES

    if len(node) > MAX_SPECIES:
        c.add("species", f"{len(node)} species; a case holds at most {MAX_SPECIES} (keep the species the outputs need)")
        return out
    for name, sp in node.items():
        key = f"species.{name}"
        if not check_name(c, name, key):
            continue
        if not is_table(sp):
            c.add(key, "must be a table with phase data (g, l, s/cr, aq)")
            continue
        c.unknown_keys(sp, SPECIES_KEYS, key)
        lib = SpeciesLibrary(c, key, name, sp, library)
        lib.allow_extrapolation = bool(settings.allow_extrapolation)
        formula = sp.get("formula", name)
        if "formula" not in sp and library and (_uses_library(sp) or any(k in sp for k in ("cas", "name", "smiles"))):
            filled = _fill_formula(c, lib, sp, name)
            if filled is None:
                continue
            formula = filled
        if not isinstance(formula, str):
            c.add(f"{key}.formula", "must be a string such as \"C2H6O\"")
            continue
        try:
            parse_formula(formula)
        except (UqthermoError, ValueError) as e:   # ValueError: the thermo parser on e.g. "NaCl-." (reported)
            c.add(f"{key}.formula" if "formula" in sp else key,
                  f"cannot read formula {formula!r}: {getattr(e, 'message', None) or 'malformed charge or count'}"
                  + ("" if "formula" in sp else " (give formula = \"...\")"))
            continue
        phases: dict[str, Phase] = {}
        windows = _windows(lib, sp, name, demands or [], settings) if _uses_library(sp) else {}
        for sym in PHASE_SYMBOLS:
            if sym in sp:
                ph = _phase(c, sp[sym], f"{key}.{sym}", name, sym, formula, sp.get("cas"), data, settings, library,
                            lib, windows)
                if ph is not None:
                    phases[sym] = ph
        if not any(s in sp for s in PHASE_SYMBOLS):
            c.add(key, "no phase data; add e.g. [species.%s.g] with formation_enthalpy and heat_capacity" % name)
            continue
        transitions = _transitions(c, sp.get("transition", []), key, name, phases, data, lib)
        try:
            out[name] = Species(name=name, formula=formula, phases=phases, transitions=transitions)
        except UqthermoError as e:
            c.add(key, e.message)
    return out


def _uses_library(sp: dict) -> bool:
    """Whether a species table has a ``library = "auto"``/source reference anywhere."""
    from .library_auto import is_auto_reference

    for sym in PHASE_SYMBOLS:
        ph = sp.get(sym)
        if is_table(ph) and any(is_auto_reference(v) for v in ph.values()):
            return True
    for t in sp.get("transition", []) if isinstance(sp.get("transition"), list) else []:
        if is_table(t) and any(is_auto_reference(t.get(k)) for k in ("temperature", "enthalpy")):
            return True
    return False


def _fill_formula(c: Collector, lib, sp: dict, name: str) -> str | None:
    """Formula of a species given by cas/name/smiles (or a key that is a name), from the library."""
    if not any(k in sp for k in ("cas", "name", "smiles")):
        try:
            parse_formula(name)
            return name                       # the key is a formula: keep today's behaviour
        except (UqthermoError, ValueError):
            lib.node = dict(sp, name=name)    # the key is a name: look it up as one
    ident = lib.identity()
    if ident is None:
        return None
    if ident.formula:
        return ident.formula
    if isinstance(sp.get("smiles"), str):
        try:
            from rdkit import Chem
            from rdkit.Chem.rdMolDescriptors import CalcMolFormula

            m = Chem.MolFromSmiles(sp["smiles"])
            if m is not None:
                return CalcMolFormula(m)
        except ImportError:
            pass
    c.add(f"species.{name}", "the library has no formula for this species; give formula = \"...\"")
    return None


def _windows(lib, sp: dict, name: str, demands: list, settings: Settings) -> dict:
    from .temperature_windows import phase_windows

    mine = [d for d in demands if d.species == name]
    trs = []
    for t in sp.get("transition", []) if isinstance(sp.get("transition"), list) else []:
        if not is_table(t):
            continue
        fr, to, tn = t.get("from"), t.get("to"), t.get("temperature")
        T = None
        if is_table(tn) and "library" in tn:
            T = lib.nominal_transition_temperature(fr, to)
        else:
            from ..units import parse_quantity

            try:
                T = parse_quantity(tn.get("value") if is_table(tn) else tn, "temperature")
            except Exception:
                T = None
        if T is not None and isinstance(fr, str) and isinstance(to, str):
            trs.append((fr, to, T))
    syms = [s for s in PHASE_SYMBOLS if s in sp]
    anchored = {s for s in syms if is_table(sp[s]) and "formation_enthalpy" in sp[s]}
    return phase_windows(mine, trs, syms, anchored, settings.reference_temperature)


def library_data_warnings(data: dict, used: set[str]) -> list[str]:
    """Warnings on the library data the outputs use (``used``: :func:`uqthermo.case.model.layout.used_data`).

    One line per datum whose uncertainty is assumed, keyed by the datum id, with the uncertainty,
    the curve it applies to and the library's own reason (``provenance.uncertainty_reason``: no
    source states one, a curve extrapolated beyond its range, Zabransky's class limits recalled,
    ...); one line per datum whose value disagrees with another source far beyond the typical
    deviation (treated as an outlier, :mod:`uqthermo.case.library.uncertainty`); one grouped line
    for group-contribution estimates. Data no output uses get no warning.
    """
    out: list[str] = []
    lib = [d for d in data.values() if d.id in used and getattr(d, "provenance", None)]
    for d in lib:
        prov = d.provenance
        if d.assumed:
            reason = prov.get("uncertainty_reason", "")
            for o in prov.get("outliers") or ():     # said on a line of its own below
                reason = reason.split(f"; {o['source']} disagrees")[0]
            stated = (f"u = {prov['standard_uncertainty']:.3g} {prov['unit']}"
                      if prov.get("standard_uncertainty") is not None and prov.get("unit") else d.stated)
            out.append(f"{d.id}: assumed uncertainty, {stated}: {reason} — check it, or give your own value with its "
                       "uncertainty")
        for o in prov.get("outliers") or ():
            at = f" at {o['temperature_K']:g} K" if o.get("temperature_K") is not None else ""
            if o.get("deviation") is not None:     # a scalar: the gap in its unit (and in % where it means something)
                pct = f" ({o['deviation_percent']:+.0f} %)" if o.get("deviation_percent") is not None else ""
                gap = (f"{o['deviation']:+.3g} {o['unit']}{pct} from the {o['selected_value']:.4g} {o['unit']} of "
                       f"{prov.get('selected')}")
            else:
                gap = f"{o['deviation_percent']:+.0f} % from {prov.get('selected')}"
            out.append(f"{d.id}: {o['source']} gives {o['value']:.4g} {o['unit']}{at}, {gap}: far beyond the typical "
                       f"deviation of the sources, treated as an outlier and left out of the uncertainty; check which "
                       f"is right")
        if prov.get("wide_spread"):
            out.append(wide_spread_warning(d.id, prov))
    est = [d for d in lib if d.provenance.get("estimate")]
    if est:
        out.append(f"ESTIMATES, not measurements: {len(est)} library datum(s) are group-contribution estimates: "
                   + ", ".join(d.id for d in est) + " — replace them by measured data where the result matters")
    return out


def wide_spread_warning(datum_id: str, prov: dict) -> str:
    """The warning for a library datum whose sources disagree widely without a majority
    (``provenance.wide_spread``, :func:`uqthermo.case.library.uncertainty.wide_spread_limit`): species,
    phase, datum, each source's value, u against the limit, and what to do."""
    from ..library.selection import QUANTITY_LABELS
    from ..library.uncertainty import OUTLIER_FACTOR

    w = prov["wide_spread"]
    rule = f"{OUTLIER_FACTOR:g} times the uncertainty assumed for a compilation, our rule"
    what = f"{QUANTITY_LABELS.get(w['quantity'], w['quantity'])} of {prov.get('name') or datum_id.split('.')[0]} " \
           f"({w['phase']})"
    rows = [r for r in prov.get("sources") or () if not r.get("estimate") and not r.get("outlier")]
    if w["unit"] == "relative":
        lo, hi = prov["window_K"]
        at = f"{lo:g} K" if hi <= lo else f"{lo:g} and {hi:g} K"
        vals = "; ".join(f"{r['source']} " + ", ".join(f"{v:.4g}" for v in r["cp_J_per_mol_K"].values())
                         for r in rows if r.get("cp_J_per_mol_K"))
        return (f"{datum_id}: the sources of the {what} disagree widely — {vals} J/(mol*K) at {at} — so its relative "
                f"u = {100 * prov['relative_standard_uncertainty']:.2g} % (half their largest spread) is beyond "
                f"{100 * w['limit']:.3g} % ({rule}); check the "
                "primary literature or measure it")
    n = w.get("distinct_values") or len(rows)
    why = ("only two independent values, no majority" if n <= 2 else
           f"{n} independent values, none singled out as an outlier")
    vals = "; ".join(f"{r['source']} {r['value']:.4g}" for r in rows)
    return (f"{datum_id}: the sources of the {what} disagree widely ({why}) — {vals} {w['unit']} — so its "
            f"u = {prov['standard_uncertainty']:.3g} {w['unit']} (half their spread) is beyond {w['limit']:.3g} "
            f"{w['unit']} ({rule}); check the primary literature "
            "or measure it")


def _phase(c: Collector, node: Any, key: str, sp: str, sym: str, formula: str, cas: Any, data: dict,
           settings: Settings, library: bool, lib=None, windows: dict | None = None) -> Phase | None:
    if not is_table(node):
        c.add(key, "must be a table with formation_enthalpy, standard_entropy and/or heat_capacity")
        return None
    c.unknown_keys(node, PHASE_KEYS, key)
    fh = se = None
    ident = cas if isinstance(cas, str) and cas else formula
    if "formation_enthalpy" in node:
        fh = _sourced_scalar(c, node["formation_enthalpy"], f"{key}.formation_enthalpy", "molar_energy",
                             f"{sp}.{sym}.formation_enthalpy", "formation enthalpy", sp, sym, data, ident, library, lib)
        if fh is not None and abs(fh) > MAX_ABS_ENTHALPY:
            c.add(f"{key}.formation_enthalpy", f"{fh / 1e3:.4g} kJ/mol is not a plausible formation enthalpy")
            fh = None
    if "standard_entropy" in node:
        se = _sourced_scalar(c, node["standard_entropy"], f"{key}.standard_entropy", "molar_entropy",
                             f"{sp}.{sym}.standard_entropy", "standard entropy", sp, sym, data, ident, library, lib)
        if se is not None and sym != "aq" and se <= 0:
            c.add(f"{key}.standard_entropy", "the standard entropy of a neutral species is positive (third law)")
            se = None
    cp = None
    if "heat_capacity" in node:
        t_ref = settings.reference_temperature
        win = (windows or {}).get(sym) or (windows or {}).get(PHASE_ALIASES.get(sym, sym)) or (t_ref, t_ref)
        cp = read_heat_capacity(c, node["heat_capacity"], f"{key}.heat_capacity", sp, sym, data, settings, ident,
                                library, lib, win)
    return Phase(symbol=sym, cp=cp, formation_enthalpy=fh, standard_entropy=se)


def _sourced_scalar(c: Collector, node: Any, key: str, dimension: str, datum_id: str, quantity: str, sp: str,
                    sym: str, data: dict, ident: str, library: bool, lib=None) -> float | None:
    lib_name = ""
    from .library_auto import is_auto_reference

    if lib is not None and is_auto_reference(node):
        node = lib.scalar(node, key, quantity, sym)
        if node is None:
            return None
        return _register_auto(c, node, key, dimension, datum_id, quantity, sp, sym, data)
    if is_table(node) and "library" in node:
        from .library_named import resolve_scalar

        node, lib_name = resolve_scalar(c, node, key, quantity, ident, sym, enabled=library)
        if node is None:
            return None
    assumed = bool(lib_name and is_table(node) and node.pop("_assumed", False))
    parsed = read_uncertain(c, node, key, dimension)
    if parsed is None:
        return None
    d = make_datum(datum_id, quantity, dimension, parsed, species=sp, phase=sym, library=lib_name)
    if assumed:
        d.assumed = True
        c.warn(key, f"the {lib_name} dataset states no uncertainty for this value; an assumed uncertainty ({d.stated}) is used — check it")
    register(c, data, d, key)
    return parsed[0]


def _register_auto(c: Collector, node: dict, key: str, dimension: str, datum_id: str, quantity: str, sp: str,
                   sym: str, data: dict, transition: str = "") -> float | None:
    """Register a datum resolved by ``library = "auto"`` (private keys consumed here)."""
    prov, assumed, label = node.pop("_provenance"), node.pop("_assumed"), node.pop("_label")
    node.pop("_estimate", None)
    parsed = read_uncertain(c, node, key, dimension, temperature=dimension == "temperature",
                            user_u=(prov or {}).get("uncertainty_basis") == "user")
    if parsed is None:
        return None
    d = make_datum(datum_id, quantity, dimension, parsed, species=sp, phase=transition or sym, library=label)
    if (prov or {}).get("uncertainty_basis") != "user":
        from .library_auto import restate_uncertainty

        restate_uncertainty(d, node)
    d.assumed = bool(assumed)
    d.provenance = prov
    register(c, data, d, key)
    return parsed[0]


def _transitions(c: Collector, node: Any, key: str, sp: str, phases: dict[str, Phase], data: dict, lib=None
                 ) -> list[Transition]:
    out: list[Transition] = []
    if not isinstance(node, list):
        c.add(f"{key}.transition", "must be an array of tables ([[species.%s.transition]])" % sp)
        return out
    pairs: dict[frozenset, int] = {}
    for i, t in enumerate(node):
        tk = f"{key}.transition[{i}]"
        if not is_table(t):
            c.add(tk, "must be a table with from, to, temperature and enthalpy")
            continue
        c.unknown_keys(t, {"from", "to", "temperature", "enthalpy", "source", "note", "pressure"}, tk)
        fr, to = t.get("from"), t.get("to")
        ok = True
        for k, v in (("from", fr), ("to", to)):
            if v not in PHASE_SYMBOLS:
                c.add(f"{tk}.{k}", f"unknown phase {v!r}; use one of {', '.join(PHASE_SYMBOLS)}")
                ok = False
            elif v not in phases:
                c.add(f"{tk}.{k}", f"phase {v!r} has no data in [species.{sp}.{v}]")
                ok = False
        if not ok:
            continue
        if fr == to:
            c.add(tk, f"a transition from {fr!r} to itself is meaningless")
            continue
        pair = frozenset((fr, to))
        if pair in pairs:
            c.add(tk, f"transition between {fr!r} and {to!r} is given twice (also transition[{pairs[pair]}]); "
                      "give each transition once, in the heating direction")
            continue
        pairs[pair] = i
        if "temperature" not in t or "enthalpy" not in t:
            c.add(tk, "needs temperature and enthalpy")
            continue
        tid = f"{sp}.transition.{fr}-{to}"
        from .library_auto import is_auto_reference

        auto_t = lib is not None and is_auto_reference(t["temperature"])
        auto_h = lib is not None and is_auto_reference(t["enthalpy"])
        tnode, hnode = t["temperature"], t["enthalpy"]
        if auto_t:
            tnode = lib.transition(tnode, f"{tk}.temperature", fr, to, "temperature")
            if tnode is None:
                continue
        tt = read_uncertain(c, {k: v for k, v in tnode.items() if not k.startswith("_")} if auto_t else tnode,
                            f"{tk}.temperature", "temperature", temperature=True)
        if tt is None:
            continue
        if auto_h:
            hnode = lib.transition(hnode, f"{tk}.enthalpy", fr, to, "enthalpy", T=tt[0])
            if hnode is None:
                continue
        th = read_uncertain(c, {k: v for k, v in hnode.items() if not k.startswith("_")} if auto_h else hnode,
                            f"{tk}.enthalpy", "molar_energy")
        if th is None:
            continue
        if th[0] < 0 and (fr, to) in (("cr", "l"), ("s", "l"), ("l", "g"), ("cr", "g"), ("s", "g")):
            c.add(f"{tk}.enthalpy", f"melting/vaporisation/sublimation enthalpy must be positive on heating ({fr}→{to})")
            continue
        if abs(th[0]) > 1e6:
            c.add(f"{tk}.enthalpy", f"{th[0] / 1e3:.4g} kJ/mol is not a plausible transition enthalpy")
            continue
        register(c, data, make_datum(f"{tid}.temperature", "transition temperature", "temperature", tt,
                                     species=sp, phase=f"{fr}-{to}"), f"{tk}.temperature")
        register(c, data, make_datum(f"{tid}.enthalpy", "transition enthalpy", "molar_energy", th,
                                     species=sp, phase=f"{fr}-{to}"), f"{tk}.enthalpy")
        for auto, nd, did in ((auto_t, tnode, f"{tid}.temperature"), (auto_h, hnode, f"{tid}.enthalpy")):
            if auto and did in data:
                data[did].library = nd["_label"]
                data[did].provenance = nd["_provenance"]
                data[did].assumed = bool(nd["_assumed"])
        if data[f"{tid}.temperature"].source == "" and isinstance(t.get("source"), str):
            data[f"{tid}.temperature"].source = t["source"]
        if data[f"{tid}.enthalpy"].source == "" and isinstance(t.get("source"), str):
            data[f"{tid}.enthalpy"].source = t["source"]
        out.append(Transition(from_phase=fr, to_phase=to, temperature=tt[0], enthalpy=th[0]))
    # consistency: a phase left twice on heating, or transitions whose temperatures do not rise along a chain
    said: set[str] = set()

    def once(message: str) -> None:     # the same defect is met from every start of the chain
        if message not in said:
            said.add(message)
            c.add(f"{key}.transition", message)

    by_from: dict[str, Transition] = {}
    for t in out:
        if t.from_phase in by_from:
            once(f"phase {t.from_phase!r} has two transitions on heating "
                 f"(to {by_from[t.from_phase].to_phase!r} and to {t.to_phase!r}); keep the stable one")
        by_from[t.from_phase] = t
    for t in out:
        nxt = by_from.get(t.to_phase)
        seen = {t.from_phase}
        cur = t
        while nxt is not None:
            if nxt.temperature <= cur.temperature:
                once(f"{cur.from_phase}→{cur.to_phase} at {cur.temperature:g} K is followed by "
                     f"{nxt.from_phase}→{nxt.to_phase} at {nxt.temperature:g} K; temperatures must rise along the chain")
                break
            if nxt.to_phase in seen:
                once("transitions form a cycle through phases " + ", ".join(sorted(seen | {nxt.from_phase, nxt.to_phase})))
                break
            seen.add(nxt.from_phase)
            cur, nxt = nxt, by_from.get(nxt.to_phase)
    return out
