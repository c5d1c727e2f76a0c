"""Typed form of a case file, after parsing and unit conversion (engine units throughout).

The loader (:mod:`uqthermo.case.loader`) turns the TOML text into these objects; the
builder (:mod:`uqthermo.case.model.builder`) turns them into a vectorised model and an
:class:`~uqthermo.uq.inputs.InputSet`. Nothing here computes anything.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Any

import numpy as np

SETTINGS_DEFAULTS: dict[str, Any] = {
    "reference_temperature": 298.15,
    "coverage_probability": 0.95,
    "samples": 200_000,
    "sampling": "sobol",
    "seed": 20261202,
    "method": "both",
    "allow_extrapolation": False,
    "significant_digits": 2,
    "max_samples": 10_000_000,
    "adaptive_intervals": "both",
    "sobol_rotation": True,
    "sensitivity": "auto",
    "sobol_samples": 1024,
    "design_probabilities": [0.95, 0.99],
    "what_if": True,
}

SAMPLING_METHODS = ("random", "latin-hypercube", "sobol")
METHODS = ("linear", "monte-carlo", "both")
OUTPUT_KINDS = (
    "reaction_enthalpy",
    "heating_enthalpy",
    "heat_release",
    "adiabatic_temperature_rise",
    "reaction_gibbs_energy",
    "equilibrium_constant",
)
SAFETY_KINDS = ("heat_release", "adiabatic_temperature_rise")


@dataclass
class Settings:
    reference_temperature: float = 298.15
    coverage_probability: float = 0.95
    samples: int | str = 200_000
    sampling: str = "sobol"
    seed: int = 20261202
    method: str = "both"
    allow_extrapolation: bool = False
    significant_digits: int = 2
    max_samples: int = 10_000_000
    adaptive_intervals: str = "both"     # intervals whose endpoints must be stable to stop an adaptive run
    sobol_rotation: bool = True          # Sobol' coordinates along the model's linear directions (montecarlo.score_rotation)
    sensitivity: str = "auto"
    sobol_samples: int = 1024
    design_probabilities: list[float] = field(default_factory=lambda: [0.95, 0.99])
    what_if: bool = True
    plan_target: str | list[str] | None = None   # e.g. "U95 <= 2 kJ/mol" (or per output): plan inside `run`
    plan_budget: float | None = None


@dataclass
class Datum:
    """One sourced, possibly uncertain property: the unit of ranking and planning.

    ``kind`` tells the builder how the datum's input columns become physical values:

    * ``"scalar"`` — one variable, the quantity itself (engine units);
    * ``"scale"`` — one variable, a dimensionless factor on a whole Cp curve
      (every coefficient is multiplied by it: the models are linear in their coefficients);
    * ``"coefficients"`` — several variables, the Cp coefficients at ``positions`` of the
      model's coefficient vector (the others stay at their nominal values).
    """

    id: str
    quantity: str
    unit: str                          # report unit of the value (kJ/mol, J/(mol*K), K, ...)
    to_report: float                   # factor engine unit → report unit
    kind: str                          # "scalar" | "scale" | "coefficients"
    distributions: list[Any]           # uq Distribution objects (one per variable)
    variable_names: list[str]
    correlation: np.ndarray | None     # within-datum correlation (coefficients)
    stated: str                        # uncertainty as the user stated it
    source: str = ""
    species: str = ""
    phase: str = ""
    library: str = ""
    positions: list[int] = field(default_factory=list)
    nominal: np.ndarray | float | None = None
    assumed: bool = False
    provenance: dict | None = None     # library = "auto": where value and uncertainty come from (results.json)
    molar_mass: float | None = None    # kg/mol: an amount (rate) datum that may be written as a mass (rate)
    as_written: str | None = None      # amounts and flows: the user's text of the value ("881 kg")
    u_as_written: str | None = None    # ... and of its uncertainty, when given ("50 kg/h", "U = 2 kg (k = 2)")

    @property
    def uncertain(self) -> bool:
        return any(getattr(d, "std", 0.0) > 0 for d in self.distributions)


@dataclass
class OutputSpec:
    name: str
    kind: str
    key: str                            # key path, e.g. "output[2]" or "output.duty"
    reaction: str = ""
    temperatures: np.ndarray | None = None      # exact temperatures (K), or None when uncertain
    temperature_datum: str = ""                  # datum id when the temperature is uncertain
    temperature_nominal: float = 0.0
    species: str = ""                            # heating_enthalpy single species name
    phase: str = ""
    mixture: dict[tuple[str, str], str] = field(default_factory=dict)   # (species, phase) -> datum id of amount
    t_from: float = 0.0
    t_to: float = 0.0
    extent_rates: dict[str, list[str]] = field(default_factory=dict)   # reaction -> datum ids multiplied (and divisor)
    extent_divisor: dict[str, float] = field(default_factory=dict)
    extent_datum: str = ""
    charge: dict[tuple[str, str], str] = field(default_factory=dict)
    start_temperature: float = 0.0
    limit: float | None = None
    process_temperature: float | None = None
    accumulation: float | None = None
    mtt: float | None = None
    td24: float | None = None
    max_temperature: float = 0.0
    description: str = ""
    design_value: float | None = None
    # limits (every kind; docs/case-format.md "Limits"): nominal in the output's report unit
    # (for adiabatic_temperature_rise a temperature in K the final temperature is compared with)
    limit_datum: str = ""                        # datum id (output.NAME.limit), exact or uncertain
    limit_side: str = "above"                    # "above": P(y > limit); "below": P(y < limit)
    limit_label: str = "limit"                   # "limit" or "cooling capacity"
    mtt_datum: str = ""                          # datum ids of MTT and TD24 (adiabatic), exact or uncertain
    td24_datum: str = ""
    as_written: dict[str, str] = field(default_factory=dict)   # the user's text of limits and levels
    # mass basis (docs/case-format.md "Mass basis")
    basis: str = "molar"                          # "molar" | "mass"
    mass_of: str = ""                             # species whose mass is the basis of a reaction output
    mass_per_unit: float = 1.0                    # kg per (mol of the output's basis): y_mass = y / mass_per_unit
    # adiabatic at constant volume (ideal gas) and the closed vessel's pressure
    constant_volume: bool = False
    initial_pressure_datum: str = ""
    # heat_release of a continuous reactor: feed streams entering at their own temperatures
    feeds: list = field(default_factory=list)    # [FeedStream]


@dataclass
class FeedStream:
    """One feed stream of an open-system balance: flows in at ``temperature`` (K)."""

    key: str                                     # key path, e.g. output.duty.feed[0]
    temperature: float                           # nominal, K
    temperature_datum: str = ""                  # datum id when uncertain
    flows: dict[tuple[str, str], str] = field(default_factory=dict)   # (species, phase) -> datum id (mol/s)


@dataclass
class Candidate:
    datum: str
    u: float | None            # achievable standard uncertainty, report units (None when factor)
    factor: float | None       # or a factor on the present u
    cost: float
    lead_time: str = ""
    note: str = ""
    u_text: str = ""           # u as written in the case (e.g. "0.2 kJ/mol", "1 kg"), for labels


@dataclass
class Case:
    path: str
    sha256: str
    title: str
    description: str
    settings: Settings
    species: dict[str, Any]            # name -> thermo.Species (nominal values)
    data: dict[str, Datum]             # datum id -> Datum (insertion order = table order)
    reactions: dict[str, Any]          # name -> thermo.Reaction
    outputs: list[OutputSpec]
    correlations: list[tuple[str, str, float]]
    candidates: list[Candidate]
    warnings: list[str]
    raw: dict[str, Any]
    document: dict[str, str] = field(default_factory=dict)    # [document] header block (as text)
    temperature_unit: str = "K"                                # unit the outputs' temperatures are written in

    @property
    def safety_relevant(self) -> bool:
        return any(o.kind in SAFETY_KINDS or o.limit is not None or o.limit_datum for o in self.outputs)
