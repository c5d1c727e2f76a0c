"""Reaction enthalpies at per-sample (uncertain) temperatures, all species in one polynomial.

A formation-anchored reaction whose species are each held in an anchored phase (no route
through transitions) has, by Kirchhoff's law on the formation scale (IUPAC Green Book 2.11;
Atkins' Physical Chemistry, "Kirchhoff's law"),

.. math::
    \\Delta_r H^\\circ(T) = \\sum_s \\nu_s\\Big[\\Delta_f H_s + \\big(G_s(T) - G_s(T_\\mathrm{ref})\\big)\\cdot c_s\\Big]

with :math:`G_s` the clipped antiderivative basis of species *s*'s heat capacity and
:math:`c_s` its coefficient vector (:mod:`uqthermo.thermo.cp`). For temperatures inside one
range of every species, the other ranges contribute constants and the range in use is a
sum of monomials :math:`f_k T^{e_k}` (:meth:`~uqthermo.thermo.cp.CpModel.enthalpy_monomials`).
Since :math:`\\Delta_f H_s` and :math:`c_s` are affine in the model's input row ``x``,

.. math:: \\Delta_r H^\\circ(T, x) = \\sum_e T^e\\, w_e(x), \\qquad w = A\\,[1; x]

with a fixed matrix A per choice of ranges. A block of N samples then costs one small
product ``A X^T`` and a Horner evaluation in T, instead of a basis of every species' every
range at every sample and one contraction per species (the reference path,
:func:`uqthermo.thermo.reaction.reaction_enthalpy`). The results agree up to rounding; A is
checked against that path when built, and a block whose temperatures cross a range boundary,
leave a validity range or are not positive goes the reference path (which raises the same
errors as before).

Units: K, J/mol.
"""

from __future__ import annotations

import bisect

import numpy as np

from ...errors import UqthermoError
from ...thermo.reaction import Reaction, reaction_enthalpy

__all__ = ["SampledTemperatureEnthalpy"]


class SampledTemperatureEnthalpy:
    """ΔrH (J/mol) of one reaction at the temperature in input column ``column`` (see module docstring).

    Build with :meth:`build`, which returns None when the reaction does not qualify (measured
    anchor, a phase reached through transitions, a phase without Cp, a Cp model without
    monomials, data not affine in the inputs).
    """

    def __init__(self, terms, column: int, t_ref: float, D: int):
        # per participant: (nu, cp, hf (D+1,), c (D+1, P), inner range bounds, interval needing no check)
        self._terms = [(nu, cp, hf, c, [hi for _, hi in cp.ranges[:-1]],
                        (-np.inf, np.inf) if cp.allow_extrapolation else (cp.t_min, cp.t_max))
                       for nu, cp, hf, c in terms]
        self._column = column
        self._t_ref = float(t_ref)
        self._D = D
        self._maps: dict = {}

    # ------------------------------------------------------------------ building
    @classmethod
    def build(cls, reaction: Reaction, species, t_ref: float, column: int, decode, D: int,
              check_rows: np.ndarray | None = None) -> SampledTemperatureEnthalpy | None:
        """The evaluator of ``reaction`` at the temperature of input column ``column``, or None.

        ``decode`` maps input rows to the thermo layer's overrides (``layout.values_decoder``);
        its species values are read at the rows 0 and the unit vectors, which gives their
        affine map exactly. ``check_rows`` (k, D), if given, are evaluated both ways and must
        agree to 1e-9 relative.
        """
        if reaction.measured_enthalpy is not None:
            return None
        Z = np.vstack([np.zeros((1, D)), np.eye(D)])
        sv, _ = decode(Z)
        terms = []
        for p in reaction.participants:
            sp = species.get(p.species)
            if sp is None:
                return None
            try:
                phase = sp.resolve_phase(p.phase)
                if sp.anchor_phase(phase, "enthalpy") != phase or sp.phases[phase].anchor("enthalpy") != "formation":
                    return None
            except UqthermoError:    # let the reference path raise its own error
                return None
            ph = sp.phases[phase]
            cp = ph.cp
            if cp is None or not cp.enthalpy_monomials():
                return None
            vals = sv.get(p.species, {})
            hf = vals.get(f"{phase}.formation_enthalpy")
            hf = np.full(D + 1, float(ph.formation_enthalpy)) if hf is None else np.asarray(hf, float).reshape(D + 1)
            c = vals.get(f"{phase}.heat_capacity")
            P = cp.n_parameters
            c = np.tile(cp.coefficients, (D + 1, 1)) if c is None else np.asarray(c, float).reshape(D + 1, P)
            # affine in x: value(x) = v(0) + Σ_d (v(e_d) - v(0)) x_d
            terms.append((float(p.nu), cp, np.concatenate([hf[:1], hf[1:] - hf[0]]),
                          np.vstack([c[:1], c[1:] - c[0]])))
        ev = cls(terms, column, t_ref, D)
        if check_rows is not None and len(check_rows):
            X = np.asarray(check_rows, dtype=float)
            got = [ev.enthalpy(X[i:i + 1]) for i in range(X.shape[0])]    # one row: never across a boundary
            keep = [i for i, g in enumerate(got) if g is not None]
            if not keep:
                return None
            X, got = X[keep], np.concatenate([got[i] for i in keep])
            vals, _ = decode(X)
            ref = np.asarray(reaction_enthalpy(reaction, species, X[:, column][:, None], t_ref, vals),
                             dtype=float).reshape(-1)
            scale = float(np.max(np.abs(ref))) + 1.0
            if not np.all(np.abs(got - ref) <= 1e-9 * scale):
                return None
        return ev

    def _map(self, ranges: tuple[int, ...]):
        """(A (E, D+1) for exponents 0..emax, B (F, D+1) for exponents -1..-F) of one range choice."""
        hit = self._maps.get(ranges)
        if hit is not None:
            return hit
        D = self._D
        pos: dict[int, np.ndarray] = {}
        neg: dict[int, np.ndarray] = {}
        const = np.zeros(D + 1)
        for (nu, cp, hf, c, _, _), r in zip(self._terms, ranges):
            n = len(cp.enthalpy_monomials())
            lo, hi = cp.ranges[r]
            inside = 0.5 * (lo + hi) if np.isfinite(hi) else lo + 1.0
            # constants: ΔfH - G(T_ref)·c + the other ranges' clipped values (fixed within range r)
            g_other = np.array(cp.enthalpy_antiderivative_basis(inside), dtype=float)
            g_other[r * n:(r + 1) * n] = 0.0
            g_ref = np.asarray(cp.enthalpy_antiderivative_basis(self._t_ref), dtype=float)
            const += nu * (hf + c @ (g_other - g_ref))
            for k, mono in enumerate(cp.enthalpy_monomials()):
                if mono is None:
                    continue
                e, f = mono
                row = c[:, r * n + k] * (nu * f)
                if e >= 0:
                    pos[e] = pos[e] + row if e in pos else row
                else:
                    neg[-e] = neg[-e] + row if -e in neg else row
        pos[0] = pos[0] + const if 0 in pos else const
        A = np.zeros((max(pos) + 1, D + 1))
        for e, row in pos.items():
            A[e] = row
        B = np.zeros((max(neg) if neg else 0, D + 1))
        for e, row in neg.items():
            B[e - 1] = row
        self._maps[ranges] = (A, B)
        return A, B

    # ------------------------------------------------------------------ evaluation
    def enthalpy(self, X: np.ndarray) -> np.ndarray | None:
        """ΔrH (n,), J/mol, for input rows X (n, D); None when the block must go the reference path."""
        T = np.ascontiguousarray(X[:, self._column], dtype=float)
        if T.size == 0:
            return None
        lo, hi = float(T.min()), float(T.max())
        if not (np.isfinite(lo) and np.isfinite(hi) and lo > 0.0):
            return None
        ranges = []
        a, b = min(lo, self._t_ref), max(hi, self._t_ref)
        for _, cp, _, _, inner, safe in self._terms:
            r = bisect.bisect_left(inner, lo)     # the range containing lo (a boundary: the lower one)
            if r != bisect.bisect_left(inner, hi):
                return None           # the block crosses a range boundary
            if not (safe[0] <= a and b <= safe[1]) and cp.out_of_range(a, b) is not None:
                return None           # the reference path raises the validity error
            ranges.append(r)
        A, B = self._map(tuple(ranges))
        W = A[:, 1:] @ X.T
        W += A[:, :1]
        y = W[-1].copy()
        for e in range(A.shape[0] - 2, -1, -1):      # Horner in T
            y *= T
            y += W[e]
        if B.shape[0]:
            V = B[:, 1:] @ X.T
            V += B[:, :1]
            u = 1.0 / T
            z = V[-1].copy()
            for e in range(B.shape[0] - 2, -1, -1):
                z *= u
                z += V[e]
            z *= u
            y += z
        return y
