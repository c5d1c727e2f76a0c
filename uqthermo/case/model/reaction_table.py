"""The shared reaction table: every formation-anchored reaction at exact temperatures from one
species table per block (the batch mode of :mod:`.builder`).

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
"""

from __future__ import annotations

import numpy as np

from ...errors import UqthermoError
from ...thermo import reaction as rx
from ...uq.inputs import InputSet
from ..schema import Case, OutputSpec

__all__ = ["ReactionTable", "TABLE_KINDS", "table_requests"]

#: output kinds the table serves (at exact temperatures)
TABLE_KINDS = ("reaction_enthalpy", "reaction_gibbs_energy", "equilibrium_constant")


def _operator(A: np.ndarray):
    """``A`` as the operand of repeated products ``A @ B``: sparse when large and mostly zero."""
    if A.size >= 10_000 and np.count_nonzero(A) <= 0.1 * A.size:
        from scipy import sparse

        return sparse.csr_matrix(A)
    return np.ascontiguousarray(A)


class ReactionTable:
    """All formation-anchored reactions at exact temperatures from shared species samples.

    Built once per model (see the module docstring). ``evaluate`` returns
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


def table_requests(case: Case, outputs: list[OutputSpec]) -> list[tuple[str, np.ndarray, bool]]:
    """(reaction, exact temperatures, needs entropy) of every output the shared table serves."""
    req: list[tuple[str, np.ndarray, bool]] = []
    for o in outputs:
        if o.kind in TABLE_KINDS and not o.temperature_datum and ReactionTable.eligible(case, o.reaction):
            req.append((o.reaction, o.temperatures, o.kind != "reaction_enthalpy"))
        elif o.kind == "heat_release" and not o.temperature_datum:
            req += [(r, o.temperatures, False) for r in o.extent_rates if ReactionTable.eligible(case, r)]
        elif o.kind == "adiabatic_temperature_rise" and ReactionTable.eligible(case, o.reaction):
            req.append((o.reaction, np.array([o.start_temperature]), False))
    return req
