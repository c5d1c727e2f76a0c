"""thermo layer: pure, vectorised physics (no I/O, no statistics).

Heat-capacity models (:mod:`.cp`), chemical formulas (:mod:`.formula`), species with phases and
transitions (:mod:`.species`) and reaction equations and properties (:mod:`.reaction`).
Units: K, J/mol, J/(mol K).
"""

from .cp import R, CpModel, ConstantCp, PolynomialCp, ShomateCp, Nasa7Cp
from .species import Phase, Transition, Species, Segment
from .formula import parse_formula, formula_charge
from .reaction import (
    Participant,
    Reaction,
    parse_equation,
    participant_key,
    check_balance,
    reaction_enthalpy,
    reaction_entropy,
    reaction_gibbs_energy,
    ln_equilibrium_constant,
    reaction_heat_capacity,
    stoichiometric_matrix,
    batch_reaction_property,
    species_enthalpies,
    species_entropies,
)

__all__ = [
    "R", "CpModel", "ConstantCp", "PolynomialCp", "ShomateCp", "Nasa7Cp",
    "Phase", "Transition", "Species", "Segment",
    "Participant", "Reaction", "parse_formula", "formula_charge", "parse_equation", "participant_key",
    "check_balance", "reaction_enthalpy", "reaction_entropy", "reaction_gibbs_energy",
    "ln_equilibrium_constant", "reaction_heat_capacity", "stoichiometric_matrix",
    "batch_reaction_property", "species_enthalpies", "species_entropies",
]
