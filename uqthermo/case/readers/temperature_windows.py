"""Temperature windows a case needs from each species' phases (for ``library = "auto"``).

A library heat-capacity curve is chosen only if its validity range covers the temperatures the
case's outputs will evaluate it at. This module reads the raw ``[[output]]`` and
``[reaction.*]`` tables (before they are validated — a malformed entry is skipped here and
reported by its own reader) and returns, per species, the *demands*:

* a reaction output (reaction enthalpy, Gibbs energy, equilibrium constant, heat release, the
  reaction of an adiabatic rise) holds each participant in the phase written in the equation from
  the reference temperature to the output temperature(s): ``held`` demands;
* a heating output (``heating_enthalpy``, the charge of an adiabatic rise) starts a species in a
  phase and follows its transitions on the way: ``path`` demands, split at the transition
  temperatures by :func:`phase_windows`.

The end of an adiabatic rise is not known before the run: its window ends at the ``limit`` (or
``max_temperature``) when given, else at the start temperature; the run's validity check reports
a curve that the actual path leaves.
"""

from __future__ import annotations

import math
from dataclasses import dataclass
from typing import Any

__all__ = ["Demand", "species_demands", "phase_windows", "global_window"]


@dataclass(frozen=True)
class Demand:
    species: str
    phase: str | None
    lo: float
    hi: float
    path: bool      # True: follow transitions (heating); False: held in its phase (reactions)


def _T(value: Any) -> float | None:
    from ..units import parse_quantity

    if isinstance(value, dict):
        value = value.get("value")
    try:
        v = parse_quantity(value, "temperature")
    except Exception:
        return None
    return v if math.isfinite(v) and v > 0 else None


def _temps(o: dict) -> list[float]:
    out = []
    for k in ("temperature", "start_temperature", "process_temperature", "limit", "max_temperature", "from", "to"):
        if k in o:
            t = _T(o[k])
            if t is not None:
                out.append(t)
    ts = o.get("temperatures")
    if isinstance(ts, dict):
        for k in ("from", "to"):
            t = _T(ts.get(k))
            if t is not None:
                out.append(t)
    return out


def _participants(raw: dict, reaction: Any) -> list[tuple[str, str | None]]:
    from ...thermo.reaction import parse_equation

    reactions = raw.get("reaction")
    node = reactions.get(reaction) if isinstance(reaction, str) and isinstance(reactions, dict) else None
    eq = node.get("equation") if isinstance(node, dict) else None
    try:
        return [(p.species, p.phase) for p in parse_equation(eq)]
    except Exception:
        return []


def _ref(text: Any) -> tuple[str, str | None] | None:
    import re

    if not isinstance(text, str):
        return None
    m = re.match(r"^\s*([^()\s]+)\s*(?:\(\s*([a-z]{1,3})\s*\))?\s*$", text)
    return (m.group(1), m.group(2)) if m else None


def species_demands(raw: dict, t_ref: float = 298.15) -> list[Demand]:
    """Demands of every output of a raw case document (see the module docstring)."""
    outs = raw.get("output")
    outs = list(outs.values()) if isinstance(outs, dict) else (outs if isinstance(outs, list) else [])
    out: list[Demand] = []
    for o in outs:
        if not isinstance(o, dict):
            continue
        temps = _temps(o)
        if not temps:
            continue
        kind = o.get("kind")
        reactions = []
        if isinstance(o.get("reaction"), str):
            reactions.append(o["reaction"])
        if isinstance(o.get("extent_rate"), dict):
            reactions += [r for r in o["extent_rate"] if isinstance(r, str)]
        hi_r = max(temps)
        for r in reactions:
            for sp, ph in _participants(raw, r):
                out.append(Demand(sp, ph, min(t_ref, min(temps)), hi_r, False))
        if kind == "heating_enthalpy":
            a, b = _T(o.get("from")), _T(o.get("to"))
            if a is not None and b is not None:
                refs = [o.get("species")] if "species" in o else list((o.get("mixture") or {}).keys())
                for ref in refs:
                    r = _ref(ref)
                    if r:
                        out.append(Demand(r[0], r[1], min(a, b), max(a, b), True))
        if kind == "adiabatic_temperature_rise" and isinstance(o.get("charge"), dict):
            for ref in o["charge"]:
                r = _ref(ref)
                if r:
                    out.append(Demand(r[0], r[1], min(temps), max(temps), True))
        if kind == "heat_release" and isinstance(o.get("feed"), list):
            # open-system balance: each fed species is heated from its stream temperature to the reactor's
            t_out = _T(o.get("temperature"))
            for f in o["feed"]:
                t_in = _T(f.get("temperature")) if isinstance(f, dict) else None
                if t_in is None or t_out is None or not isinstance(f.get("flows"), dict):
                    continue
                for ref in f["flows"]:
                    r = _ref(ref)
                    if r:
                        out.append(Demand(r[0], r[1], min(t_in, t_out), max(t_in, t_out), True))
    return out


def global_window(demands: list[Demand], t_ref: float = 298.15) -> tuple[float, float]:
    """[min, max] over all demands and the reference temperature."""
    if not demands:
        return t_ref, t_ref
    return min(t_ref, min(d.lo for d in demands)), max(t_ref, max(d.hi for d in demands))


def phase_windows(demands: list[Demand], transitions: list[tuple[str, str, float]], phases: list[str],
                  anchored: set[str], t_ref: float = 298.15) -> dict[str, tuple[float, float]]:
    """Window per phase of one species.

    Parameters
    ----------
    demands : list of Demand
        This species' demands (phase None: the only phase).
    transitions : list of (from, to, T)
        Nominal transitions on heating.
    phases : list of str
        Phase symbols written for the species.
    anchored : set of str
        Phases that have a formation enthalpy (held demands in other phases are routed from an
        anchored phase through one transition).
    """
    win: dict[str, list[float]] = {}

    def add(ph, a, b):
        if ph is None:
            return
        w = win.setdefault(ph, [a, b])
        w[0], w[1] = min(w[0], a), max(w[1], b)

    by_from = {f: (t, T) for f, t, T in transitions}
    by_to = {t: (f, T) for f, t, T in transitions}
    for d in demands:
        ph = d.phase if d.phase else (phases[0] if len(phases) == 1 else None)
        if ph in ("cr",) and ph not in phases and "s" in phases:
            ph = "s"
        if ph is None:
            continue
        if not d.path:
            if ph in anchored or not anchored:
                add(ph, d.lo, d.hi)
                continue
            # routed from an anchored phase through one transition
            if ph in by_to and by_to[ph][0] in anchored:
                q, T = by_to[ph]
                add(q, t_ref, max(t_ref, T))
                add(ph, min(T, d.hi), max(T, d.hi))
            elif ph in by_from and by_from[ph][0] in anchored:
                q, T = by_from[ph]
                add(q, min(T, t_ref), max(T, t_ref))
                add(ph, min(T, d.lo), max(T, d.hi))
            else:
                add(ph, d.lo, d.hi)
            continue
        # a heating path: split at the transitions crossed on the way up
        a, cur, seen = d.lo, ph, set()
        while cur in by_from and cur not in seen:
            seen.add(cur)
            nxt, T = by_from[cur]
            if not (a < T < d.hi):
                break
            add(cur, a, T)
            a, cur = T, nxt
        add(cur, a, d.hi)
    return {k: (v[0], v[1]) for k, v in win.items()}
