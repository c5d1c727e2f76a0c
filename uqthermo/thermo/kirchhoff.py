"""Kirchhoff's law term by term: the reaction enthalpy split into what it is made of.

A reaction enthalpy at temperature T on the formation scale is

.. math::
    \\Delta_r H^\\circ(T) = \\underbrace{\\sum_i \\nu_i\\,\\Delta_f H_{i,a}(T_\\mathrm{ref})}_{\\text{at reference}}
    + \\underbrace{\\sum_i \\nu_i \\sum_{\\text{segments}} \\int C_{p,i}\\,dT}_{\\text{sensible}}
    + \\underbrace{\\sum_i \\nu_i \\sum_{\\text{crossings}} \\pm\\Delta_\\mathrm{trs}H_i}_{\\text{latent}}

(Kirchhoff's law with the latent heats of the phase changes met on each species' route from
its anchored phase *a* at :math:`T_\\mathrm{ref}` to its stated phase at T; Atkins' Physical
Chemistry, "Kirchhoff's law" and "Phase transitions"; IUPAC Green Book 2.11 for
:math:`\\Delta_r H = \\sum_i \\nu_i H_i`). The three terms sum to
:func:`~uqthermo.thermo.reaction.reaction_enthalpy` (same route, same sampled values), so a
report can show where the number comes from: the tabulated formation data, the heat
capacities over the temperature path, or the phase changes.

Anchors. A phase anchored by a formation enthalpy contributes it as "at reference" and
:math:`\\int_{T_\\mathrm{ref}}^{x} C_p\\,dT` as sensible; a NASA-7 phase anchored by its
:math:`a_6` contributes :math:`H^\\circ(T_\\mathrm{ref})` (the NASA polynomial at the reference
temperature) and :math:`H^\\circ(x) - H^\\circ(T_\\mathrm{ref})` (McBride, Zehe & Gordon,
NASA/TP-2002-211556). A reaction with a measured anchor :math:`(\\Delta_r H_m, T_m)` contributes
:math:`\\Delta_r H_m` "at reference" (the reference being :math:`T_m`) and
:math:`\\sum_i \\nu_i \\int_{T_m}^{T} C_{p,i}\\,dT` (species held in their stated phases) as
sensible; it has no latent term.

``values`` follows :mod:`uqthermo.thermo.species` (sampled overrides per species, plus
``"reaction.NAME.measured_enthalpy"``); arrays broadcast with T. Validity ranges are not
checked here: the model that uses the same route checks them. Units: K, J/mol.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import TYPE_CHECKING, Mapping

import numpy as np


if TYPE_CHECKING:  # pragma: no cover
    from .reaction import Reaction
    from .species import Species

__all__ = ["KirchhoffTerms", "LatentTerm", "species_enthalpy_terms", "reaction_enthalpy_terms"]


@dataclass
class LatentTerm:
    """One phase change met on a route: ``value`` = ν · (±ΔtrsH), J/mol (sign: + on heating from → to)."""

    species: str
    transition: str          # "{from}-{to}" (datum id form)
    temperature: float       # nominal transition temperature, K
    coefficient: float       # ν_i · sign (the multiple of ΔtrsH that enters)
    value: np.ndarray


@dataclass
class KirchhoffTerms:
    """The terms of Kirchhoff's law for one quantity (a species enthalpy or a reaction enthalpy), J/mol.

    ``at_reference + sensible + latent`` equals the enthalpy; ``latent`` is the sum of
    ``latent_terms``. ``reference_temperature`` is :math:`T_\\mathrm{ref}` (or the measured
    anchor's temperature) and ``anchor`` says which: ``"formation"`` or ``"measured"``.
    """

    at_reference: np.ndarray
    sensible: np.ndarray
    latent: np.ndarray
    latent_terms: list[LatentTerm] = field(default_factory=list)
    reference_temperature: float = 298.15
    anchor: str = "formation"

    @property
    def total(self) -> np.ndarray:
        return self.at_reference + self.sensible + self.latent


def _temperatures(T) -> np.ndarray:
    return np.asarray(T, dtype=float)


def _transition_temperature(tr, vals: Mapping):
    return np.asarray(vals.get(f"transition.{tr.label}.temperature", tr.temperature), dtype=float)


def _transition_enthalpy(tr, vals: Mapping):
    return np.asarray(vals.get(f"transition.{tr.label}.enthalpy", tr.enthalpy), dtype=float)


def species_enthalpy_terms(species: "Species", phase: str | None, T, T_ref: float = 298.15,
                           values: Mapping | None = None) -> KirchhoffTerms:
    """The formation-scale enthalpy :meth:`Species.enthalpy <uqthermo.thermo.species.Species.enthalpy>` in three terms.

    .. math:: H_p(T) = H_a(T_\\mathrm{ref}) + \\sum_\\text{segments}\\int C_p\\,dT + \\sum_\\text{crossings}\\pm\\Delta_\\mathrm{trs}H

    along the route of :meth:`Species.enthalpy_path` (anchored phase *a* → stated phase *p*);
    segment end points at transitions use the sampled transition temperatures when
    ``values`` holds them (as the enthalpy itself does). Units: K, J/mol.
    """
    vals = values if values is not None else {}
    T = _temperatures(T)
    T_ref = float(T_ref)
    segs = species.enthalpy_path(phase, float(np.ravel(T)[0]) if T.size else T_ref, T_ref)
    anchor_phase = segs[0].phase
    ph = species.phases[anchor_phase]
    kind = ph.anchor("enthalpy")
    crossings = [s for s in segs if s.transition is not None]
    # the first heating segment ends at the first crossing (sampled) or at T
    x0 = _transition_temperature(crossings[0].transition, vals) if crossings else T
    c0 = vals.get(f"{anchor_phase}.heat_capacity")
    if kind == "formation":
        at_ref = np.asarray(vals.get(f"{anchor_phase}.formation_enthalpy", ph.formation_enthalpy), dtype=float)
        sensible = ph.cp.enthalpy_change(T_ref, x0, c0, check=False) if ph.cp is not None else np.zeros(())
    else:  # NASA-7 a6 anchor: H°(T_ref) plus the rise to the route's first point
        at_ref = ph.cp.absolute_enthalpy(T_ref, c0, check=False)
        sensible = ph.cp.absolute_enthalpy(x0, c0, check=False) - at_ref
    sensible = np.asarray(sensible, dtype=float)
    latent_terms: list[LatentTerm] = []
    latent = np.zeros(())
    for i, s in enumerate(crossings):
        tr = s.transition
        dh = s.sign * _transition_enthalpy(tr, vals)
        latent = latent + dh
        latent_terms.append(LatentTerm(species.name, tr.label, float(tr.temperature), float(s.sign), np.asarray(dh)))
        start = _transition_temperature(tr, vals)
        end = _transition_temperature(crossings[i + 1].transition, vals) if i + 1 < len(crossings) else T
        cp = species.phases[s.phase].cp
        if cp is not None:
            sensible = sensible + cp.enthalpy_change(start, end, vals.get(f"{s.phase}.heat_capacity"), check=False)
    shape = np.broadcast_shapes(np.shape(at_ref), np.shape(sensible), np.shape(latent), T.shape)
    return KirchhoffTerms(np.broadcast_to(at_ref, shape).astype(float), np.broadcast_to(sensible, shape).astype(float),
                          np.broadcast_to(latent, shape).astype(float), latent_terms, T_ref, "formation")


def reaction_enthalpy_terms(reaction: "Reaction", species: Mapping[str, "Species"], T, T_ref: float = 298.15,
                            values: Mapping | None = None) -> KirchhoffTerms:
    """:func:`~uqthermo.thermo.reaction.reaction_enthalpy` split into its Kirchhoff terms, J/mol.

    .. math:: \\Delta_r H^\\circ(T) = \\sum_i \\nu_i H_{i}(T_\\mathrm{ref})
              + \\sum_i \\nu_i\\!\\sum\\!\\int C_{p,i}\\,dT + \\sum_i \\nu_i\\!\\sum \\pm\\Delta_\\mathrm{trs}H_i

    (see the module docstring; with a measured anchor
    :math:`\\Delta_r H_m + \\sum_i \\nu_i\\int_{T_m}^{T} C_{p,i}\\,dT`). Latent terms of the same
    species and transition are merged, their coefficient being :math:`\\sum \\nu_i \\cdot(\\pm 1)`.
    """
    vals = values if values is not None else {}
    T = _temperatures(T)
    if reaction.measured_enthalpy is not None:
        dH_m, T_m = reaction.measured_enthalpy
        dH_m = np.asarray(vals.get(f"reaction.{reaction.name}.measured_enthalpy", dH_m), dtype=float)
        T_m = vals.get(f"reaction.{reaction.name}.measured_temperature", T_m)
        sensible = np.zeros(())
        for p in reaction.participants:
            sp = species[p.species]
            ph = sp.resolve_phase(p.phase)
            cp = sp.phases[ph].cp
            if cp is not None:
                sensible = sensible + p.nu * cp.enthalpy_change(T_m, T, vals.get(p.species, {}).get(f"{ph}.heat_capacity"),
                                                                check=False)
        shape = np.broadcast_shapes(np.shape(dH_m), np.shape(sensible), T.shape)
        zero = np.zeros(shape)
        return KirchhoffTerms(np.broadcast_to(dH_m, shape).astype(float), np.broadcast_to(sensible, shape).astype(float),
                              zero, [], float(np.ravel(T_m)[0]), "measured")
    at_ref = sensible = latent = np.zeros(())
    merged: dict[tuple[str, str], LatentTerm] = {}
    T_ref = float(T_ref)
    for p in reaction.participants:
        sp = species[p.species]
        t = species_enthalpy_terms(sp, sp.resolve_phase(p.phase), T, T_ref, vals.get(p.species))
        at_ref = at_ref + p.nu * t.at_reference
        sensible = sensible + p.nu * t.sensible
        latent = latent + p.nu * t.latent
        for lt in t.latent_terms:
            key = (lt.species, lt.transition)
            v = p.nu * lt.value
            if key in merged:
                m = merged[key]
                merged[key] = LatentTerm(m.species, m.transition, m.temperature, m.coefficient + p.nu * lt.coefficient,
                                         m.value + v)
            else:
                merged[key] = LatentTerm(lt.species, lt.transition, lt.temperature, p.nu * lt.coefficient, np.asarray(v))
    shape = np.broadcast_shapes(np.shape(at_ref), np.shape(sensible), np.shape(latent), T.shape)
    terms = [LatentTerm(m.species, m.transition, m.temperature, m.coefficient, np.broadcast_to(m.value, shape).astype(float))
             for m in merged.values() if m.coefficient != 0]
    return KirchhoffTerms(np.broadcast_to(at_ref, shape).astype(float), np.broadcast_to(sensible, shape).astype(float),
                          np.broadcast_to(latent, shape).astype(float), terms, T_ref, "formation")
