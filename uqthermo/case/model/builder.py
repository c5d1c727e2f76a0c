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

Reaction properties at exact temperatures come from one shared table
(:class:`~uqthermo.case.model.reaction_table.ReactionTable`, the "batch mode"); the model's
data layout (input and output columns) is in :mod:`.layout`, the checks before a run in :mod:`.checks`.

Case syntax for large reaction sets (wired by the case reader, see the project docs):
``[reaction_set] file = "reactions.csv"`` (columns ``name,equation``; path relative to
the case file) adds reactions next to ``[reaction.NAME]`` tables, and an output with
``reactions = ["*"]`` (or a list of names) instead of ``reaction`` expands into one output
``NAME[REACTION]`` per reaction. The builder itself needs nothing beyond the expanded
outputs: the shared table is used whatever the number of reactions.
"""

from __future__ import annotations

import math

import numpy as np

from ...thermo import reaction as rx
from ...thermo.cp import R as GAS_CONSTANT
from ...uq.blas import one_blas_thread
from ..readers.amounts import molar_mass
from ..schema import Case, OutputSpec
from . import balances
from .layout import Aux, Column, Model, build_inputs, output_temperature, output_unit, reaction_values, values_decoder
from .reaction_table import TABLE_KINDS, ReactionTable, table_requests
from .sampled_temperature import SampledTemperatureEnthalpy

__all__ = ["build_model", "BLOCK_ROWS", "SOLVER_BLOCK_ROWS"]

LN10 = math.log(10.0)

#: rows per model block (see module docstring)
BLOCK_ROWS = 4096
#: rows per block for outputs solved iteratively (energy balances): each iteration has a
#: fixed Python cost, so these take larger blocks
SOLVER_BLOCK_ROWS = 32768


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
        :class:`ReactionTable`, and reaction enthalpies at an uncertain temperature as one
        polynomial in T (:mod:`.sampled_temperature`) (default). ``False`` evaluates each
        output reaction by reaction, species by species (the reference path, kept for tests
        and benchmarks).
    block_rows : int
        Rows per model block.
    """
    inputs, cols = build_inputs(case)
    datum_cols = cols
    decode = values_decoder(case, cols)
    sampled_t = _sampled_temperature_evaluators(case, inputs, cols, decode) if batch else {}
    col_start = np.cumsum([0] + [len(o.temperatures) if o.temperatures is not None else 1
                                 for o in case.outputs])
    solved = [i for i, o in enumerate(case.outputs) if o.kind == "adiabatic_temperature_rise"]
    direct = [i for i in range(len(case.outputs)) if i not in solved]
    groups = []   # (output indices, rows per block, shared table or None, needs decoded values, bulk plan)
    for idx, rows in ((direct, block_rows), (solved, max(block_rows, SOLVER_BLOCK_ROWS))):
        if idx:
            requests = table_requests(case, [case.outputs[i] for i in idx]) if batch else []
            table = ReactionTable(case, requests, inputs, decode) if requests else None
            # decoding the sampled values is skipped when the table serves every output of the group
            served = all(i in sampled_t or table is not None and (
                case.outputs[i].kind in TABLE_KINDS and not case.outputs[i].temperature_datum
                and ReactionTable.eligible(case, case.outputs[i].reaction)) for i in idx)
            # heat releases at exact temperatures from the table need the extents, not the species values
            no_species = served or table is not None and all(
                i in sampled_t or o.kind in TABLE_KINDS and not o.temperature_datum
                and ReactionTable.eligible(case, o.reaction)
                or o.kind == "heat_release" and not o.temperature_datum and not o.feeds
                and all(ReactionTable.eligible(case, r) for r in o.extent_rates)
                for i, o in ((i, case.outputs[i]) for i in idx))
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
            groups.append((idx, rows, table, False if served else ("other" if no_species else "all"), plan))
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
    molar_masses = {sp: molar_mass(None, species[sp], "") for o in case.outputs for sp, _ in o.mixture} \
        if any(o.mixture and o.basis == "mass" for o in case.outputs) else {}

    def value(ov: dict, did: str, n: int) -> np.ndarray:
        if did in ov:
            return ov[did]
        return np.full((n, 1), _nominal(case, did))

    table_index: dict = {}   # (table, reaction, temperature grid) -> (grid, row, columns)

    def from_table(tab, reaction: str, temps) -> np.ndarray | None:
        """ΔrH (and ΔrS) rows (n, len(temps)) from the shared table, or None if not served."""
        if tab is None or not ReactionTable.eligible(case, reaction):
            return None
        table, dH, dS = tab
        key = (id(table), reaction, id(temps))
        hit = table_index.get(key)
        if hit is None or hit[0] is not temps:
            g = table.columns(temps)
            if g.size and np.array_equal(g, np.arange(g[0], g[0] + g.size)):
                g = slice(int(g[0]), int(g[0]) + g.size)      # a view, not a gathered copy
            hit = (temps, table.row(reaction), g)
            if isinstance(temps, np.ndarray):                 # the case's own grids: stable objects
                table_index[key] = hit
        _, r, g = hit
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

    def evaluate_block(X: np.ndarray, which: list[int], table: ReactionTable | None, needs_values: str | bool, plan):
        """Outputs ``which`` for one block: ({output index: y (n, ncol)}, {aux column: values}, bulk).

        ``bulk`` is (columns, values (len(columns), n)) of the reaction enthalpies gathered
        from the table in one step (``plan``), or None.
        """
        n = X.shape[0]
        fast = {}
        for i in which:
            if i in sampled_t:
                y = sampled_t[i].enthalpy(X)
                if y is not None:
                    fast[i] = y[:, None]
        if any(i in sampled_t and i not in fast for i in which):
            needs_values = "all"
        sv, ov = decode(X, needs_values == "all") if needs_values else ({}, {})
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
            hit = None if o.temperature_datum or k not in TABLE_KINDS else from_table(tab, o.reaction, o.temperatures)
            if i in fast:
                y = fast[i] / 1e3
            elif hit is not None:
                dH, dS = hit
                if k == "reaction_enthalpy":
                    y = dH / 1e3
                elif k == "reaction_gibbs_energy":
                    y = (dH - o.temperatures * dS) / 1e3
                else:
                    y = -(dH - o.temperatures * dS) / (GAS_CONSTANT * o.temperatures) / LN10
            elif k in TABLE_KINDS:
                reaction = case.reactions[o.reaction]
                T = output_temperature(o, ov, n)
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
                T = output_temperature(o, ov, n)
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


def _sampled_temperature_evaluators(case: Case, inputs, cols: dict[str, list[int]], decode) -> dict:
    """{output index: SampledTemperatureEnthalpy} of the reaction enthalpies at an uncertain temperature
    that the one-polynomial path serves (checked against the reference path at a few rows)."""
    out = {}
    D = len(inputs)
    x0 = np.asarray(inputs.estimates, dtype=float).reshape(D)
    sd = np.asarray(inputs.stds, dtype=float).reshape(D)
    check = x0 + sd * np.random.default_rng(20261203).uniform(-1.0, 1.0, (3, D))
    for i, o in enumerate(case.outputs):
        if o.kind != "reaction_enthalpy" or not o.temperature_datum or o.basis == "mass" \
                or not cols.get(o.temperature_datum):
            continue
        column = cols[o.temperature_datum][0]
        rows = np.vstack([x0, check])
        ev = SampledTemperatureEnthalpy.build(case.reactions[o.reaction], case.species,
                                              case.settings.reference_temperature, column, decode, D, rows)
        if ev is not None:
            out[i] = ev
    return out


def _post_columns(case: Case, cols: dict[str, list[int]], col_start, aux_col: dict) -> list:
    """Fillers ``f(X, Y)`` of the indicator columns that follow from finished output columns and inputs.

    * ``exceedance`` (per point): y > L (``limit_side = "above"``) or y < L (``"below"``), with
      y the output (for an adiabatic rise: the final temperature T0 + ΔT_ad) and L the limit,
      sampled when it is uncertain;
    * ``mtsr_above_mtt``, ``mtsr_above_td24``, ``class_1`` … ``class_5``: MTSR = T_p + X_ac·ΔT_ad
      against the (sampled) MTT and TD24 (:func:`~uqthermo.thermo.energy.criticality_class`).
    """
    from ...thermo.energy import criticality_class

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
