"""Energy balances of a runaway scenario beyond the plain adiabatic rise: the rise without
evaporative cooling (the ΔT_ad of the MTSR), the boiling-limited end state (tempering), the
constant-volume (ideal-gas) form and the pressure of a closed vessel.

Pure and vectorised over samples (first axis); units K, J, J/mol, mol, Pa.

Definitions
-----------
**ΔT_ad without evaporative cooling.** The MTSR is T_p + X_ac·ΔT_ad with ΔT_ad the adiabatic
rise of the reaction mass *without* evaporative cooling (F. Stoessel, *Thermal Safety of
Chemical Processes*, Wiley-VCH, 2008, ch. 3: ΔT_ad = Q'_r / c'_p; evaporation is the tempering
*barrier* that the criticality classes weigh separately through MTT). Here the charge is heated
along its own path except that a transition into the gas phase is not taken: from the
vaporisation temperature T_v on, the species stays in the phase it had below T_v with its heat
capacity held at the value C_p(T_v) (stated assumption: "as if nothing boiled", the charge's
heat capacity continued through the transition):

.. math::

    \\Delta H_i^{\\mathrm{nb}}(T_0 \\to T) = \\Delta H_i(T_0 \\to \\min(T, T_v))
        + C_{p,i}(T_v)\\,\\max(T - T_v, 0)

Melting and solid-solid transitions below T_v are followed as usual (they are not evaporative).

**Boiling-limited end state.** The real path crosses the vaporisation at the (sampled) boiling
point; the energy balance then ends on the plateau ("tempering point reached") with a fraction
of the boiling species vaporised (:func:`evaporated_amount`), or beyond it when all of it has
boiled off.

**Constant volume (closed vessel, ideal gas).** With U = H − pV and pV = nRT for ideal gases
(condensed phases' pV neglected), the first-law balance of a closed rigid adiabatic vessel is
ΔU = 0 along "react at T0, heat the contents": Δ_rU(T0) = Δ_rH(T0) − Δν_g R T0 and
ΔU_charge = ΔH_charge − n_g R (T − T0) for n_g mol of gas in the charge (C_v = C_p − R per
mole of ideal gas; P. Atkins and J. de Paula, *Physical Chemistry*, "Internal energy and
enthalpy", ch. 2). The final pressure follows from the ideal-gas law at fixed volume:
p_f = p_0 · n_g,f T_f / (n_g,0 T_0).
"""

from __future__ import annotations

from collections.abc import Mapping

import numpy as np

from ..errors import PhysicsError
from .cp import R

__all__ = [
    "vaporisation_point",
    "no_evaporation_heating",
    "evaporated_amount",
    "reaction_internal_energy",
    "gas_internal_energy_correction",
    "closed_vessel_pressure",
]


def vaporisation_point(species, phase: str, T0: float) -> tuple[float, str] | None:
    """(T_v, phase below T_v) of the first transition into the gas phase met on heating from T0, or None.

    Uses the species' nominal heating path (:meth:`~uqthermo.thermo.species.Species.path`).
    """
    for seg in species.path(phase, float(T0), 1.0e5):
        tr = seg.transition
        if tr is not None and tr.to_phase == "g" and seg.sign > 0:
            return float(tr.temperature), tr.from_phase
    return None


def no_evaporation_heating(species, phase: str, T0: float, T, values: Mapping | None = None,
                           vaporisation: tuple[float, str] | None = None) -> np.ndarray:
    r"""Enthalpy to heat one mole of a species from T0 to T without evaporating it, J/mol.

    .. math:: \Delta H^{\mathrm{nb}} = \Delta H(T_0 \to \min(T, T_v)) + C_p(T_v)\,\max(T - T_v, 0)

    (module docstring; F. Stoessel, *Thermal Safety of Chemical Processes*, 2008: ΔT_ad of the
    MTSR excludes evaporative cooling). Without a vaporisation on the way this is the ordinary
    heating enthalpy (transitions included).

    Parameters
    ----------
    species : Species
    phase : str
        Start phase.
    T0 : float
        Start temperature, K.
    T : array_like
        End temperature(s), K (broadcast with the sampled ``values``).
    values : mapping, optional
        Sampled overrides of the species' data (as :meth:`Species.heating_enthalpy`).
    vaporisation : (T_v, phase below T_v) or None
        From :func:`vaporisation_point` (computed once per model).
    """
    T = np.asarray(T, dtype=float)
    if vaporisation is None:
        return np.asarray(species.heating_enthalpy(phase, T0, T, values))
    tv, below = vaporisation
    h = np.asarray(species.heating_enthalpy(phase, T0, np.minimum(T, tv), values))
    above = np.maximum(T - tv, 0.0)
    if np.any(above > 0):
        cp_v = np.asarray(species.cp(below, tv, values), dtype=float)
        h = h + cp_v * above
    return h


def evaporated_amount(Tf, on_plateau, amount, T_v) -> np.ndarray:
    """Moles of a boiling species vaporised at the end of the boiling-limited balance.

    All of it where the end temperature lies above its (sampled) boiling point T_v; on the
    plateau at T_v the absorbed fraction of the latent heat times the amount; none below.

    Parameters
    ----------
    Tf : ndarray (N,)
        End temperature of the boiling-limited balance, K.
    on_plateau : ndarray of (N,) float
        Fraction of the latent heat absorbed where the balance ends on this species' plateau,
        NaN elsewhere (:class:`~uqthermo.thermo.energy.FinalTemperatureInfo.absorbed_fraction`
        restricted to this plateau).
    amount : ndarray (N,)
        Moles of the species in the charge.
    T_v : ndarray (N,) or float
        Its boiling point, K.
    """
    Tf = np.asarray(Tf, dtype=float)
    frac = np.asarray(on_plateau, dtype=float)
    n = np.asarray(amount, dtype=float)
    tv = np.asarray(T_v, dtype=float)
    part = np.where(np.isfinite(frac), np.clip(frac, 0.0, 1.0), np.where(Tf > tv, 1.0, 0.0))
    return part * n


def reaction_internal_energy(delta_r_H, delta_nu_gas: float, T) -> np.ndarray:
    r"""Reaction internal energy of an ideal-gas reaction: :math:`\Delta_r U = \Delta_r H - \Delta\nu_g R T`, J/mol.

    (Atkins & de Paula, *Physical Chemistry*, ch. 2; Δν_g = change in moles of gas per mole of
    reaction, condensed phases' volume neglected.)
    """
    return np.asarray(delta_r_H, dtype=float) - float(delta_nu_gas) * R * np.asarray(T, dtype=float)


def gas_internal_energy_correction(n_gas, T, T0) -> np.ndarray:
    r"""ΔU − ΔH of heating n_g mol of ideal gas from T0 to T: :math:`-n_g R (T - T_0)`, J (C_v = C_p − R)."""
    return -np.asarray(n_gas, dtype=float) * R * (np.asarray(T, dtype=float) - float(T0))


def closed_vessel_pressure(p0, n_gas_0, n_gas_f, T0, Tf) -> np.ndarray:
    r"""Final pressure of a closed rigid vessel, ideal gas: :math:`p_f = p_0\,n_{g,f} T_f / (n_{g,0} T_0)`, Pa.

    (Ideal-gas law pV = nRT at fixed V; condensed phases and vapour pressures of liquids are
    not counted — state this where the number is used.)
    """
    n0 = np.asarray(n_gas_0, dtype=float)
    if np.any(~(n0 > 0)):
        raise PhysicsError("the closed-vessel pressure needs gas in the vessel at the start (n_g,0 > 0)")
    return np.asarray(p0, dtype=float) * np.asarray(n_gas_f, dtype=float) * np.asarray(Tf, dtype=float) / (n0 * float(T0))
