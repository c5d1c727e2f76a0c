"""Warn about liquids the case holds above their normal boiling point (a likely slip of phase or pressure).

A species written as a liquid (``X(l)``) at a temperature above its normal boiling point Tb is a
liquid only under a pressure above its vapour pressure there. The case format has no operating
pressure (a transition's ``pressure`` is not read; ``initial_pressure`` is the start of a closed
vessel's gas), so the tool cannot tell whether that holds, and says so once per species, at the
highest such temperature:

* a reaction output (reaction enthalpy, Gibbs energy, equilibrium constant, heat release, the
  reaction of an adiabatic rise at its start temperature) holds each participant in the phase its
  equation states, at each output temperature;
* a heating path (``heating_enthalpy``, a feed stream heated to the reactor) follows the species'
  transitions: only the part of the path spent in ``l`` counts;
* the charge of an adiabatic rise counts at the start temperature only: the rise itself is defined
  without evaporative cooling (Stoessel), and the boiling-limited end state is reported beside it.

Tb is the case's own l → g transition temperature when it gives one (the case's boiling point may
be at another pressure), else the library's normal boiling point (``library = "auto"`` rules,
estimates left out) for a species the case identifies by ``cas`` or ``name``. A temperature within
:data:`MARGIN` of Tb does not count (100 °C against water's 373.124 K is at the boiling point, not
above it: a rule of our own). Where a vapour-pressure correlation has the species
(:mod:`uqthermo.case.library.vapour_pressure`), the warning gives the vapour pressure at that
temperature.
"""

from __future__ import annotations

__all__ = ["MARGIN", "liquid_boiling_warnings"]

MARGIN = 1.0
"""K: a liquid counts as above its boiling point only beyond Tb + MARGIN (a rule of our own)."""


def _hottest_liquids(case) -> dict[str, tuple[float, str]]:
    """Species name -> (highest temperature it is taken as liquid at, K; the output key saying so)."""
    hot: dict[str, tuple[float, str]] = {}

    def note(name: str, phase, T: float, key: str) -> None:
        sp = case.species.get(name)
        if sp is None:
            return
        try:
            if sp.resolve_phase(phase) != "l":
                return
        except Exception:         # an unknown phase is reported by its reader
            return
        if name not in hot or T > hot[name][0]:
            hot[name] = (float(T), key)

    def path(name: str, phase, T1: float, T2: float, key: str) -> None:
        sp = case.species.get(name)
        if sp is None:
            return
        try:
            segments = sp.path(phase, T1, T2)
        except Exception:
            return
        for s in segments:
            if s.transition is None and s.phase == "l":
                note(name, "l", max(s.T_start, s.T_end), key)

    for o in case.outputs:
        key = f"output.{o.name}"
        if o.kind == "adiabatic_temperature_rise":
            temps = [o.start_temperature]
        elif o.kind == "heating_enthalpy":
            temps = []
        elif o.temperatures is not None and len(o.temperatures):
            temps = [float(t) for t in o.temperatures]
        else:
            temps = [o.temperature_nominal]
        for r in ([o.reaction] if o.reaction else []) + [r for r in o.extent_rates if r != o.reaction]:
            rx = case.reactions.get(r)
            for p in rx.participants if rx is not None else ():
                for T in temps:
                    note(p.species, p.phase, T, key)
        if o.kind == "heating_enthalpy":
            refs = [(o.species, o.phase or None)] if o.species else list(o.mixture)
            for name, ph in refs:
                path(name, ph, o.t_from, o.t_to, key)
        for name, ph in o.charge:
            note(name, ph, o.start_temperature, key)
        for f in o.feeds:
            for name, ph in f.flows:
                for T in temps:
                    path(name, ph, f.temperature, T, key)
    return hot


def _boiling_point(case, name: str, library: bool) -> tuple[float, str, str | None] | None:
    """(Tb in K, where it comes from, CAS number, "" when unknown or None when not yet looked up) of a
    species: its l → g transition in the case, else the library's normal boiling point (measured
    values only)."""
    for t in case.species[name].transitions:
        if t.from_phase == "l" and t.to_phase == "g":
            return float(t.temperature), "the case's transition l → g", None
    ident = _identity(case, name, library)
    if ident is None or not ident.cas:
        return None
    from ...errors import InputError
    from ..library.selection import select_value

    try:
        sel = select_value(ident, "boiling_temperature", "l-g")
    except (InputError, ValueError, KeyError):
        return None
    if sel.estimate:
        return None
    return float(sel.value), sel.chosen.source.label, ident.cas


def _identity(case, name: str, library: bool):
    """The library identity of a species (quietly; None when unknown or without the library): by the
    CAS number its library data carry, else by the case's ``cas`` or ``name``."""
    if not library:
        return None
    cas = next((d.provenance["cas"] for d in case.data.values() if d.species == name
                and isinstance(getattr(d, "provenance", None), dict) and d.provenance.get("cas")), None)
    nm = None
    if cas is None:
        raw = ((case.raw or {}).get("species") or {}).get(name)
        raw = raw if isinstance(raw, dict) else {}
        cas, nm = (raw.get(k) if isinstance(raw.get(k), str) and raw.get(k).strip() else None for k in ("cas", "name"))
        if not (cas or nm):
            return None
    from ...errors import InputError
    from ..library.identify import identify

    try:
        return identify(cas=cas, name=nm)
    except (InputError, ValueError, KeyError):
        return None


def liquid_boiling_warnings(case, library: bool = True) -> list[str]:
    """One warning per species the case takes as liquid above its boiling point (module docstring).

    ``library``: library look-ups allowed (Tb and the vapour pressure of a species known by CAS
    number or name); without them only the case's own transitions give Tb.
    """
    out: list[str] = []
    for name, (T, key) in _hottest_liquids(case).items():
        tb = _boiling_point(case, name, library)
        if tb is None:
            continue
        Tb, where, cas = tb
        if not T > Tb + MARGIN:
            continue
        if cas is None:                 # Tb from the case: the CAS number only now, for the vapour pressure
            ident = _identity(case, name, library)
            cas = ident.cas if ident is not None else ""
        normal = "boiling point" if where.startswith("the case") else "normal boiling point"
        psat = None
        if cas and library:
            from ..library.vapour_pressure import vapour_pressure

            psat = vapour_pressure(cas, T)
        need = (f"this needs a pressure above its vapour pressure there (about {psat[0] / 1e5:.2g} bar by {psat[1]})"
                if psat else "this needs a pressure above its vapour pressure there")
        out.append(f"{key}: {name} is taken as liquid at T = {T:.5g} K ({T - 273.15:.4g} °C), above its {normal} "
                   f"Tb = {Tb:.5g} K ({where}): {need} — check the operating pressure, or give the vapour phase / "
                   "a transition")
    return out
