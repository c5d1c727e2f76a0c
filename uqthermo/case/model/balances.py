"""Model pieces for the energy-balance outputs: adiabatic rise (MTSR, boiling-limited end state,
constant volume, closed-vessel pressure, mass basis) and the open-system duty of a continuous
reactor. Used by :mod:`uqthermo.case.model.builder`; the physics is in :mod:`uqthermo.thermo.energy`,
:mod:`uqthermo.thermo.runaway` and :mod:`uqthermo.thermo.streams`.

Everything works on one block of samples at a time (arrays (n,) or (n, 1)); no per-sample loop.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from ...errors import PhysicsError, UqthermoError
from ...thermo.composition import formula_molar_mass
from ...thermo.cp import R as GAS_CONSTANT
from ...thermo.energy import solve_final_temperature
from ...thermo.runaway import (
    closed_vessel_pressure,
    evaporated_amount,
    gas_internal_energy_correction,
    no_evaporation_heating,
    reaction_internal_energy,
    vaporisation_point,
)
from ..schema import Case, OutputSpec

#: names of the criticality-class indicator columns
CLASS_COLUMNS = tuple(f"class_{k}" for k in range(1, 6))


def _molar_mass(sp) -> float | None:
    try:
        return formula_molar_mass(sp.formula or sp.name)
    except UqthermoError:
        return None


@dataclass
class AdiabaticPlan:
    """What one adiabatic output needs, worked out once when the model is built."""

    output: OutputSpec
    charge: list[tuple[str, str, str]]                       # (species, phase, amount datum)
    vaporisation: dict[tuple[str, str], tuple[float, str]]   # (species, phase) -> (T_v, phase below)
    first_transition: float | None                           # lowest transition above the start (nominal)
    t_hi_nb: float                                           # search bounds, K
    t_hi_bl: float
    t_lo: float
    bound_names: dict[str, str] = field(default_factory=dict)   # which data set each bound
    gas: list[tuple[str, str, str]] = field(default_factory=list)   # gas species of the charge
    delta_nu_gas: float = 0.0
    molar_masses: dict[tuple[str, str], float | None] = field(default_factory=dict)

    @property
    def boils(self) -> bool:
        """The charge meets a vaporisation and the boiling-limited balance is solved too."""
        return bool(self.vaporisation) and not self.output.constant_volume

    def aux_names(self) -> list[str]:
        """Auxiliary model columns of this output (after the limit indicators), in order."""
        o = self.output
        names = []
        if o.process_temperature is not None and o.mtt is not None:
            names.append("mtsr_above_mtt")
        if o.process_temperature is not None and o.td24 is not None:
            names.append("mtsr_above_td24")
        if o.process_temperature is not None and o.mtt is not None and o.td24 is not None:
            names += list(CLASS_COLUMNS)
        if self.first_transition is not None:
            names.append("phase_change")
        if self.boils:
            names += ["tempering", "boiling_limited_temperature"]
            names += [f"evaporated:{sp}.{ph}" for sp, ph in self.vaporisation]
        if o.basis == "mass":
            names += ["specific_heat_of_reaction", "specific_heat_capacity", "charge_mass"]
        if o.initial_pressure_datum:
            names.append("final_pressure")
        return names


def adiabatic_plan(case: Case, o: OutputSpec) -> AdiabaticPlan:
    species = case.species
    T0 = o.start_temperature
    charge = [(sp, ph, did) for (sp, ph), did in o.charge.items()]
    vap = {}
    for sp, ph, _ in charge:
        try:
            v = vaporisation_point(species[sp], ph, T0)
        except UqthermoError:
            v = None
        if v is not None:
            vap[(sp, ph)] = v
    temps = [t.temperature for sp, _, _ in charge for t in species[sp].transitions if t.temperature > T0]
    bounds = {}
    top = max(3000.0, T0 + 2000.0)
    t_hi_nb = t_hi_bl = top
    t_lo = 1.0
    for sp, ph, _ in charge:
        s = species[sp]
        try:
            hot = s.final_phase(ph, T0, 1e5)
            cold = s.final_phase(ph, T0, 1.0)
        except UqthermoError:
            continue
        cp = s.phases[hot].cp
        if cp is not None and not cp.allow_extrapolation and math.isfinite(cp.t_max):
            if float(cp.t_max) < t_hi_bl:
                t_hi_bl = float(cp.t_max)
                bounds["hi_bl"] = f"{sp}({hot})"
            if (sp, ph) not in vap and float(cp.t_max) < t_hi_nb:
                t_hi_nb = float(cp.t_max)
                bounds["hi_nb"] = f"{sp}({hot})"
        cpc = s.phases[cold].cp
        if cpc is not None and not cpc.allow_extrapolation and float(cpc.t_min) > t_lo:
            t_lo = float(cpc.t_min)
            bounds["lo"] = f"{sp}({cold})"
    t_lo = min(t_lo, T0)
    if o.max_temperature:
        t_hi_nb = t_hi_bl = o.max_temperature
        bounds["hi_nb"] = bounds["hi_bl"] = "max_temperature"
    t_hi_nb, t_hi_bl = max(t_hi_nb, T0), max(t_hi_bl, T0)
    gas = [(sp, ph, did) for sp, ph, did in charge if ph == "g"]
    dnu = sum(p.nu for p in case.reactions[o.reaction].participants if p.phase == "g")
    mm = {(sp, ph): _molar_mass(species[sp]) for sp, ph, _ in charge}
    return AdiabaticPlan(output=o, charge=charge, vaporisation=vap, first_transition=min(temps) if temps else None,
                         t_hi_nb=t_hi_nb, t_hi_bl=t_hi_bl, t_lo=t_lo, bound_names=bounds, gas=gas,
                         delta_nu_gas=float(dnu), molar_masses=mm)


def _unreachable(plan: AdiabaticPlan, Tf, target, h, T0: float, hi: float, lo: float, which: str) -> PhysicsError:
    """The error for samples whose balance leaves the data's temperature range, with the would-be end temperature."""
    bad = ~np.isfinite(Tf)
    n = Tf.size
    hot = bad & (target >= 0)
    side_hot = bool(np.count_nonzero(hot) >= np.count_nonzero(bad & ~hot))
    edge = hi if side_hot else lo
    sel = hot if side_hot else (bad & ~hot)
    # continue past the edge with the heat capacity the charge has there (constant): a first estimate only
    T_edge = np.full(n, edge)
    h_edge = h(T_edge)
    step = 1.0 if side_hot else -1.0
    c = (h_edge - h(T_edge - step)) / step
    with np.errstate(divide="ignore", invalid="ignore"):
        would = edge + (target - h_edge) / np.where(c > 0, c, np.nan)
    w = would[sel]
    w = w[np.isfinite(w)]
    where = plan.bound_names.get("hi_nb" if side_hot and which == "nb" else "hi_bl" if side_hot else "lo", "")
    where = ("the output's max_temperature" if where == "max_temperature" else
             f"where the heat-capacity data of {where} end" if where else "the end of the search")
    frac = np.count_nonzero(bad) / n
    share = f"{100 * frac:.3g} % of {n} samples" if n > 1 else "this input row"
    if w.size:
        lo_w, med, hi_w = np.percentile(w, [0, 50, 100])
        est = (f"the final temperature would be about {med:.0f} K" +
               (f" ({lo_w:.0f}-{hi_w:.0f} K)" if hi_w - lo_w >= 1 else "") +
               f" with the heat capacity held at its value at {edge:.0f} K")
    else:
        est = "the final temperature cannot be estimated"
    direction = "above" if side_hot else "below"
    return PhysicsError(
        f"the energy balance ends {direction} {edge:g} K ({where}) for {share} "
        f"(start {T0:g} K): {est}. Widen that temperature range (or allow extrapolation), or check the extent, "
        f"the charge and the reaction enthalpy", key=plan.output.key)


def evaluate_adiabatic(case: Case, plan: AdiabaticPlan, dH: np.ndarray, xi: np.ndarray, amounts: list[np.ndarray],
                       sv: dict, ov: dict, n: int, value) -> tuple[np.ndarray, dict[str, np.ndarray]]:
    """ΔT_ad without evaporative cooling (the reported column) and the auxiliary physics columns.

    Parameters
    ----------
    dH : (n,) reaction enthalpy at the start temperature, J/mol
    xi : (n,) extent, mol
    amounts : list of (n,) charge amounts, mol, in ``plan.charge`` order
    value : callable (ov, datum, n) -> (n, 1) sampled or nominal datum values (engine units)
    """
    o = plan.output
    species = case.species
    T0 = o.start_temperature
    if o.constant_volume:
        target = -xi * reaction_internal_energy(dH, plan.delta_nu_gas, T0)
        n_gas = sum((amounts[k] for k, (sp, ph, _) in enumerate(plan.charge) if ph == "g"), np.zeros(n))
    else:
        target = -xi * dH
        n_gas = None

    def h_nb(T):
        T = np.asarray(T, dtype=float).reshape(-1)
        total = np.zeros(n)
        for (sp, ph, _), amt in zip(plan.charge, amounts):
            dh = no_evaporation_heating(species[sp], ph, T0, T[:, None], sv.get(sp), plan.vaporisation.get((sp, ph)))
            total = total + amt * np.broadcast_to(np.asarray(dh, dtype=float), (n, 1))[:, 0]
        if n_gas is not None:
            total = total + gas_internal_energy_correction(n_gas, T, T0)
        return total

    def h_bl(T):
        T = np.asarray(T, dtype=float).reshape(-1)
        total = np.zeros(n)
        for (sp, ph, _), amt in zip(plan.charge, amounts):
            dh = species[sp].heating_enthalpy(ph, T0, T[:, None], sv.get(sp), sampled_crossings=True)
            total = total + amt * np.broadcast_to(np.asarray(dh, dtype=float), (n, 1))[:, 0]
        return total

    Tf, info = solve_final_temperature(h_nb, target, T0, plan.t_hi_nb, T_lo_min=plan.t_lo, on_unreachable="nan",
                                       full_output=True)
    Tf = np.asarray(Tf, dtype=float)
    if not np.all(np.isfinite(Tf)):
        raise _unreachable(plan, Tf, target, h_nb, T0, plan.t_hi_nb, plan.t_lo, "nb")
    extra: dict[str, np.ndarray] = {}
    first = plan.first_transition
    if plan.boils:
        Tb, info_b = solve_final_temperature(h_bl, target, T0, plan.t_hi_bl, T_lo_min=plan.t_lo, on_unreachable="nan",
                                             full_output=True)
        Tb = np.asarray(Tb, dtype=float)
        if not np.all(np.isfinite(Tb)):
            raise _unreachable(plan, Tb, target, h_bl, T0, plan.t_hi_bl, plan.t_lo, "bl")
        plateau = np.asarray(info_b.on_plateau, bool)
        if first is not None:
            extra["phase_change"] = (plateau | (Tb > first + 1e-9)).astype(float)
        reached = np.zeros(n, bool)
        for (sp, ph), (tv, below) in plan.vaporisation.items():
            label = f"{below}-g"
            tv_s = np.broadcast_to(np.asarray((sv.get(sp) or {}).get(f"transition.{label}.temperature", tv),
                                              dtype=float), (n, 1))[:, 0]
            here = plateau & (np.abs(Tb - tv_s) <= 1e-4)
            reached |= here | (Tb > tv_s + 1e-4)
            k = [i for i, (s2, p2, _) in enumerate(plan.charge) if (s2, p2) == (sp, ph)][0]
            frac = np.where(here, info_b.absorbed_fraction, np.nan)
            extra[f"evaporated:{sp}.{ph}"] = evaporated_amount(Tb, frac, amounts[k], tv_s)
        extra["tempering"] = reached.astype(float)
        extra["boiling_limited_temperature"] = Tb
    elif first is not None:
        extra["phase_change"] = (np.asarray(info.on_plateau, bool) | (Tf > first + 1e-9)).astype(float)
    if o.basis == "mass":
        masses = [plan.molar_masses.get((sp, ph)) for sp, ph, _ in plan.charge]
        if any(m is None for m in masses):
            raise PhysicsError("a mass basis needs the molar mass of every charge species (from its formula)", key=o.key)
        m_tot = sum(a * m for a, m in zip(amounts, masses))                     # kg
        # c'_p at the start temperature: the charge's heat capacity per kg, J/(g K) = kJ/(kg K)
        C0 = (h_nb(np.full(n, T0 + 0.5)) - h_nb(np.full(n, T0 - 0.5)))
        extra["specific_heat_of_reaction"] = target / m_tot / 1e3               # kJ/kg
        extra["specific_heat_capacity"] = C0 / m_tot / 1e3                      # J/(g K)
        extra["charge_mass"] = m_tot
    if o.initial_pressure_datum:
        p0 = value(ov, o.initial_pressure_datum, n)[:, 0]
        n_f = sum((amounts[k] for k, (sp, ph, _) in enumerate(plan.charge) if ph == "g"), np.zeros(n))
        n_0 = n_f - plan.delta_nu_gas * xi
        extra["final_pressure"] = closed_vessel_pressure(p0, n_0, n_f, T0, Tf) / 1e3       # kPa
    return Tf - T0, extra


def adiabatic_check(case: Case, plan: AdiabaticPlan) -> list[str]:
    """Problems of an adiabatic output's set-up that the model cannot evaluate (one line each)."""
    o = plan.output
    out = []
    if o.constant_volume and o.initial_pressure_datum and not plan.gas:
        out.append("the closed-vessel pressure needs gas in the charge (species in phase g)")
    return out


#: gas constant, J/(mol K), re-exported for the builder's ideal-gas terms
R = GAS_CONSTANT
