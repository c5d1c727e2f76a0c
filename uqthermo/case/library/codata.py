"""CODATA Key Values for Thermodynamics: the reference elements and a few key species.

Owns a small table transcribed into uqthermo (not shipped by ``chemicals``): standard entropies
at 298.15 K of the elements in their reference states, formation enthalpies and entropies of a
few key species, each with its CODATA uncertainty, and the list of reference-state elements
whose formation enthalpy is zero by definition.

Why: chemicals' copy of the JANAF tables lacks the reference-element gases (no H2, O2, N2 rows),
so without this table S°(H2, g) would come only from handbook compilations without an
uncertainty. The JANAF 1998 tables adopt these CODATA values for the reference elements (for O2
JANAF lists 205.147 against CODATA's 205.152 J/(mol K)).

Source: J. D. Cox, D. D. Wagman, V. A. Medvedev, CODATA Key Values for Thermodynamics,
Hemisphere, New York (1989). The values were transcribed from that publication from memory and
are checked in the test suite against independent copies (chemicals' JANAF/WebBook/CRC tables
and Cantera's GRI-Mech 3.0 NASA-7 data).

Uncertainty: CODATA's ± values are read as standard uncertainties (k = 1). The publication
describes them as about twice a standard deviation (recalled from memory), so this reading is
conservative by up to a factor of two.
"""

from __future__ import annotations

import functools

from .base import T_REF
from .candidates import ScalarCandidate, SourceInfo

__all__ = ["info", "REFERENCE_ELEMENTS", "VALUES", "scalar", "catalog", "is_reference_element"]

#: CAS -> (name, formula, phase) of elements in their reference state at 298.15 K, 1 bar:
#: formation enthalpy (and Gibbs energy) zero by definition.
REFERENCE_ELEMENTS = {
    "1333-74-0": ("hydrogen", "H2", "g"), "7782-44-7": ("oxygen", "O2", "g"),
    "7727-37-9": ("nitrogen", "N2", "g"), "7782-41-4": ("fluorine", "F2", "g"),
    "7782-50-5": ("chlorine", "Cl2", "g"), "7726-95-6": ("bromine", "Br2", "l"),
    "7553-56-2": ("iodine", "I2", "s"), "7782-42-5": ("graphite", "C", "s"),
    "7704-34-9": ("sulfur (rhombic)", "S", "s"), "7440-59-7": ("helium", "He", "g"),
    "7440-01-9": ("neon", "Ne", "g"), "7440-37-1": ("argon", "Ar", "g"),
    "7439-90-9": ("krypton", "Kr", "g"), "7440-63-3": ("xenon", "Xe", "g"),
}

#: (cas, phase) -> {quantity: (value, ±)} in J/mol and J/(mol K).
VALUES = {
    ("1333-74-0", "g"): {"standard_entropy": (130.680, 0.003)},
    ("7782-44-7", "g"): {"standard_entropy": (205.152, 0.005)},
    ("7727-37-9", "g"): {"standard_entropy": (191.609, 0.004)},
    ("7782-41-4", "g"): {"standard_entropy": (202.791, 0.005)},
    ("7782-50-5", "g"): {"standard_entropy": (223.081, 0.010)},
    ("7726-95-6", "l"): {"standard_entropy": (152.21, 0.30)},
    ("7553-56-2", "s"): {"standard_entropy": (116.14, 0.30)},
    ("7782-42-5", "s"): {"standard_entropy": (5.74, 0.10)},
    ("7704-34-9", "s"): {"standard_entropy": (32.054, 0.050)},
    ("7440-59-7", "g"): {"standard_entropy": (126.153, 0.002)},
    ("7440-01-9", "g"): {"standard_entropy": (146.328, 0.003)},
    ("7440-37-1", "g"): {"standard_entropy": (154.846, 0.003)},
    ("7439-90-9", "g"): {"standard_entropy": (164.085, 0.003)},
    ("7440-63-3", "g"): {"standard_entropy": (169.685, 0.003)},
    ("7732-18-5", "l"): {"formation_enthalpy": (-285830.0, 40.0), "standard_entropy": (69.95, 0.03)},
    ("7732-18-5", "g"): {"formation_enthalpy": (-241826.0, 40.0), "standard_entropy": (188.835, 0.010)},
    ("124-38-9", "g"): {"formation_enthalpy": (-393510.0, 130.0), "standard_entropy": (213.785, 0.010)},
    ("630-08-0", "g"): {"formation_enthalpy": (-110530.0, 170.0), "standard_entropy": (197.660, 0.004)},
    ("7664-41-7", "g"): {"formation_enthalpy": (-45940.0, 350.0), "standard_entropy": (192.77, 0.05)},
    ("7647-01-0", "g"): {"formation_enthalpy": (-92310.0, 100.0), "standard_entropy": (186.902, 0.005)},
}


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo("CODATA", "CODATA Key Values for Thermodynamics", "1989",
                      "J. D. Cox, D. D. Wagman, V. A. Medvedev, CODATA Key Values for Thermodynamics, "
                      "Hemisphere, New York (1989)", "evaluated",
                      "± values read as standard uncertainties (conservative reading)")


def is_reference_element(cas: str, phase: str) -> bool:
    """Whether ``cas`` in ``phase`` is an element in its reference state (ΔfH° = 0 exactly)."""
    e = REFERENCE_ELEMENTS.get(cas)
    return e is not None and e[2] == phase


def catalog() -> dict[str, dict[str, set]]:
    out: dict = {}
    for (cas, ph), q in VALUES.items():
        for name in q:
            out.setdefault(cas, {}).setdefault(name, set()).add(ph)
    for cas, (_, _, ph) in REFERENCE_ELEMENTS.items():
        out.setdefault(cas, {}).setdefault("formation_enthalpy", set()).add(ph)
    return out


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    if quantity == "formation_enthalpy" and is_reference_element(cas, phase):
        return ScalarCandidate(info(), quantity, phase, cas, 0.0, T_REF, u=0.0, u_basis="stated",
                               u_note="element in its reference state: zero by definition")
    row = VALUES.get((cas, phase), {}).get(quantity)
    if row is None:
        return None
    v, pm = row
    return ScalarCandidate(info(), quantity, phase, cas, v, T_REF, u=pm, u_basis="stated",
                           u_note=f"CODATA ± {pm:g} read as a standard uncertainty")


def curves(cas, phase):
    return []
