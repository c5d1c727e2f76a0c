"""The heat-capacity curves a case actually uses: where, and as functions of the model's inputs.

A reviewer wants to see the data behind the numbers: each species' Cp(T) over the part of
the temperature path the outputs use, with its uncertainty, its validity range(s) and the
phase changes. :func:`curve_specs` finds, for every species phase with a heat-capacity
model, the temperatures the outputs integrate it over (the segments of each species' route
from its anchor at the reference temperature, of heating paths and of the charge of an
adiabatic balance); :func:`cp_function` returns ``f(X[N, D]) -> Cp[N, K]`` on a grid over
each of these spans (J/(mol·K)), from the same decoded inputs as the model, so that the
orchestration can give each point its standard uncertainty by linear propagation (exact:
every Cp model is linear in its coefficients).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable, Mapping

import numpy as np

from ...errors import UqthermoError
from ..schema import Case
from .layout import Model, values_decoder

__all__ = ["CurveSpec", "curve_specs", "cp_function"]

#: points per curve
GRID_POINTS = 61
#: the plotted window extends the used span by this fraction on each side (within the validity range)
PAD = 0.15


@dataclass
class CurveSpec:
    """One species phase's heat-capacity curve as the report shows it."""

    species: str
    phase: str
    datum: str                     # datum id of the curve (``H2O.l.heat_capacity``)
    model: str                     # "constant" | "polynomial" | "shomate" | "nasa7"
    ranges: list[tuple[float, float]]
    extrapolation_allowed: bool
    used: tuple[float, float]      # span of temperatures the outputs integrate over, K
    grid: np.ndarray = field(repr=False, default_factory=lambda: np.zeros(0))


def _add(spans: dict, key: tuple[str, str], a: float, b: float) -> None:
    lo, hi = min(a, b), max(a, b)
    if key in spans:
        lo, hi = min(lo, spans[key][0]), max(hi, spans[key][1])
    spans[key] = (lo, hi)


def _route(spans: dict, case: Case, species: str, phase: str | None, T: float, T_ref: float) -> None:
    sp = case.species[species]
    segs = sp.enthalpy_path(phase, T, T_ref)
    for k, s in enumerate(segs):
        if s.transition is not None:
            continue
        a, b = (min(s.T_start, T_ref), max(s.T_end, T_ref)) if k == 0 else (s.T_start, s.T_end)
        _add(spans, (species, s.phase), a, b)


def _heating(spans: dict, case: Case, species: str, phase: str | None, T1: float, T2: float) -> None:
    for s in case.species[species].path(phase, T1, T2):
        if s.transition is None:
            _add(spans, (species, s.phase), s.T_start, s.T_end)


def _reaction(spans: dict, case: Case, name: str, temps, T_ref: float) -> None:
    r = case.reactions[name]
    for p in r.participants:
        sp = case.species[p.species]
        for T in np.atleast_1d(np.asarray(temps, dtype=float)):
            if r.measured_enthalpy is not None:
                _add(spans, (p.species, sp.resolve_phase(p.phase)), r.measured_enthalpy[1], float(T))
            else:
                _route(spans, case, p.species, p.phase, float(T), T_ref)


def curve_specs(case: Case, final_temperatures: Mapping[int, float] | None = None) -> list[CurveSpec]:
    """Every species phase with a Cp model that an output integrates over, with the span used.

    ``final_temperatures`` maps the index of an ``adiabatic_temperature_rise`` output to the
    highest final temperature worth showing (e.g. an upper quantile of the result); the
    charge's curves are shown from the start temperature up to it. Phases are listed in the
    order of the case's species.
    """
    T_ref = case.settings.reference_temperature
    spans: dict[tuple[str, str], tuple[float, float]] = {}
    finals = dict(final_temperatures or {})
    for i, o in enumerate(case.outputs):
        temps = o.temperatures if o.temperatures is not None else np.array([o.temperature_nominal])
        try:
            if o.kind in ("reaction_enthalpy", "reaction_gibbs_energy", "equilibrium_constant"):
                _reaction(spans, case, o.reaction, temps, T_ref)
            elif o.kind == "heat_release":
                for r in o.extent_rates:
                    _reaction(spans, case, r, temps, T_ref)
            elif o.kind == "heating_enthalpy":
                if o.species:
                    _heating(spans, case, o.species, o.phase, o.t_from, o.t_to)
                for (sp, ph) in o.mixture:
                    _heating(spans, case, sp, ph, o.t_from, o.t_to)
            elif o.kind == "adiabatic_temperature_rise":
                _reaction(spans, case, o.reaction, [o.start_temperature], T_ref)
                top = finals.get(i)
                if top is not None and top > o.start_temperature:
                    for (sp, ph) in o.charge:
                        _heating(spans, case, sp, ph, o.start_temperature, float(top))
        except UqthermoError:   # a route the model refused would have stopped the run; skip quietly
            continue
    out = []
    for name, sp in case.species.items():
        for ph, phase in sp.phases.items():
            if (name, ph) not in spans or phase.cp is None:
                continue
            cp = phase.cp
            lo, hi = spans[(name, ph)]
            pad = PAD * max(hi - lo, 20.0)
            a = max(lo - pad, 0.5 * lo) if cp.allow_extrapolation else max(cp.t_min, lo - pad)
            b = hi + pad if cp.allow_extrapolation else min(cp.t_max, hi + pad)
            a, b = min(a, lo), max(b, hi)
            grid = np.linspace(a, b, GRID_POINTS)
            out.append(CurveSpec(name, ph, f"{name}.{ph}.heat_capacity", cp.kind, list(cp.ranges),
                                 bool(cp.allow_extrapolation), (float(lo), float(hi)), grid))
    return out


def cp_function(case: Case, model: Model, specs: list[CurveSpec]) -> Callable[[np.ndarray], np.ndarray]:
    """``f(X[N, D]) -> Cp[N, Σ grid sizes]`` (J/(mol·K)), curves concatenated in the order of ``specs``."""
    decode = values_decoder(case, model.inputs.groups)
    sizes = [s.grid.size for s in specs]
    starts = np.cumsum([0] + sizes)

    def f(X: np.ndarray) -> np.ndarray:
        X = np.asarray(X, dtype=float)
        n = X.shape[0]
        out = np.empty((n, int(starts[-1])))
        sv, _ = decode(X)
        for k, s in enumerate(specs):
            cp = case.species[s.species].phases[s.phase].cp
            c = sv.get(s.species, {}).get(f"{s.phase}.heat_capacity")
            v = cp.cp(s.grid, c, check=False)
            out[:, starts[k]:starts[k + 1]] = np.broadcast_to(v, (n, s.grid.size))
        return out

    return f
