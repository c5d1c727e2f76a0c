"""Turn a :class:`~uqthermo.case.schema.Case` into a vectorised model and its uncertain inputs.

The model is one function ``f(X[N, D]) -> Y[N, M]``: each row of ``X`` is one draw of
all uncertain inputs (the columns of the :class:`~uqthermo.uq.inputs.InputSet`), each
column of ``Y`` one output point (an output at one temperature) in report units. The
physics is evaluated for all ``N`` rows at once — no per-sample loop — by handing the
thermo layer arrays of shape ``(N, 1)`` (scalars) and ``(N, 1, P)`` (Cp coefficient
vectors) that broadcast against the temperature grid ``(M,)``.

Auxiliary columns (indicators such as "final temperature above the limit") follow the
reported columns; their Monte Carlo mean is an exceedance probability.

Row blocks
----------
``evaluate`` works through ``X`` in blocks of :data:`BLOCK_ROWS` rows (the model acts row
by row, so the result does not depend on the block size beyond rounding). Blocks keep the
temporaries in cache and keep the tall-and-skinny matrix products (rows x a dozen
coefficients) on one BLAS thread: profiled on a loaded 2-core machine, one
65536 x 10 by 10 x 9 product took 30-60 ms multi-threaded and 2-3 ms as 4096-row blocks.

One BLAS thread
---------------
The products are small in all but the row dimension (a few dozen species-temperatures
times a dozen inputs). Multi-threaded OpenBLAS handles such shapes badly when the cores
are busy: on the 2-core development machine under load, one model call of the methanation
demo took 3.9 µs per sample with the default two BLAS threads and 0.17 µs with one.
``evaluate`` therefore runs with OpenBLAS limited to one thread (:func:`one_blas_thread`,
restored afterwards; a no-op where the library cannot be found; it lives in ``uq/blas.py``). Parallelism comes from
processes instead (``--engine dask``; distributed's workers default to one BLAS thread).

Batch mode: many reactions from shared species samples
------------------------------------------------------
Every output that needs a formation-anchored reaction enthalpy (or Gibbs energy, ln K) at
*exact* temperatures — ``reaction_enthalpy``, ``reaction_gibbs_energy`` and
``equilibrium_constant`` points, ``heat_release`` at an exact temperature, the reaction
enthalpy at the start temperature of ``adiabatic_temperature_rise`` — is computed through
one shared table (:class:`ReactionTable`), always (no option needed; the results equal
the reaction-by-reaction sum up to rounding, ~1e-14 relative):

1. the S participating species/phase pairs and the union of the G exact temperatures
   are collected once, when the model is built, with the stoichiometric matrix ν (R, S)
   of the R reactions (:func:`~uqthermo.thermo.reaction.stoichiometric_matrix`);
2. per row block, each species' formation-scale enthalpy (and entropy when a Gibbs
   energy or ln K is asked for) is evaluated once for all G temperatures from the block's
   sampled data, stored species-major as ``H[S, n, G]``;
3. one matrix product gives all reaction enthalpies, ``ΔrH[R, n, G] = ν @ H``
   (:func:`~uqthermo.thermo.reaction.stoichiometric_product`; sparse ν for large sets).

Because every reaction uses the same species samples, the covariance between reactions
(and between temperatures) is right, and a thousand reactions cost one species table
plus one product per block. Measured-anchor reactions and uncertain temperatures go the
direct way (reaction by reaction, per-sample temperatures).

Case syntax for large reaction sets (wired by the case reader, see the project docs):
``[reaction_set] file = "reactions.csv"`` (columns ``name,equation``; path relative to
the case file) adds reactions next to ``[reaction.NAME]`` tables, and an output with
``reactions = ["*"]`` (or a list of names) instead of ``reaction`` expands into one output
``NAME[REACTION]`` per reaction. The builder itself needs nothing beyond the expanded
outputs: the shared table is used whatever the number of reactions.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from ..errors import InputError, Problem, UqthermoError, ValidityError
from ..thermo import reaction as rx
from ..thermo.cp import R as GAS_CONSTANT
from ..uq.blas import one_blas_thread
from ..uq.inputs import InputSet, InputVariable
from . import balances
from .dependence import output_data
from .readers.design import molar_mass as design_molar_mass
from .schema import Case, OutputSpec

LN10 = math.log(10.0)

#: rows per model block (see module docstring)
BLOCK_ROWS = 4096
#: rows per block for outputs solved iteratively (energy balances): each iteration has a
#: fixed Python cost, so these take larger blocks
SOLVER_BLOCK_ROWS = 32768

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
    output: int            # index into case.outputs
    temperature: float     # K (nominal for uncertain temperatures)


@dataclass
class Aux:
    output: int
    name: str              # "exceedance" | "mtsr_above_mtt" | "class_3" | "boiling_limited_temperature" | ...
    column: int
    point: int = 0         # the output's point (curves: one exceedance indicator per temperature)


@dataclass
class Model:
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
    :func:`uqthermo.case.dependence.output_data` (an output's own data, its reactions' data,
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

    def decode(X: np.ndarray):
        n = X.shape[0]
        sv: dict[str, dict[str, np.ndarray]] = {}
        for sp, rel, d, c in species_items:
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

    ``groups`` maps datum id → input columns (``InputSet.groups``). Used by the model and by
    side calculations on the same inputs (e.g. :mod:`uqthermo.case.breakdown`).
    """
    return _values_factory(case, groups)


_TABLE_KINDS = ("reaction_enthalpy", "reaction_gibbs_energy", "equilibrium_constant")


def _operator(A: np.ndarray):
    """``A`` as the operand of repeated products ``A @ B``: sparse when large and mostly zero."""
    if A.size >= 10_000 and np.count_nonzero(A) <= 0.1 * A.size:
        from scipy import sparse

        return sparse.csr_matrix(A)
    return np.ascontiguousarray(A)


class ReactionTable:
    """All formation-anchored reactions at exact temperatures from shared species samples.

    Built once per model (see "Batch mode" in the module docstring). ``evaluate`` returns
    ``ΔrH[R, G, n]`` (J/mol) and, if any output needs it, ``ΔrS[R, G, n]`` (J/(mol K)),
    temperatures before rows.

    Species tables. At exact temperatures (and exact transition temperatures) a species'
    formation-scale enthalpy and its absolute entropy are *affine* in its data — formation
    enthalpy, standard entropy, transition enthalpies and Cp coefficients (every Cp model
    is linear in its coefficients), and the case's data map to the input columns linearly
    (value, scale factor or coefficient) — so the table of all species at all G
    temperatures is ``H = h0 + J X^T`` with a fixed (S·G, D) matrix J. J is taken from the
    thermo layer itself when the model is built: the species are evaluated at the best
    estimates and with each input moved by one step (exact for an affine map, up to
    rounding), and a random check row confirms the map to 1e-9 relative. Where that check
    fails (e.g. an uncertain transition temperature) the species are evaluated directly,
    block by block. Either way the reactions then follow from one product ``ν @ H``.

    Attributes
    ----------
    keys : list of (species, phase)
        The S species/phase pairs, in first-use order.
    reactions : list of str
        The R reaction names.
    nu : ndarray (R, S)
        Stoichiometric matrix.
    temperatures : ndarray (G,)
        Sorted union of the exact temperatures asked for, K.
    entropy : bool
        Whether entropies are needed (Gibbs energies, ln K).
    linear : bool
        Whether the species tables use the affine map (else direct evaluation).
    """

    def __init__(self, case: Case, requests: list[tuple[str, np.ndarray, bool]], inputs: InputSet, decode):
        names = list(dict.fromkeys(r for r, _, _ in requests))
        keys: list[tuple[str, str]] = []
        for name in names:
            for p in case.reactions[name].participants:
                if (p.species, p.phase) not in keys:
                    keys.append((p.species, p.phase))
        self.keys = keys
        self.reactions = names
        self._row = {name: i for i, name in enumerate(names)}
        self.nu = rx.stoichiometric_matrix([case.reactions[n] for n in names], keys)
        self._nu = _operator(self.nu)
        self.temperatures = np.unique(np.concatenate([np.atleast_1d(np.asarray(t, dtype=float))
                                                      for _, t, _ in requests]))
        self.entropy = any(e for _, _, e in requests)
        # each species is evaluated only at the temperatures of the reactions it takes part in
        # (other entries stay 0 and are never read): validity ranges are checked exactly as
        # on the reaction-by-reaction path
        need: list[set[int]] = [set() for _ in keys]
        for name, t, _ in requests:
            g = set(self.columns(t).tolist())
            for p in case.reactions[name].participants:
                need[keys.index((p.species, p.phase))] |= g
        self._need = [np.array(sorted(g), dtype=np.intp) for g in need]
        self._species = case.species
        self._t_ref = case.settings.reference_temperature
        self._decode = decode
        self._maps = None
        self.folded = False   # True when the maps give reaction (not species) values directly
        self._kj = None       # the folded ΔrH map in kJ/mol (direct_fill)
        self.linear = False
        self._linearise(inputs)

    # ------------------------------------------------------------------ species tables
    def _direct(self, X: np.ndarray) -> list[np.ndarray]:
        """Species tables ``[H (S, G, n)] (+ [S (S, G, n)])`` evaluated by the thermo layer."""
        n = X.shape[0]
        sv, _ = self._decode(X)
        T, t_ref = self.temperatures, self._t_ref
        out = []
        for q in ("H", "S") if self.entropy else ("H",):
            tab = np.zeros((len(self.keys), T.size, n))
            for s, (name, phase) in enumerate(self.keys):
                sp, v, g = self._species[name], sv.get(name), self._need[s]
                val = sp.enthalpy(phase, T[g], t_ref, v) if q == "H" else sp.entropy(phase, T[g], t_ref, v)
                tab[s, g] = np.broadcast_to(val, (n, g.size)).T
            out.append(tab)
        return out

    def _linearise(self, inputs: InputSet) -> None:
        try:
            self._fit_maps(inputs)
        except (UqthermoError, ValueError, FloatingPointError, ZeroDivisionError):
            # e.g. a path outside a validity range: evaluate directly, so that the error is
            # raised (with its key) where the model is checked, as on the direct path
            self._maps = None
            self.linear = False

    def _fit_maps(self, inputs: InputSet) -> None:
        D = len(inputs)
        x0 = np.asarray(inputs.estimates, dtype=float).reshape(D)
        step = np.maximum(np.abs(x0), np.asarray(inputs.stds, dtype=float).reshape(D))
        step = np.where(step > 0, step, 1.0)
        check = x0 + step * np.random.default_rng(20261202).uniform(-0.5, 0.5, D)
        rows = np.vstack([x0[None, :], x0[None, :] + np.diag(step), check[None, :]])
        maps = []
        for tab in self._direct(rows):
            flat = tab.reshape(-1, D + 2)                        # (S·G, D + 2)
            J = (flat[:, 1:D + 1] - flat[:, :1]) / step[None, :]  # (S·G, D)
            c = flat[:, 0] - J @ x0
            predicted = c + J @ check
            scale = np.max(np.abs(flat)) + 1.0
            if not np.all(np.abs(predicted - flat[:, -1]) <= 1e-9 * scale):
                return                                          # not affine: evaluate directly
            maps.append((J, c))
        S, G, R = len(self.keys), self.temperatures.size, len(self.reactions)
        if R < S:
            # fewer reactions than species: fold ν into the map once, ΔrX = (ν J) X^T + ν c,
            # so each block costs one (R·G, D) product instead of (S·G, D) plus ν @ H
            maps = [(np.asarray(self._nu @ J.reshape(S, G * D)).reshape(R * G, D),
                     np.asarray(self._nu @ c.reshape(S, G)).reshape(R * G)) for J, c in maps]
            self.folded = True
        self._maps = [(_operator(J), c[:, None]) for J, c in maps]
        self.linear = True

    def _tables(self, X: np.ndarray) -> list[np.ndarray]:
        if self._maps is None:
            return self._direct(X)
        XT = X.T if isinstance(self._maps[0][0], np.ndarray) else np.ascontiguousarray(X.T)
        rows = len(self.reactions) if self.folded else len(self.keys)
        return [np.asarray(J @ XT + c).reshape(rows, self.temperatures.size, X.shape[0]) for J, c in self._maps]

    def direct_fill(self, which, plan) -> bool:
        """Whether outputs ``which`` are exactly the folded ΔrH map in order (see :meth:`enthalpies_into`)."""
        return (plan is not None and self.linear and self.folded and isinstance(self._maps[0][0], np.ndarray)
                and plan[1] is None
                and isinstance(plan[3], slice) and set(which) == plan[0])

    def enthalpies_into(self, X: np.ndarray, out: np.ndarray) -> None:
        """Write ΔrH (kJ/mol) of all reactions and temperatures, ``out[R·G, n]``, for input rows X (n, D)."""
        if self._kj is None:                    # direct_fill admits dense maps only
            J, c = self._maps[0]
            self._kj = (J * 1e-3, c * 1e-3)
        J, c = self._kj
        np.matmul(J, X.T, out=out)
        out += c

    # ------------------------------------------------------------------ reactions
    @staticmethod
    def eligible(case: Case, reaction: str) -> bool:
        """Formation-anchored reactions go through the table (measured anchors do not)."""
        return case.reactions[reaction].measured_enthalpy is None

    def row(self, reaction: str) -> int:
        return self._row[reaction]

    def columns(self, temperatures) -> np.ndarray:
        """Indices of exact temperatures in the grid."""
        t = np.atleast_1d(np.asarray(temperatures, dtype=float))
        return np.searchsorted(self.temperatures, t)

    def evaluate(self, X: np.ndarray) -> tuple[np.ndarray, np.ndarray | None]:
        """``(ΔrH[R, G, n], ΔrS[R, G, n] or None)`` for one block of input rows X (n, D)."""
        n = X.shape[0]
        R, S, G = len(self.reactions), len(self.keys), self.temperatures.size
        tabs = self._tables(X)
        out = tabs if self.folded else [np.asarray(self._nu @ tab.reshape(S, G * n)).reshape(R, G, n) for tab in tabs]
        return out[0], (out[1] if self.entropy else None)


def _table_requests(case: Case, outputs: list[OutputSpec]) -> list[tuple[str, np.ndarray, bool]]:
    """(reaction, exact temperatures, needs entropy) of every output the shared table serves."""
    req: list[tuple[str, np.ndarray, bool]] = []
    for o in outputs:
        if o.kind in _TABLE_KINDS and not o.temperature_datum and ReactionTable.eligible(case, o.reaction):
            req.append((o.reaction, o.temperatures, o.kind != "reaction_enthalpy"))
        elif o.kind == "heat_release" and not o.temperature_datum:
            req += [(r, o.temperatures, False) for r in o.extent_rates if ReactionTable.eligible(case, r)]
        elif o.kind == "adiabatic_temperature_rise" and ReactionTable.eligible(case, o.reaction):
            req.append((o.reaction, np.array([o.start_temperature]), False))
    return req


def _nominal(case: Case, did: str) -> float:
    return float(case.data[did].nominal)


def _put_columns(Y: np.ndarray, cols, values: np.ndarray, scale: float = 1e-3) -> None:
    """``Y[:, cols] = scale * values.T`` for ``values`` of shape (k, n) (default J/mol → kJ/mol).

    ``evaluate`` allocates Y column-major, so for a column range each output column takes
    one contiguous row of ``values``, written without a temporary.
    """
    if isinstance(cols, slice):
        np.multiply(values.T, scale, out=Y[:, cols])
    else:
        Y[:, cols] = scale * values.T


def build_model(case: Case, *, batch: bool = True, block_rows: int = BLOCK_ROWS) -> Model:
    """Build the vectorised model of a validated case (see module docstring).

    Parameters
    ----------
    batch : bool
        Compute reaction properties at exact temperatures through the shared
        :class:`ReactionTable` (default). ``False`` evaluates each output reaction by
        reaction (the reference path, kept for tests and benchmarks).
    block_rows : int
        Rows per model block.
    """
    inputs, cols = build_inputs(case)
    datum_cols = cols
    decode = _values_factory(case, cols)
    col_start = np.cumsum([0] + [len(o.temperatures) if o.temperatures is not None else 1
                                 for o in case.outputs])
    solved = [i for i, o in enumerate(case.outputs) if o.kind == "adiabatic_temperature_rise"]
    direct = [i for i in range(len(case.outputs)) if i not in solved]
    groups = []   # (output indices, rows per block, shared table or None, needs decoded values, bulk plan)
    for idx, rows in ((direct, block_rows), (solved, max(block_rows, SOLVER_BLOCK_ROWS))):
        if idx:
            requests = _table_requests(case, [case.outputs[i] for i in idx]) if batch else []
            table = ReactionTable(case, requests, inputs, decode) if requests else None
            # decoding the sampled values is skipped when the table serves every output of the group
            served = table is not None and all(
                case.outputs[i].kind in _TABLE_KINDS and not case.outputs[i].temperature_datum
                and ReactionTable.eligible(case, case.outputs[i].reaction) for i in idx)
            # reaction enthalpies served by the table are gathered for all outputs at once
            bulk = [i for i in idx if table is not None and case.outputs[i].kind == "reaction_enthalpy"
                    and not case.outputs[i].temperature_datum and case.outputs[i].basis != "mass"
                    and ReactionTable.eligible(case, case.outputs[i].reaction)]
            plan = None
            if bulk:
                r_idx = np.concatenate([np.full(len(case.outputs[i].temperatures), table.row(case.outputs[i].reaction))
                                        for i in bulk])
                g_idx = np.concatenate([table.columns(case.outputs[i].temperatures) for i in bulk])
                cols = np.concatenate([np.arange(col_start[i], col_start[i + 1]) for i in bulk])
                if np.array_equal(cols, np.arange(cols[0], cols[0] + cols.size)):
                    cols = slice(int(cols[0]), int(cols[0]) + cols.size)     # the usual case: one slice
                G = table.temperatures.size
                if np.array_equal(r_idx * G + g_idx, np.arange(len(table.reactions) * G)):
                    r_idx = g_idx = None          # outputs are the table itself, in order: no gather
                plan = (set(bulk), r_idx, g_idx, cols)
            groups.append((idx, rows, table, not served, plan))
    Tref = case.settings.reference_temperature
    species = case.species
    columns: list[Column] = []
    for i, o in enumerate(case.outputs):
        temps = o.temperatures if o.temperatures is not None else np.array([o.temperature_nominal])
        columns += [Column(i, float(t)) for t in temps]
    n_rep = len(columns)
    plans = {i: balances.adiabatic_plan(case, o) for i, o in enumerate(case.outputs)
             if o.kind == "adiabatic_temperature_rise"}
    aux_specs: list[tuple[int, str, int]] = []
    for i, o in enumerate(case.outputs):
        if o.limit is not None:
            aux_specs += [(i, "exceedance", p) for p in range(int(col_start[i + 1] - col_start[i]))]
        if i in plans:
            aux_specs += [(i, name, 0) for name in plans[i].aux_names()]
    aux = [Aux(i, name, n_rep + k, p) for k, (i, name, p) in enumerate(aux_specs)]
    aux_col = {(a.output, a.name, a.point): a.column for a in aux}
    # indicators computed from the finished columns (limits, MTSR against MTT/TD24, classes)
    post = _post_columns(case, datum_cols, col_start, aux_col)
    molar_masses = {sp: design_molar_mass(None, species[sp], "") for o in case.outputs for sp, _ in o.mixture} \
        if any(o.mixture and o.basis == "mass" for o in case.outputs) else {}

    def value(ov: dict, did: str, n: int) -> np.ndarray:
        if did in ov:
            return ov[did]
        return np.full((n, 1), _nominal(case, did))

    def temperature(o: OutputSpec, ov: dict, n: int):
        if o.temperature_datum:
            return ov[o.temperature_datum] if o.temperature_datum in ov else np.full((n, 1), o.temperature_nominal)
        return o.temperatures

    def reaction_values(sv: dict, ov: dict, reaction: str) -> dict:
        vals = dict(sv)
        key = f"reaction.{reaction}.measured_enthalpy"
        if key in ov:
            vals[key] = ov[key]
        return vals

    def from_table(tab, reaction: str, temps) -> np.ndarray | None:
        """ΔrH (and ΔrS) rows (n, len(temps)) from the shared table, or None if not served."""
        if tab is None or not ReactionTable.eligible(case, reaction):
            return None
        table, dH, dS = tab
        r, g = table.row(reaction), table.columns(temps)
        return dH[r][g].T, (None if dS is None else dS[r][g].T)

    def adiabatic(i: int, o: OutputSpec, sv: dict, ov: dict, n: int, tab):
        reaction = case.reactions[o.reaction]
        hit = from_table(tab, o.reaction, [o.start_temperature])
        if hit is not None:
            dH = hit[0][:, 0]
        else:
            dH = rx.reaction_enthalpy(reaction, species, o.start_temperature, Tref,
                                      reaction_values(sv, ov, o.reaction))
            dH = np.broadcast_to(np.asarray(dH, dtype=float), (n, 1))[:, 0]
        xi = value(ov, o.extent_datum, n)[:, 0]
        amounts = [value(ov, did, n)[:, 0] for _, _, did in plans[i].charge]
        return balances.evaluate_adiabatic(case, plans[i], dH, xi, amounts, sv, ov, n, value)

    def evaluate_block(X: np.ndarray, which: list[int], table: ReactionTable | None, needs_values: bool, plan):
        """Outputs ``which`` for one block: ({output index: y (n, ncol)}, {aux column: values}, bulk).

        ``bulk`` is (columns, values (len(columns), n)) of the reaction enthalpies gathered
        from the table in one step (``plan``), or None.
        """
        n = X.shape[0]
        sv, ov = decode(X) if needs_values else ({}, {})
        tab = (table, *table.evaluate(X)) if table is not None else None
        parts = {}
        extra = {}
        bulk = None
        if plan is not None:
            _, r_idx, g_idx, cols = plan
            dH = tab[1]
            values = dH.reshape(-1, n) if r_idx is None else dH[r_idx, g_idx]     # (columns, n), J/mol
            bulk = (cols, values)
        for i in which:
            if plan is not None and i in plan[0]:
                continue
            o = case.outputs[i]
            k = o.kind
            hit = None if o.temperature_datum or k not in _TABLE_KINDS else from_table(tab, o.reaction, o.temperatures)
            if hit is not None:
                dH, dS = hit
                if k == "reaction_enthalpy":
                    y = dH / 1e3
                elif k == "reaction_gibbs_energy":
                    y = (dH - o.temperatures * dS) / 1e3
                else:
                    y = -(dH - o.temperatures * dS) / (GAS_CONSTANT * o.temperatures) / LN10
            elif k in _TABLE_KINDS:
                reaction = case.reactions[o.reaction]
                T = temperature(o, ov, n)
                vals = reaction_values(sv, ov, o.reaction)
                if k == "reaction_enthalpy":
                    y = rx.reaction_enthalpy(reaction, species, T, Tref, vals) / 1e3
                elif k == "reaction_gibbs_energy":
                    y = rx.reaction_gibbs_energy(reaction, species, T, Tref, vals) / 1e3
                else:
                    y = rx.ln_equilibrium_constant(reaction, species, T, Tref, vals) / LN10
            elif k == "heating_enthalpy":
                if o.species:
                    y = species[o.species].heating_enthalpy(o.phase, o.t_from, o.t_to, sv.get(o.species)) / 1e3
                else:
                    y = 0.0
                    mass = 0.0
                    for (sp, ph), did in o.mixture.items():
                        amt = value(ov, did, n)
                        y = y + amt * species[sp].heating_enthalpy(ph, o.t_from, o.t_to, sv.get(sp)) / 1e3
                        if o.basis == "mass":
                            mass = mass + amt * molar_masses[sp]
                    if o.basis == "mass":
                        y = y / mass
            elif k == "heat_release":
                T = temperature(o, ov, n)
                y = 0.0
                for rname, dids in o.extent_rates.items():
                    rate = value(ov, dids[0], n)
                    for did in dids[1:]:
                        rate = rate * value(ov, did, n)
                    rate = rate / o.extent_divisor.get(rname, 1.0)
                    hit = None if o.temperature_datum else from_table(tab, rname, o.temperatures)
                    if hit is not None:
                        dH = hit[0]
                    else:
                        dH = rx.reaction_enthalpy(case.reactions[rname], species, T, Tref,
                                                  reaction_values(sv, ov, rname))
                    y = y + rate * (-dH) / 1e3
                for stream in o.feeds:   # open system: feeds brought from their temperature to the reactor's
                    Ts = value(ov, stream.temperature_datum, n) if stream.temperature_datum else stream.temperature
                    for (sp, ph), did in stream.flows.items():
                        dh = species[sp].heating_enthalpy(ph, Ts, T, sv.get(sp))
                        y = y - value(ov, did, n) * dh / 1e3
            else:
                dT, more = adiabatic(i, o, sv, ov, n, tab)
                y = dT[:, None]
                for name, v in more.items():
                    extra[aux_col[(i, name, 0)]] = v
            if o.basis == "mass" and o.kind in ("reaction_enthalpy", "reaction_gibbs_energy") or (
                    o.basis == "mass" and o.kind == "heating_enthalpy" and o.species):
                y = y / o.mass_per_unit
            parts[i] = y
        return parts, extra, bulk

    def evaluate(X: np.ndarray) -> np.ndarray:
        X = np.asarray(X, dtype=float)
        if X.ndim != 2:
            raise ValueError("X must be 2-D")
        n = X.shape[0]
        Y = np.empty((n, n_rep + len(aux)), order="F")   # column-major: statistics run along outputs
        with one_blas_thread():
            for which, rows, table, needs_values, plan in groups:
                if table is not None and table.direct_fill(which, plan):
                    # every output of the group is the folded reaction map itself: products go
                    # straight into the (column-major) result, in kJ/mol
                    for a in range(0, n, rows):
                        b = min(n, a + rows)
                        table.enthalpies_into(X[a:b], Y[a:b, plan[3]].T)
                    continue
                for a in range(0, n, rows):
                    b = min(n, a + rows)
                    parts, extra, bulk = evaluate_block(X[a:b], which, table, needs_values, plan)
                    if bulk is not None:
                        _put_columns(Y[a:b], *bulk)
                    for i, y in parts.items():
                        Y[a:b, col_start[i]:col_start[i + 1]] = y
                    for j, e in extra.items():
                        Y[a:b, j] = e
            for fill in post:
                fill(X, Y)
        return Y

    units = [output_unit(o) for o in case.outputs]
    moving_transitions = any(d.uncertain and d.quantity == "transition temperature" for d in case.data.values())
    linear = [_is_linear(case, o, moving_transitions) for o in case.outputs]
    return Model(case=case, inputs=inputs, columns=columns, aux=aux, units=units, evaluate=evaluate,
                 n_reported=n_rep, linear_in_inputs=linear, tables=[g[2] for g in groups if g[2] is not None])


def output_unit(o: OutputSpec) -> str:
    """Report unit of an output (contract §3 units; kJ for a mixture's heating; per kg on a mass basis)."""
    if o.basis == "mass" and o.kind != "adiabatic_temperature_rise":
        return "kJ/kg"
    if o.kind == "heating_enthalpy" and o.mixture:
        return "kJ"
    return UNITS[o.kind]


def _post_columns(case: Case, cols: dict[str, list[int]], col_start, aux_col: dict) -> list:
    """Fillers ``f(X, Y)`` of the indicator columns that follow from finished output columns and inputs.

    * ``exceedance`` (per point): y > L (``limit_side = "above"``) or y < L (``"below"``), with
      y the output (for an adiabatic rise: the final temperature T0 + ΔT_ad) and L the limit,
      sampled when it is uncertain;
    * ``mtsr_above_mtt``, ``mtsr_above_td24``, ``class_1`` … ``class_5``: MTSR = T_p + X_ac·ΔT_ad
      against the (sampled) MTT and TD24 (:func:`~uqthermo.thermo.energy.criticality_class`).
    """
    from ..thermo.energy import criticality_class

    fills = []

    def level(did: str, nominal: float, factor: float = 1.0):
        c = cols.get(did)
        if c:
            j = c[0]
            return lambda X: X[:, j] * factor
        return lambda X: np.full(X.shape[0], nominal)

    for i, o in enumerate(case.outputs):
        if o.limit is not None:
            d = case.data.get(o.limit_datum)
            lim = level(o.limit_datum, o.limit, d.to_report if d is not None else 1.0)
            offset = o.start_temperature if o.kind == "adiabatic_temperature_rise" else 0.0
            first = int(col_start[i])
            targets = [(first + p, aux_col[(i, "exceedance", p)]) for p in range(int(col_start[i + 1]) - first)]

            def fill(X, Y, lim=lim, offset=offset, targets=targets, above=o.limit_side == "above"):
                L = lim(X) - offset
                for j, a in targets:
                    Y[:, a] = (Y[:, j] > L) if above else (Y[:, j] < L)
            fills.append(fill)
        if o.kind == "adiabatic_temperature_rise" and o.process_temperature is not None and (o.mtt or o.td24):
            acc = 1.0 if o.accumulation is None else o.accumulation
            mtt = level(o.mtt_datum, o.mtt) if o.mtt is not None else None
            td24 = level(o.td24_datum, o.td24) if o.td24 is not None else None
            j0 = int(col_start[i])

            def fill(X, Y, i=i, o=o, acc=acc, mtt=mtt, td24=td24, j0=j0):
                m = o.process_temperature + acc * Y[:, j0]
                a = b = None
                if mtt is not None:
                    a = mtt(X)
                    Y[:, aux_col[(i, "mtsr_above_mtt", 0)]] = m > a
                if td24 is not None:
                    b = td24(X)
                    Y[:, aux_col[(i, "mtsr_above_td24", 0)]] = m > b
                if a is not None and b is not None:
                    cls = criticality_class(o.process_temperature, m, a, b)
                    for k in range(1, 6):
                        Y[:, aux_col[(i, f"class_{k}", 0)]] = cls == k
            fills.append(fill)
    return fills


def _is_linear(case: Case, o: OutputSpec, moving_transitions: bool | None = None) -> bool:
    """True when the output is exactly linear in its uncertain inputs.

    Enthalpies, entropies, Gibbs energies and ln K at exact temperatures are linear in
    formation data, transition enthalpies and Cp coefficients (every Cp model is linear
    in its coefficients). Uncertain temperatures (of the output or of a transition),
    amounts multiplying an enthalpy, extents and rates make the model nonlinear.
    """
    if o.kind not in ("reaction_enthalpy", "heating_enthalpy", "reaction_gibbs_energy", "equilibrium_constant"):
        return False
    if o.temperature_datum or o.mixture:
        return False
    if moving_transitions is None:
        moving_transitions = any(d.uncertain and d.quantity == "transition temperature" for d in case.data.values())
    return not moving_transitions


def check_model(case: Case, model: Model) -> list[str]:
    """Evaluate the model at the best estimates, output by output, and at the probes a run will
    reach (:mod:`uqthermo.case.probes`: 1e-9 tails, candidate what-if variants).

    Raises :class:`InputError` for outputs whose path leaves a correlation's validity
    range (when extrapolation is not allowed) or that the physics cannot evaluate;
    returns warnings for extrapolated paths (when allowed) and non-finite results.
    """
    problems: list[Problem] = []
    warnings: list[str] = []
    x0 = np.asarray(model.inputs.estimates, dtype=float)[None, :]
    cps = [(sp, ph, p.cp) for sp, s in case.species.items() for ph, p in s.phases.items() if p.cp is not None]
    # 1) with extrapolation switched off everywhere: what would leave a validity range?
    saved = [cp.allow_extrapolation for _, _, cp in cps]
    try:
        for _, _, cp in cps:
            cp.allow_extrapolation = False
        strict_errors = _try_outputs(case, model, x0)
    finally:
        for (_, _, cp), a in zip(cps, saved):
            cp.allow_extrapolation = a
    allowed_errors = _try_outputs(case, model, x0) if strict_errors else {}
    for i, o in enumerate(case.outputs):
        err, key = allowed_errors.get(i, (None, None)) if strict_errors else (None, None)
        strict = strict_errors.get(i, (None, None))[0]
        if err is not None:
            msg = err.message if isinstance(err, UqthermoError) else str(err)
            if isinstance(err, ValidityError) and err.key:
                msg = f"{msg} (datum {err.key}; allow with extrapolate = true on that heat_capacity or settings.allow_extrapolation = true)"
            problems.append(Problem(case.path, key or o.key, msg))
        elif strict is not None:
            text = strict.message if isinstance(strict, UqthermoError) else str(strict)
            text = text.removesuffix(" (extrapolation not allowed)")
            warnings.append(f"{o.key}: extrapolated beyond a correlation's validity range, as the case allows "
                            f"(extrapolate = true) — {text}")
    if problems:
        raise InputError(problems)
    y = model.evaluate(x0)
    bad = [case.outputs[c.output].key for j, c in enumerate(model.columns) if not np.isfinite(y[0, j])]
    if bad:
        raise InputError([Problem(case.path, k, "the model gives a non-finite value at the best estimates; check the data")
                          for k in dict.fromkeys(bad)])
    from .readers.plausibility import model_warnings

    return warnings + model_warnings(case, model, y[0])


def _try_outputs(case: Case, model: Model, x0: np.ndarray) -> dict[int, tuple[Exception, str | None]]:
    """Evaluate each output alone at the best estimates, then at the probes a run will reach
    (:func:`uqthermo.case.probes.probe_rows`: input tails, the output's combined tail, candidate
    what-if variants); map output index → (the first error it raised, the key path that causes it)."""
    from .probes import first_failure, probe_rows

    errors: dict[int, tuple[Exception, str | None]] = {}
    for i, o in enumerate(case.outputs):
        sub = Case(**{**case.__dict__, "outputs": [o]})
        try:
            m = build_model(sub)
            m.evaluate(np.asarray(m.inputs.estimates, dtype=float)[None, :])
        except UqthermoError as e:
            errors[i] = (e, None)
            continue
        except (ValueError, FloatingPointError, ZeroDivisionError) as e:
            errors[i] = (e, None)
            continue
        full = not (m.linear_in_inputs[0] and not o.temperature_datum)
        hit = first_failure(m, probe_rows(sub, m, o, full=full),
                            (UqthermoError, ValueError, FloatingPointError, ZeroDivisionError))
        if hit is not None:
            probe, e = hit
            if isinstance(e, UqthermoError):
                e = _annotated(e, f"{probe.note} (in {o.key})" if probe.key != o.key else probe.note)
            errors[i] = (e, probe.key)
    return errors


def _annotated(e: UqthermoError, note: str) -> UqthermoError:
    """The same error type with ``note`` appended to its message (key kept)."""
    try:
        return type(e)(f"{e.message}; {note}", key=e.key)
    except TypeError:   # an error type with another constructor: keep it as it is
        return e
