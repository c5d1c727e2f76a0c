"""The model's data layout: which input column is which datum, which output column is which point.

The model is one function ``f(X[N, D]) -> Y[N, M]`` (:mod:`.builder`): each row of ``X`` is one
draw of all uncertain inputs — the columns of the :class:`~uqthermo.uq.inputs.InputSet` built
here, one or more per uncertain datum the outputs use — and each column of ``Y`` one output point
(an output at one temperature, :class:`Column`) in report units, followed by the auxiliary
indicator columns (:class:`Aux`). :func:`values_decoder` turns input rows into the thermo layer's
overrides. The units and symbols of the output kinds are here too (:data:`UNITS`, :data:`QUANTITY`).
"""

from __future__ import annotations

from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ...errors import InputError, Problem, UqthermoError
from ...uq.blas import one_blas_thread
from ...uq.inputs import InputSet, InputVariable
from ..schema import Case, OutputSpec
from .dependence import output_data

__all__ = ["UNITS", "QUANTITY", "Column", "Aux", "Model", "used_data", "build_inputs", "values_decoder", "output_unit",
           "reaction_values", "output_temperature"]

UNITS = {
    "reaction_enthalpy": "kJ/mol",
    "reaction_gibbs_energy": "kJ/mol",
    "equilibrium_constant": "1",
    "heating_enthalpy": "kJ/mol",
    "heat_release": "kW",
    "adiabatic_temperature_rise": "K",
}
QUANTITY = {
    "reaction_enthalpy": "ΔrH",
    "reaction_gibbs_energy": "ΔrG",
    "equilibrium_constant": "log10 K",
    "heating_enthalpy": "ΔH",
    "heat_release": "Q",
    "adiabatic_temperature_rise": "ΔT_ad",
}


@dataclass
class Column:
    """One reported output column: an output at one temperature."""

    output: int            # index into case.outputs
    temperature: float     # K (nominal for uncertain temperatures)


@dataclass
class Aux:
    """One auxiliary (indicator) column after the reported ones; its Monte Carlo mean is a probability."""

    output: int
    name: str              # "exceedance" | "mtsr_above_mtt" | "class_3" | "boiling_limited_temperature" | ...
    column: int
    point: int = 0         # the output's point (curves: one exceedance indicator per temperature)


@dataclass
class Model:
    """The vectorised model of a case: its inputs, its columns and ``evaluate(X) -> Y`` (:mod:`.builder`)."""

    case: Case
    inputs: InputSet
    columns: list[Column]
    aux: list[Aux]
    units: list[str]                       # per output
    evaluate: Callable[[np.ndarray], np.ndarray] = field(repr=False)
    n_reported: int = 0
    linear_in_inputs: list[bool] = field(default_factory=list)   # per output: exactly linear model?
    tables: list = field(default_factory=list, repr=False)       # shared ReactionTables (batch mode)

    def f(self, X: np.ndarray) -> np.ndarray:
        """All columns (reported + auxiliary)."""
        return self.evaluate(X)

    def f_reported(self, X: np.ndarray) -> np.ndarray:
        return self.evaluate(X)[:, : self.n_reported]

    @property
    def affine(self) -> bool:
        """Every column (auxiliary ones included) is exactly affine in the inputs (the Monte
        Carlo engine may then evaluate trials from the model's affine map, ``uq.trials``)."""
        return bool(self.linear_in_inputs) and all(self.linear_in_inputs) and not self.aux

    def output_columns(self, i: int) -> list[int]:
        return [j for j, col in enumerate(self.columns) if col.output == i]


def used_data(case: Case) -> set[str]:
    """Ids of the data the outputs can depend on — the union over the outputs of
    :func:`uqthermo.case.model.dependence.output_data` (an output's own data, its reactions' data,
    every datum of the species it involves through reactions, species, mixture, charge, feed
    streams or mass basis; no standard entropies for enthalpy outputs) — and every datum named
    in a ``[[correlation]]`` (so that the stated correlations are always checked as one
    matrix). The rest of the case costs nothing: a species no output uses gets no input column.
    """
    used: set[str] = set()
    for o in case.outputs:
        used |= output_data(case, o)
    for a, b, _ in case.correlations:
        used |= {a, b}
    return used


def build_inputs(case: Case) -> tuple[InputSet, dict[str, list[int]]]:
    """The uncertain inputs (exact data and data no output uses, :func:`used_data`, get no
    column) and each datum's columns."""
    variables: list[InputVariable] = []
    cols: dict[str, list[int]] = {}
    blocks: list[tuple[list[int], np.ndarray | None]] = []
    used = used_data(case)
    for d in case.data.values():
        if not d.uncertain or d.id not in used:
            continue
        idx = list(range(len(variables), len(variables) + len(d.distributions)))
        for name, dist in zip(d.variable_names, d.distributions):
            variables.append(InputVariable(name=name, datum=d.id, distribution=dist))
        cols[d.id] = idx
        blocks.append((idx, d.correlation))
    D = len(variables)
    R = np.eye(D)
    for idx, corr in blocks:
        if corr is not None and len(idx) > 1:
            R[np.ix_(idx, idx)] = corr
    for a, b, r in case.correlations:
        ia, ib = cols[a][0], cols[b][0]
        R[ia, ib] = R[ib, ia] = r
    try:
        with one_blas_thread():     # the PSD check factorises a D x D matrix (see module docstring)
            inputs = InputSet(variables, R)
    except UqthermoError as e:
        raise InputError([Problem(case.path, "correlation", e.message)]) from None
    return inputs, cols


def _values_factory(case: Case, cols: dict[str, list[int]]):
    """Return ``decode(X) -> (species_values, other_values)`` with broadcastable arrays."""
    species_items = []   # (species, relative key, datum, columns)
    other_items = []     # (datum id, columns)
    for did, c in cols.items():
        d = case.data[did]
        if d.species and did.startswith(d.species + ".") and did.split(".")[1] in case.species.get(d.species).phases \
                or (d.species and ".transition." in did):
            rel = did[len(d.species) + 1:]
            species_items.append((d.species, rel, d, c))
        else:
            other_items.append((did, c))

    def decode(X: np.ndarray, species: bool = True):
        n = X.shape[0]
        sv: dict[str, dict[str, np.ndarray]] = {}
        for sp, rel, d, c in species_items if species else ():
            if d.kind == "scale" and not d.positions:
                arr = np.asarray(d.nominal, dtype=float)[None, None, :] * X[:, c[0]][:, None, None]
            elif d.kind == "scale":   # scale only the heat-capacity coefficients (NASA-7: not a6, a7)
                arr = np.broadcast_to(np.asarray(d.nominal, dtype=float), (n, 1, len(d.nominal))).copy()
                arr[:, 0, d.positions] *= X[:, c[0]][:, None]
            elif d.kind == "coefficients":
                arr = np.broadcast_to(np.asarray(d.nominal, dtype=float), (n, 1, len(d.nominal))).copy()
                arr[:, 0, d.positions] = X[:, c]
            else:
                arr = X[:, c[0]][:, None]
            sv.setdefault(sp, {})[rel] = arr
        ov = {did: X[:, c[0]][:, None] for did, c in other_items}
        return sv, ov

    return decode


def values_decoder(case: Case, groups: dict[str, list[int]]):
    """``decode(X) -> (species_values, other_values)``: input rows as the thermo layer's overrides.

    ``decode(X, species=False)`` leaves the species values out (``{}``): the coefficient
    arrays are the costly part, and a caller served by the shared reaction table needs only
    the other values (extents, amounts).

    ``groups`` maps datum id → input columns (``InputSet.groups``). Used by the model and by
    side calculations on the same inputs (e.g. :mod:`uqthermo.case.model.breakdown`).
    """
    return _values_factory(case, groups)


def output_unit(o: OutputSpec) -> str:
    """Report unit of an output (contract §3 units; kJ for a mixture's heating; per kg on a mass basis)."""
    if o.basis == "mass" and o.kind != "adiabatic_temperature_rise":
        return "kJ/kg"
    if o.kind == "heating_enthalpy" and o.mixture:
        return "kJ"
    return UNITS[o.kind]


def reaction_values(species_values: dict, output_values: dict, reaction: str) -> dict:
    """The data values a reaction's Kirchhoff terms read: the species' values, plus the
    reaction's measured enthalpy (``reaction.NAME.measured_enthalpy``) where the output's
    values hold it."""
    vals = dict(species_values)
    key = f"reaction.{reaction}.measured_enthalpy"
    if key in output_values:
        vals[key] = output_values[key]
    return vals


def output_temperature(o: OutputSpec, output_values: dict, n: int):
    """The temperatures of an output for n rows: its sampled temperature datum (n, 1) — at its
    nominal value when the datum is not among ``output_values`` — or its exact temperatures (K)."""
    if o.temperature_datum:
        if o.temperature_datum in output_values:
            return output_values[o.temperature_datum]
        return np.full((n, 1), o.temperature_nominal)
    return o.temperatures
