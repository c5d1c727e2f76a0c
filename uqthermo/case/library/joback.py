"""Joback group-contribution estimates (K. G. Joback, R. C. Reid 1987), flagged as estimates.

Owns the estimates of the Joback method: the table of precomputed estimates shipped by
``chemicals`` (``joback_predictions.tsv``, about 52 000 species by CAS number) and, with the
optional ``estimate`` extra (``pip install 'uqthermo[estimate]'``: thermo + RDKit), estimates from a
SMILES string (:func:`from_smiles`). Quantities: ideal-gas ΔfH° and ΔfG° at 298.15 K (hence S° of
the gas), the ideal-gas Cp polynomial (fitted by Joback from 298 to 1000 K), Tb, Tm, ΔvapH at Tb
and ΔfusH at Tm::

    ΔfH° = 68.29 + Σ n_i ΔH_i  (kJ/mol)        ΔfG° = 53.88 + Σ n_i ΔG_i  (kJ/mol)
    Cp = (Σ a_i - 37.93) + (Σ b_i + 0.210) T + (Σ c_i - 3.91e-4) T² + (Σ d_i + 2.06e-7) T³   (J/(mol K))
    S°(gas) = (ΔfH° - ΔfG°)/T + Σ ν_e S°(element e in its reference state)        (T = 298.15 K)

Source: K. G. Joback, R. C. Reid, "Estimation of pure-component properties from
group-contributions", Chem. Eng. Commun. 57 (1987) 233-243, doi:10.1080/00986448708960487.

Uncertainty (the method's published error statistics over its test sets, as quoted in the
``thermo`` package's documentation of the method): the standard uncertainty is
u = √(AAE² + s²) from the average absolute error AAE and the standard deviation s given —
the root-mean-square error if s is that of the absolute errors, and larger than s if it is that of
the signed errors (the conservative reading of the two):

=================  ============  ==========  ===========
quantity           AAE           s           u
=================  ============  ==========  ===========
ΔfH° (370 cpds)    2.2 kcal/mol  2.0         12.4 kJ/mol
ΔfG° (328 cpds)    2.0 kcal/mol  4.37        20.1 kJ/mol
Tb (438)           12.91 K       17.85 K     22.0 K
Tm (388)           22.6 K        24.68 K     33.5 K
ΔvapH (368)        303.5 cal/mol 429         2.20 kJ/mol
ΔfusH (155)        485.2 cal/mol 661.4       3.43 kJ/mol
=================  ============  ==========  ===========

S° carries u = √(u(ΔfH°)² + u(ΔfG°)²)/T (errors taken as independent; no published statistic).
Joback and Reid report no overall error for Cp; its relative u of 5 % is assumed (flagged).
Element entropies: :mod:`.codata`.
"""

from __future__ import annotations

import functools
import math

import numpy as np

from .base import T_REF, nan_to_none
from .candidates import CurveCandidate, ScalarCandidate, SourceInfo, polynomial_to_shomate

__all__ = ["info", "scalar", "curves", "catalog", "from_smiles", "ERROR_STATS", "CP_RELATIVE_U",
           "EstimateUnavailable"]

KCAL = 4184.0


def _rms(aae, s, f=1.0):
    return math.hypot(aae, s) * f


#: quantity -> (u in SI, note)
ERROR_STATS = {
    "formation_enthalpy": (_rms(2.2, 2.0, KCAL), "AAE 2.2 kcal/mol, s 2.0 kcal/mol over 370 compounds"),
    "formation_gibbs_energy": (_rms(2.0, 4.37, KCAL), "AAE 2.0 kcal/mol, s 4.37 kcal/mol over 328 compounds"),
    "boiling_temperature": (_rms(12.91, 17.85), "AAE 12.91 K, s 17.85 K over 438 compounds"),
    "melting_temperature": (_rms(22.6, 24.68), "AAE 22.6 K, s 24.68 K over 388 compounds"),
    "vaporization_enthalpy": (_rms(303.5, 429.0, 4.184), "AAE 303.5 cal/mol, s 429 cal/mol over 368 compounds"),
    "fusion_enthalpy": (_rms(485.2, 661.4, 4.184), "AAE 485.2 cal/mol, s 661.4 cal/mol over 155 compounds"),
}
CP_RELATIVE_U = 0.05
CP_RANGE = (298.0, 1000.0)


class EstimateUnavailable(Exception):
    """The estimate extra (thermo + RDKit) is not installed, or the SMILES cannot be fragmented."""


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("Joback", "Joback group contribution (estimate)", "1987",
                      "K. G. Joback, R. C. Reid, Chem. Eng. Commun. 57 (1987) 233-243", "estimate",
                      "published error statistics of the method (see uqthermo.case.library.joback)")


@functools.lru_cache(maxsize=1)
def _table():
    from chemicals import miscdata

    return miscdata.joback_predictions


def _row(cas: str):
    from chemicals.identifiers import CAS_to_int

    try:
        key = CAS_to_int(cas)
    except Exception:
        return None
    df = _table()
    if key not in df.index:
        return None
    return df.loc[key]


def catalog() -> dict[str, dict[str, set]]:
    return {}     # only asked per species: the table would swamp name and formula searches


def _u(quantity: str, value: float | None = None):
    u, note = ERROR_STATS[quantity]
    return u, f"Joback & Reid (1987): {note}; u = √(AAE² + s²)"


def _candidates(est: dict, cas: str, quantity: str, phase: str, T=None, label: str = "") -> list:
    src = info()
    q = quantity
    if q == "formation_enthalpy" and phase == "g" and est.get("Hf") is not None:
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Hf"], T_REF, u=u, u_basis="published", u_note=n, note=label)]
    if q == "formation_gibbs_energy" and phase == "g" and est.get("Gf") is not None:
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Gf"], T_REF, u=u, u_basis="published", u_note=n, note=label)]
    if q == "standard_entropy" and phase == "g" and est.get("Hf") is not None and est.get("Gf") is not None \
            and est.get("elements"):
        s_el = element_entropy(est["elements"])
        if s_el is None:
            return []
        s = (est["Hf"] - est["Gf"]) / T_REF + s_el
        u = math.hypot(ERROR_STATS["formation_enthalpy"][0], ERROR_STATS["formation_gibbs_energy"][0]) / T_REF
        return [ScalarCandidate(src, q, phase, cas, s, T_REF, u=u, u_basis="published",
                                u_note="S° = (ΔfH° - ΔfG°)/T + Σ S°(elements, CODATA); u from the ΔfH° and ΔfG° "
                                       "statistics of Joback & Reid (1987), taken as independent", note=label)]
    if q == "boiling_temperature" and phase == "l-g" and est.get("Tb"):
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Tb"], None, u=u, u_basis="published", u_note=n, note=label)]
    if q == "melting_temperature" and phase == "s-l" and est.get("Tm"):
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Tm"], None, u=u, u_basis="published", u_note=n, note=label)]
    if q == "vaporization_enthalpy" and phase == "l-g" and est.get("Hvap") and T is not None \
            and est.get("Tb") and abs(T - est["Tb"]) < 0.5:
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Hvap"], T, u=u, u_basis="published", u_note=n, note=label)]
    if q == "fusion_enthalpy" and phase == "s-l" and est.get("Hfus"):
        u, n = _u(q)
        return [ScalarCandidate(src, q, phase, cas, est["Hfus"], est.get("Tm"), u=u, u_basis="published", u_note=n,
                                note=label)]
    return []


def _cp_curve(est: dict, cas: str, label: str = "") -> list[CurveCandidate]:
    c = est.get("Cp")
    if not c:
        return []
    a, b, cc, d = c
    lo, hi = CP_RANGE

    def fn(T, k=(a, b, cc, d)):
        T = np.asarray(T, dtype=float)
        return k[0] + T * (k[1] + T * (k[2] + T * k[3]))

    return [CurveCandidate(info(), "g", cas, lo, hi, fn, form="Joback ideal-gas Cp polynomial",
                           native=[(lo, hi, polynomial_to_shomate(a, b, cc, d))], relative_u=CP_RELATIVE_U,
                           u_basis="assumed", u_note="Joback & Reid (1987) report no overall Cp error: 5 % assumed",
                           note=label)]


def _table_estimates(cas: str) -> dict | None:
    r = _row(cas)
    if r is None:
        return None
    g = {k: nan_to_none(r.get(k)) for k in ("Tm", "Hfus", "Hvap", "Tb", "Hfg", "Cpg0", "Cpg1", "Cpg2", "Cpg3")}
    cp = [g[f"Cpg{i}"] for i in range(4)]
    return {"Hf": g["Hfg"], "Tb": g["Tb"], "Tm": g["Tm"], "Hvap": g["Hvap"], "Hfus": g["Hfus"],
            "Cp": cp if all(x is not None for x in cp) else None}


def scalar(cas: str, quantity: str, phase: str, T=None) -> list[ScalarCandidate]:
    est = _table_estimates(cas)
    if est is None:
        return []
    return _candidates(est, cas, quantity, phase, T, "precomputed Joback estimate shipped with chemicals")


def curves(cas: str, phase: str) -> list[CurveCandidate]:
    if phase != "g":
        return []
    est = _table_estimates(cas)
    return [] if est is None else _cp_curve(est, cas, "precomputed Joback estimate shipped with chemicals")


def element_entropy(elements: dict[str, float]) -> float | None:
    """Σ ν_e S°(e) of the elements in their reference states (per atom), J/(mol K), CODATA 1989."""
    from .codata import VALUES

    per_atom = {"H": ("1333-74-0", "g", 2), "O": ("7782-44-7", "g", 2), "N": ("7727-37-9", "g", 2),
                "F": ("7782-41-4", "g", 2), "Cl": ("7782-50-5", "g", 2), "Br": ("7726-95-6", "l", 2),
                "I": ("7553-56-2", "s", 2), "C": ("7782-42-5", "s", 1), "S": ("7704-34-9", "s", 1)}
    tot = 0.0
    for el, n in elements.items():
        if el not in per_atom:
            return None
        cas, ph, atoms = per_atom[el]
        tot += n * VALUES[(cas, ph)]["standard_entropy"][0] / atoms
    return tot


@functools.lru_cache(maxsize=256)
def _smiles_estimates(smiles: str) -> dict:
    try:
        from rdkit import Chem  # noqa: F401
        from thermo.group_contribution.joback import Joback
    except ImportError as e:   # pragma: no cover - depends on the optional extra
        raise EstimateUnavailable("group-contribution estimates need the optional extra: "
                                  "pip install 'uqthermo[estimate]' (thermo and RDKit)") from e
    from rdkit import Chem

    mol = Chem.MolFromSmiles(smiles)
    if mol is None:
        raise EstimateUnavailable(f"cannot read SMILES {smiles!r}")
    j = Joback(mol)
    if not j.counts or j.status != "OK":
        raise EstimateUnavailable(f"the Joback groups do not cover {smiles!r} ({j.status})")
    molh = Chem.AddHs(mol)
    elements: dict[str, float] = {}
    for atom in molh.GetAtoms():
        elements[atom.GetSymbol()] = elements.get(atom.GetSymbol(), 0.0) + 1.0
    cp = j.Cpig_coeffs(j.counts)
    return {"Hf": j.Hf(j.counts), "Gf": j.Gf(j.counts), "Tb": j.Tb(j.counts), "Tm": j.Tm(j.counts),
            "Hvap": j.Hvap(j.counts), "Hfus": j.Hfus(j.counts), "Cp": cp, "elements": elements,
            "groups": dict(j.counts)}


def from_smiles(smiles: str, quantity: str, phase: str, T=None, cas: str = "") -> list:
    """Joback estimates of one quantity from a SMILES string (needs the ``estimate`` extra).

    Returns a list of :class:`ScalarCandidate` (or :class:`CurveCandidate` for
    ``quantity="heat_capacity"``), flagged as estimates.

    Raises
    ------
    EstimateUnavailable
        The extra is not installed, or the SMILES is unreadable or not covered by Joback's groups.
    """
    est = _smiles_estimates(smiles)
    label = f"Joback estimate from SMILES {smiles}"
    ident = cas or f"SMILES:{smiles}"
    if quantity == "heat_capacity":
        return _cp_curve(est, ident, label) if phase == "g" else []
    return _candidates(est, ident, quantity, phase, T, label)
