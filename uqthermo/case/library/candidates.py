"""What every data source hands to the selection rules: candidate values and candidate curves.

Owns :class:`SourceInfo` (one source: title, version, citation, what it states about
uncertainty), :class:`ScalarCandidate` (one value of one quantity of one species in one phase
from one source, with the uncertainty the source states or the typical deviation published for
it) and :class:`CurveCandidate` (one heat-capacity correlation with its validity range), and the
exact or fitted conversion of any curve to the case file's Shomate form
(:func:`shomate_representation`).

Shomate form (NIST WebBook; NIST Standard Reference Database 69)::

    Cp = A + B t + C t² + D t³ + E / t²,   t = T / 1000 K,   Cp in J/(mol K)

It is linear in its coefficients, and every polynomial in T up to T³ with an optional T⁻² term
is one exactly; other correlation forms (TRC, quasi-polynomials, T⁴ polynomials) are fitted
piecewise by least squares until the largest relative deviation is below
:data:`FIT_TOLERANCE`, and the deviation is recorded beside the curve.
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import Callable

import numpy as np

from .base import T_REF

__all__ = ["SourceInfo", "ScalarCandidate", "CurveCandidate", "shomate_representation", "shomate_eval",
           "polynomial_to_shomate", "FIT_TOLERANCE", "QUANTITY_UNITS"]

FIT_TOLERANCE = 5e-4
"""Largest relative deviation accepted when a curve is represented piecewise in Shomate form."""

QUANTITY_UNITS = {
    "formation_enthalpy": "J/mol", "formation_gibbs_energy": "J/mol", "standard_entropy": "J/(mol*K)",
    "heat_capacity": "J/(mol*K)", "boiling_temperature": "K", "melting_temperature": "K",
    "critical_temperature": "K", "vaporization_enthalpy": "J/mol", "fusion_enthalpy": "J/mol",
}


@dataclass(frozen=True)
class SourceInfo:
    """One data source.

    Attributes
    ----------
    key : str
        Name used in case files and reports (``"ATcT"``, ``"CRC"``, ``"Zabransky"`` ...).
    title, version, citation : str
    kind : str
        ``"evaluated"`` (critically evaluated tables), ``"compilation"`` (handbook compilations),
        ``"correlation"`` (fitted equations) or ``"estimate"`` (group contribution, corresponding
        states) — estimates are used only where nothing else has the quantity, and are flagged.
    uncertainty : str
        What the source states about uncertainties and how uqthermo reads it.
    """

    key: str
    title: str
    version: str
    citation: str
    kind: str
    uncertainty: str

    @property
    def label(self) -> str:
        """Short label, e.g. ``"ATcT 1.112"``."""
        return f"{self.key} {self.version}".strip()


@dataclass(frozen=True)
class ScalarCandidate:
    """One value from one source.

    Attributes
    ----------
    source : SourceInfo
    quantity : str
        Key of :data:`QUANTITY_UNITS`.
    phase : str
        ``g``, ``l``, ``s`` or, for transitions, ``l-g`` / ``s-l``.
    cas : str
    value : float
        SI (J/mol, J/(mol K), K).
    temperature : float or None
        Temperature the value holds at (298.15 K for standard values; the transition temperature
        for latent heats).
    u : float or None
        Standard uncertainty from the source: its stated one (``u_basis = "stated"``) or the
        typical deviation published for the method (``"published"``); None otherwise.
    u_note : str
        Where ``u`` comes from (citation, conversion).
    expanded, k : float or None
        The published expanded uncertainty and the coverage factor used (``u = expanded/k``).
    note : str
        Anything else worth printing beside the value (e.g. the correlation used).
    """

    source: SourceInfo
    quantity: str
    phase: str
    cas: str
    value: float
    temperature: float | None = T_REF
    u: float | None = None
    u_basis: str = ""
    u_note: str = ""
    expanded: float | None = None
    k: float | None = None
    note: str = ""

    @property
    def unit(self) -> str:
        return QUANTITY_UNITS[self.quantity]

    @property
    def estimate(self) -> bool:
        return self.source.kind == "estimate"


def shomate_eval(ranges, T) -> np.ndarray:
    """Cp(T) of Shomate ranges ``[(lo, hi, [A, B, C, D, E]), ...]`` (NIST form), J/(mol K).

    Outside the ranges the nearest range is used (no validity check here)."""
    T = np.atleast_1d(np.asarray(T, dtype=float))
    out = np.empty_like(T)
    edges = [r[1] for r in ranges[:-1]]
    idx = np.searchsorted(edges, T, side="left")
    for i, (_, _, c) in enumerate(ranges):
        m = idx == i
        t = T[m] / 1000.0
        A, B, C, D, E = c
        out[m] = A + B * t + C * t * t + D * t**3 + E / (t * t)
    return out


def polynomial_to_shomate(a: float = 0.0, b: float = 0.0, c: float = 0.0, d: float = 0.0, e: float = 0.0) -> list[float]:
    """Exact Shomate coefficients of Cp = a + b T + c T² + d T³ + e/T² (T in K).

    With t = T/1000: A = a, B = 10³ b, C = 10⁶ c, D = 10⁹ d, E = 10⁻⁶ e.
    """
    return [float(a), float(b) * 1e3, float(c) * 1e6, float(d) * 1e9, float(e) * 1e-6]


def _basis(T: np.ndarray) -> np.ndarray:
    t = T / 1000.0
    return np.column_stack([np.ones_like(t), t, t * t, t**3, 1.0 / (t * t)])


def _fit_segment(fn, lo: float, hi: float, n: int = 41):
    k = np.arange(n)
    T = 0.5 * (lo + hi) + 0.5 * (hi - lo) * np.cos(np.pi * (2 * k + 1) / (2 * n))[::-1]
    T = np.concatenate([[lo], T, [hi]])
    y = np.asarray(fn(T), dtype=float)
    X = _basis(T)
    scale = np.maximum(np.abs(y), 1e-9)
    coef, *_ = np.linalg.lstsq(X / scale[:, None], y / scale, rcond=None)
    dev = X @ coef - y
    return [float(x) for x in coef], float(np.max(np.abs(dev / scale))), float(np.max(np.abs(dev)))


def shomate_representation(fn: Callable[[np.ndarray], np.ndarray], lo: float, hi: float,
                           tol: float = FIT_TOLERANCE, min_width: float = 20.0):
    """Piecewise least-squares Shomate representation of Cp = fn(T) on [lo, hi].

    Each segment is fitted on Chebyshev points (plus its ends) with relative weights; a segment
    whose largest relative deviation exceeds ``tol`` is halved (down to ``min_width`` K).

    Returns
    -------
    (ranges, max_rel_dev, max_abs_dev)
        ``ranges`` as ``[(lo, hi, [A, B, C, D, E]), ...]``; the largest deviations over all
        segments (relative, and in J/(mol K)).
    """
    out = []
    worst_rel = worst_abs = 0.0
    stack = [(float(lo), float(hi))]
    while stack:
        a, b = stack.pop(0)
        coef, rel, ab = _fit_segment(fn, a, b)
        if rel > tol and (b - a) > 2 * min_width:
            m = round(0.5 * (a + b), 2)
            stack[:0] = [(a, m), (m, b)]
            continue
        out.append((a, b, coef))
        worst_rel, worst_abs = max(worst_rel, rel), max(worst_abs, ab)
    out.sort(key=lambda r: r[0])
    return out, worst_rel, worst_abs


@dataclass(frozen=True, eq=False)
class CurveCandidate:
    """One heat-capacity correlation from one source.

    Attributes
    ----------
    source : SourceInfo
    phase : str
        ``g``, ``l`` or ``s``.
    cas : str
    t_min, t_max : float
        Validity range stated by the source, K (equal for a value at one temperature).
    function : callable
        Cp(T) in J/(mol K) as the source defines it (vectorised over T).
    form : str
        The source's equation, e.g. ``"Cp/R = a0 + a1 T + ... + a4 T^4 (Poling et al.)"``.
    native : list or None
        Exact Shomate ranges when the form is one (else fitted on demand).
    relative_u : float or None
        Relative standard uncertainty stated by the source or published for the method.
    u_basis, u_note : str
        As :class:`ScalarCandidate`.
    note : str
    """

    source: SourceInfo
    phase: str
    cas: str
    t_min: float
    t_max: float
    function: Callable[[np.ndarray], np.ndarray]
    form: str = ""
    native: list | None = None
    relative_u: float | None = None
    u_basis: str = ""
    u_note: str = ""
    note: str = ""
    _cache: dict = field(default_factory=dict, repr=False, compare=False)

    @property
    def estimate(self) -> bool:
        return self.source.kind == "estimate"

    @property
    def single_point(self) -> bool:
        """A value at one temperature only (e.g. a Cp at 298.15 K)."""
        return self.t_max - self.t_min < 1e-9

    def covers(self, lo: float, hi: float) -> bool:
        """Whether [lo, hi] lies inside the validity range (1 mK slack for rounded ends; the
        WebBook's 298 K lower ends count as 298.15 K)."""
        t_min = T_REF if abs(self.t_min - 298.0) < 1e-9 else self.t_min
        return t_min - 1e-3 <= lo and hi <= self.t_max + 1e-3

    def cp(self, T) -> np.ndarray:
        T = np.atleast_1d(np.asarray(T, dtype=float))
        return np.asarray(self.function(T), dtype=float) * np.ones_like(T)

    def shomate(self):
        """(ranges, note): the curve in Shomate form over its whole validity range."""
        if "rep" not in self._cache:
            if self.native is not None:
                self._cache["rep"] = (list(self.native), f"{self.form}: exact in Shomate form")
            else:
                ranges, rel, ab = shomate_representation(self.function, self.t_min, self.t_max)
                note = (f"{self.form}: represented in Shomate form by uqthermo over {len(ranges)} range(s), "
                        f"largest deviation {ab:.2g} J/(mol*K) ({100 * rel:.2g} %)")
                self._cache["rep"] = (ranges, note)
        return self._cache["rep"]


@functools.lru_cache(maxsize=None)
def gas_constant() -> float:
    """R = 8.314462618 J/(mol K) (CODATA 2018, exact since the 2019 SI)."""
    return 8.314462618
