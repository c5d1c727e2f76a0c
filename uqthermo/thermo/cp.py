"""Heat-capacity models, all linear in their coefficient vector.

Every model writes the isobaric molar heat capacity as

.. math:: C_p(T) = \\sum_k c_k\\,\\varphi_k(T),

so that :math:`\\int C_p\\,dT` and :math:`\\int C_p/T\\,dT` are linear in the coefficient
vector :math:`c` as well. Each model therefore offers *basis* functions
(``cp_basis``, ``enthalpy_basis``, ``entropy_basis``, ...) returning arrays of shape
``(..., P)`` such that e.g. ``enthalpy_change(T1, T2, c) == enthalpy_basis(T1, T2) @ c``;
the propagation engine uses these for fast matrix products over many samples.

Piecewise models (Shomate, NASA-7) are integrated range by range: a path that crosses a
range boundary sums the analytic pieces. The integrals use the "clipped antiderivative"

.. math:: G(T) = \\sum_r \\Phi_r\\big(\\min(\\max(T, T_{r,\\mathrm{lo}}), T_{r,\\mathrm{hi}})\\big),

with :math:`\\Phi_r` the antiderivative of range *r*, so
:math:`\\int_{T_1}^{T_2} C_p\\,dT = G(T_2) - G(T_1)` for either order of the limits. The first
range is open downwards and the last upwards; that is what "extrapolation with the nearest
range's polynomial" means when ``allow_extrapolation`` is set.

Units: temperatures in K, :math:`C_p` and entropies in J/(mol K), enthalpies in J/mol.
Coefficients are kept in the model's native units (Shomate: NIST form with
:math:`t = T/1000`; NASA-7: dimensionless :math:`C_p/R` polynomial in T/K).

Broadcasting: ``coeffs`` has shape ``(..., P)`` (default: the nominal vector), temperatures
broadcast against ``coeffs.shape[:-1]``; e.g. ``coeffs`` of shape ``(N, 1, P)`` with ``T`` of
shape ``(M,)`` gives ``(N, M)``.
"""

from __future__ import annotations

from typing import Sequence

import numpy as np

from ..errors import PhysicsError, ValidityError

#: Molar gas constant, J/(mol K) (CODATA 2018; exact since the 2019 SI redefinition).
R = 8.314462618

_REL_TOL = 1e-9  # relative slack when comparing a temperature with a validity bound

__all__ = ["R", "CpModel", "ConstantCp", "PolynomialCp", "ShomateCp", "Nasa7Cp", "as_temperature",
           "format_number"]


def format_number(x: float) -> str:
    """A number in messages and labels, shortest general form (``f"{x:g}"``: 298.15, 1e+06)."""
    return f"{x:g}"


def _contract(B: np.ndarray, c: np.ndarray) -> np.ndarray:
    """Sum over the last axis of ``B * c`` with broadcasting of the leading axes.

    The common cases are reduced to one matrix product so that no ``(N, M, P)`` temporary
    is built:

    * ``c: (P,)`` (nominal) -- ``B @ c``;
    * ``B: (P,)`` (one temperature) -- ``c @ B``;
    * ``B: (M, P)`` (a temperature grid) and ``c: (..., 1, P)`` (samples) -- ``c[..., 0, :] @ B.T``;
    * per-sample temperatures, ``B`` and ``c`` both ``(N, ..., P)`` -- an element-wise
      dot product (``einsum``; measured 2x faster than a batched ``matmul`` of 1x1 products).
    """
    if c.ndim == 1:
        return B @ c
    if B.ndim == 1:
        return c @ B
    if B.ndim == 2 and c.shape[-2] == 1:
        return c[..., 0, :] @ B.T
    return np.einsum("...p,...p->...", B, c)


def _powers(t: np.ndarray, exponents, factors) -> np.ndarray:
    """Basis terms ``factor_k · t**exponent_k`` stacked on a new last axis (``None``: a zero term).

    The powers are built by repeated multiplication into one preallocated array (no ``**``
    and no list of temporaries): per-sample temperatures make these bases (N, …, P) arrays
    on the hot path of a Monte Carlo run.
    """
    t = np.asarray(t, dtype=float)
    out = np.empty(t.shape + (len(exponents),))
    pw = {0: None, 1: t}
    for e in sorted({e for e in exponents if e is not None and e > 1}):
        pw[e] = pw[e - 1] * t if e - 1 in pw else t ** e
    for e in {e for e in exponents if e is not None and e < 0}:
        pw[e] = 1.0 / pw[-e] if -e in pw else t ** e
    for k, (e, f) in enumerate(zip(exponents, factors)):
        col = out[..., k]
        if e is None:
            col[...] = 0.0
        elif e == 0:
            col[...] = f
        elif f == 1.0:
            col[...] = pw[e]
        else:
            np.multiply(pw[e], f, out=col)
    return out


#: exact temperature grids up to this size have their bases cached on the model
_CACHE_MAX_POINTS = 512
_CACHE_MAX_ENTRIES = 64


def _split_ranges(kind: str, names: Sequence[str], ranges) -> tuple[list[tuple[float, float]], np.ndarray]:
    """``[(t_lo, t_hi, coefficients), ...]`` → (bounds, concatenated coefficient vector), checked."""
    ranges = list(ranges)
    n = len(names)
    try:
        bounds = [(r[0], r[1]) for r in ranges]
        coeffs = [np.asarray(r[2], dtype=float).reshape(-1) for r in ranges]
    except (TypeError, IndexError, ValueError) as exc:
        raise PhysicsError(f"{kind} heat capacity: each range must be (t_lo, t_hi, [{', '.join(names)}]) ({exc})")
    for cf in coeffs:
        if cf.size != n:
            raise PhysicsError(f"{kind} heat capacity: each range needs {n} coefficients {names[0]}-{names[-1]}, got {cf.size}")
    return bounds, (np.concatenate(coeffs) if coeffs else np.zeros(0))


def as_temperature(T, name: str = "T") -> np.ndarray:
    """``T`` as a float array of absolute temperatures, K.

    Raises
    ------
    ValidityError
        An entry is not finite or not positive (the message names ``name``).
    """
    T = np.asarray(T, dtype=float)
    if not np.all(np.isfinite(T)):
        raise ValidityError(f"{name} must be finite (got {T[~np.isfinite(T)].ravel()[0]!r} K)")
    if np.any(T <= 0.0):
        raise ValidityError(f"{name} must be positive (got {format_number(float(np.min(T)))} K)")
    return T


class CpModel:
    """Base class of the heat-capacity models (linear in their coefficients).

    Attributes
    ----------
    kind : str
        ``"constant"``, ``"polynomial"``, ``"shomate"`` or ``"nasa7"``.
    form : str
        Name in messages (``"Shomate"``, ``"NASA-7"``...); a library curve held in another model's form sets its own.
    coefficients : numpy.ndarray
        Nominal coefficient vector, shape ``(P,)``, native units of the model.
    coefficient_names : list of str
        One name per coefficient, e.g. ``"A[500-1700 K]"``.
    ranges : list of (float, float)
        Contiguous validity ranges in K (one per coefficient block).
    t_min, t_max : float
        Overall validity range, K.
    allow_extrapolation : bool
        If True, temperatures outside ``[t_min, t_max]`` are evaluated with the nearest
        range's polynomial instead of raising :class:`~uqthermo.errors.ValidityError`
        (``out_of_range`` still reports them so callers can warn).
    """

    kind: str = "base"
    form: str = "base"
    _n_terms: int = 0
    _term_names: tuple[str, ...] = ()

    def __init__(self, ranges: Sequence[tuple[float, float]], coefficients, allow_extrapolation: bool = False):
        ranges = [(float(lo), float(hi)) for lo, hi in ranges]
        if not ranges:
            raise PhysicsError(f"{self.kind} heat capacity needs at least one temperature range")
        for lo, hi in ranges:
            if not np.isfinite(lo) or lo < 0 or np.isnan(hi) or not hi > lo:
                raise PhysicsError(f"{self.kind} heat capacity: invalid temperature range {format_number(lo)}-{format_number(hi)} K")
        for (lo1, hi1), (lo2, hi2) in zip(ranges, ranges[1:]):
            if abs(hi1 - lo2) > 1e-6 * max(1.0, abs(hi1)):
                raise PhysicsError(
                    f"{self.kind} heat capacity: ranges must be contiguous and increasing "
                    f"(range ending at {format_number(hi1)} K is followed by one starting at {format_number(lo2)} K)"
                )
        coefficients = np.asarray(coefficients, dtype=float).reshape(-1)
        P = self._n_terms * len(ranges)
        if coefficients.size != P:
            raise PhysicsError(
                f"{self.kind} heat capacity: expected {P} coefficients "
                f"({self._n_terms} per range x {len(ranges)} ranges), got {coefficients.size}"
            )
        if not np.all(np.isfinite(coefficients)):
            raise PhysicsError(f"{self.kind} heat capacity: coefficients must be finite numbers")
        self.ranges = ranges
        self.coefficients = coefficients
        self.allow_extrapolation = bool(allow_extrapolation)
        self.t_min = ranges[0][0]
        self.t_max = ranges[-1][1]
        # inner boundaries, used to pick the range of a temperature (T == boundary -> lower range)
        self._bounds = np.array([hi for _, hi in ranges[:-1]], dtype=float)
        self.coefficient_names = self._make_names()
        self._basis_cache: dict = {}

    # ----------------------------------------------------------------- per-range terms
    def _cp_terms(self, T: np.ndarray) -> np.ndarray:  # (..., n)
        raise NotImplementedError

    def _h_terms(self, T: np.ndarray) -> np.ndarray:  # antiderivative of _cp_terms, (..., n)
        raise NotImplementedError

    def _s_terms(self, T: np.ndarray) -> np.ndarray:  # antiderivative of _cp_terms / T, (..., n)
        raise NotImplementedError

    #: ``_h_terms`` of one range as monomials ``factor · T**exponent`` (T in K), one per term,
    #: ``None`` for a term that is zero; empty when the model does not state it
    _h_monomials: tuple = ()

    def enthalpy_monomials(self) -> tuple:
        """The per-range antiderivative basis of :math:`C_p` as monomials of T (K).

        Returns ``((exponent, factor) or None, ...)``, one entry per term of a range, such
        that term k of :meth:`enthalpy_antiderivative_basis` in the range containing T is
        ``factor_k · T**exponent_k`` (``None``: the term is zero). Lets a caller evaluate
        the powers of per-sample temperatures once for many species (Shomate's
        ``t = T/1000`` is folded into the factors). Empty tuple: not available.
        """
        return self._h_monomials

    def _make_names(self) -> list[str]:
        if len(self.ranges) == 1 and not np.isfinite(self.ranges[0][1]):
            return list(self._term_names)
        return [f"{n}[{format_number(lo)}-{format_number(hi)} K]" for lo, hi in self.ranges for n in self._term_names]

    # ----------------------------------------------------------------- helpers
    @property
    def n_parameters(self) -> int:
        """Number of coefficients P."""
        return self.coefficients.size

    @property
    def n_ranges(self) -> int:
        return len(self.ranges)

    def _coeffs(self, coeffs) -> np.ndarray:
        if coeffs is None:
            return self.coefficients
        c = np.asarray(coeffs, dtype=float)
        if c.ndim == 0 or c.shape[-1] != self.coefficients.size:
            raise PhysicsError(
                f"{self.kind} heat capacity: coefficient array must end with an axis of length "
                f"{self.coefficients.size}, got shape {c.shape}"
            )
        return c

    def range_index(self, T) -> np.ndarray:
        """Index of the range containing each temperature.

        A temperature exactly on an inner boundary belongs to the LOWER range (the convention
        of Cantera's ``NasaPoly2``: ``T <= T_mid`` uses the low-temperature coefficients).
        Temperatures outside the overall range map to the first/last range.
        """
        T = np.asarray(T, dtype=float)
        return np.searchsorted(self._bounds, T, side="left")

    def _blocks(self, T: np.ndarray, terms: np.ndarray) -> np.ndarray:
        """Place per-range ``terms`` (..., n) into the block of the range containing T."""
        n, nr = self._n_terms, len(self.ranges)
        if nr == 1:
            return terms
        idx = self.range_index(T)
        B = np.zeros(T.shape + (n * nr,))
        for r in range(nr):
            m = (idx == r)[..., None]
            B[..., r * n:(r + 1) * n] = np.where(m, terms, 0.0)
        return B

    def _clipped(self, T: np.ndarray, fn) -> np.ndarray:
        """Clipped antiderivative basis G(T) (see module docstring), shape (..., P)."""
        nr = len(self.ranges)
        if nr == 1:
            return fn(T)
        parts = []
        for r, (lo, hi) in enumerate(self.ranges):
            lo_c = -np.inf if r == 0 else lo
            hi_c = np.inf if r == nr - 1 else hi
            parts.append(fn(np.clip(T, lo_c, hi_c)))
        return np.concatenate(parts, axis=-1)

    def _check(self, *temperatures, check: bool = True) -> None:
        Ts = [as_temperature(T) for T in temperatures]
        if not check or self.allow_extrapolation:
            return
        lo = min(float(np.min(T)) for T in Ts)
        hi = max(float(np.max(T)) for T in Ts)
        msg = self.out_of_range(lo, hi)
        if msg is not None:
            raise ValidityError(msg + " (extrapolation not allowed)")

    # ----------------------------------------------------------------- public API
    def out_of_range(self, T_lo, T_hi) -> str | None:
        """Describe how ``[T_lo, T_hi]`` leaves the validity range, or None if it does not.

        Parameters
        ----------
        T_lo, T_hi : float or array_like
            Interval ends, K (arrays: their overall min and max are used).

        Returns
        -------
        str or None
            One-line message naming the offending temperature and the validity range.
        """
        lo = float(np.min(np.minimum(T_lo, T_hi)))
        hi = float(np.max(np.maximum(T_lo, T_hi)))
        tol_lo = _REL_TOL * max(1.0, abs(self.t_min))
        tol_hi = _REL_TOL * max(1.0, abs(self.t_max)) if np.isfinite(self.t_max) else 0.0
        bad = []
        if lo < self.t_min - tol_lo:
            bad.append(lo)
        if hi > self.t_max + tol_hi:
            bad.append(hi)
        if not bad:
            return None
        Ts = " and ".join(f"T = {format_number(x)} K" for x in bad)
        return (f"{Ts} outside the validity range {format_number(self.t_min)}-{format_number(self.t_max)} K "
                f"of the {self.form} heat capacity")

    def cp_basis(self, T) -> np.ndarray:
        """Basis of :math:`C_p`: ``cp(T, c) = cp_basis(T) @ c``; shape ``T.shape + (P,)``, J/(mol K) per unit coefficient."""
        T = np.asarray(T, dtype=float)
        return self._blocks(T, self._cp_terms(T))

    def _cached(self, tag: str, T: np.ndarray, build) -> np.ndarray:
        """``build(T)``, cached for small exact temperature grids (scalars and 1-D arrays).

        A Monte Carlo run evaluates the same grid once per chunk; the basis depends on T
        only (not on the coefficients), so it is computed once. Cached arrays are read-only.
        Per-sample temperatures (large arrays) are never cached.
        """
        if T.ndim > 1 or T.size > _CACHE_MAX_POINTS:
            return build(T)
        cache = self.__dict__.setdefault("_basis_cache", {})
        key = (tag, T.shape, T.tobytes())
        B = cache.get(key)
        if B is None:
            if len(cache) >= _CACHE_MAX_ENTRIES:
                cache.clear()
            B = np.ascontiguousarray(build(T))
            B.setflags(write=False)
            cache[key] = B
        return B

    def enthalpy_antiderivative_basis(self, T) -> np.ndarray:
        """Clipped antiderivative G(T) of the :math:`C_p` basis, shape ``T.shape + (P,)``, J/mol.

        Differences of it give the piecewise integral (the constant is arbitrary).
        """
        T = np.asarray(T, dtype=float)
        return self._cached("H", T, lambda t: self._clipped(t, self._h_terms))

    def entropy_antiderivative_basis(self, T) -> np.ndarray:
        """Clipped antiderivative of the :math:`C_p/T` basis, shape ``T.shape + (P,)``, J/(mol K)."""
        T = np.asarray(T, dtype=float)
        return self._cached("S", T, lambda t: self._clipped(t, self._s_terms))

    def _difference_basis(self, tag: str, T1, T2) -> np.ndarray:
        """G(T2) - G(T1) for the antiderivative basis ``tag`` ("H" or "S"), cached for exact grids."""
        T1 = np.asarray(T1, dtype=float)
        T2 = np.asarray(T2, dtype=float)
        fn = self._h_terms if tag == "H" else self._s_terms
        if T1.ndim <= 1 and T2.ndim <= 1 and T1.size * T2.size <= _CACHE_MAX_POINTS:
            both = np.concatenate([np.atleast_1d(T1).ravel(), [np.nan], np.atleast_1d(T2).ravel()])
            shape = np.broadcast_shapes(T1.shape, T2.shape)
            return self._cached("d" + tag + repr((T1.shape, T2.shape)), both,
                                lambda _: (self._clipped(np.broadcast_to(T2, shape), fn)
                                           - self._clipped(np.broadcast_to(T1, shape), fn)))
        return self._clipped(T2, fn) - self._clipped(T1, fn)

    def enthalpy_basis(self, T1, T2) -> np.ndarray:
        """Basis of :math:`\\int_{T_1}^{T_2} C_p\\,dT` (J/mol per unit coefficient), shape broadcast(T1, T2) + (P,)."""
        return self._difference_basis("H", T1, T2)

    def entropy_basis(self, T1, T2) -> np.ndarray:
        """Basis of :math:`\\int_{T_1}^{T_2} C_p/T\\,dT` (J/(mol K) per unit coefficient)."""
        return self._difference_basis("S", T1, T2)

    def _change(self, tag: str, T1, T2, c: np.ndarray) -> np.ndarray:
        """:math:`[G(T_2) - G(T_1)]\\cdot c` with one contraction of the basis difference.

        When T1 and T2 would broadcast to a larger array than either (e.g. per-sample T1
        (N, 1) with a grid T2 (M,)), the two contractions are taken separately so that no
        (N, M, P) basis is built.
        """
        T1 = np.asarray(T1, dtype=float)
        T2 = np.asarray(T2, dtype=float)
        shape = np.broadcast_shapes(T1.shape, T2.shape)
        if shape in (T1.shape, T2.shape):
            return _contract(self._difference_basis(tag, T1, T2), c)
        get = self.enthalpy_antiderivative_basis if tag == "H" else self.entropy_antiderivative_basis
        return _contract(get(T2), c) - _contract(get(T1), c)

    def cp(self, T, coeffs=None, check: bool = True) -> np.ndarray:
        """Isobaric molar heat capacity :math:`C_p(T)`, J/(mol K).

        Parameters
        ----------
        T : array_like
            Temperature, K.
        coeffs : array_like, optional
            Coefficients, shape ``(..., P)``; default the nominal vector.
        check : bool
            Enforce the validity range (ignored when ``allow_extrapolation``).
        """
        self._check(T, check=check)
        return _contract(self.cp_basis(T), self._coeffs(coeffs))

    def enthalpy_antiderivative(self, T, coeffs=None, check: bool = True) -> np.ndarray:
        """Value of the clipped antiderivative :math:`G(T)\\cdot c`, J/mol (arbitrary constant)."""
        self._check(T, check=check)
        return _contract(self.enthalpy_antiderivative_basis(T), self._coeffs(coeffs))

    def entropy_antiderivative(self, T, coeffs=None, check: bool = True) -> np.ndarray:
        """Value of the clipped antiderivative of :math:`C_p/T`, J/(mol K) (arbitrary constant)."""
        self._check(T, check=check)
        return _contract(self.entropy_antiderivative_basis(T), self._coeffs(coeffs))

    def enthalpy_change(self, T1, T2, coeffs=None, check: bool = True) -> np.ndarray:
        """Sensible enthalpy change :math:`\\Delta H = \\int_{T_1}^{T_2} C_p\\,dT`, J/mol.

        Analytic, piecewise over the ranges crossed (Kirchhoff's law integrand; see e.g.
        Atkins' Physical Chemistry, "The temperature dependence of reaction enthalpies").
        Negative when ``T2 < T1``.
        """
        self._check(T1, T2, check=check)
        return self._change("H", T1, T2, self._coeffs(coeffs))

    def entropy_change(self, T1, T2, coeffs=None, check: bool = True) -> np.ndarray:
        """Entropy change on heating :math:`\\Delta S = \\int_{T_1}^{T_2} C_p/T\\,dT`, J/(mol K).

        Analytic, piecewise over the ranges crossed (Atkins' Physical Chemistry, "The
        variation of entropy with temperature").
        """
        self._check(T1, T2, check=check)
        return self._change("S", T1, T2, self._coeffs(coeffs))

    def describe(self) -> str:
        """Short description for reports, e.g. ``"shomate, 2 ranges, 500-6000 K"``."""
        rng = f"{format_number(self.t_min)}-{format_number(self.t_max)} K"
        nr = len(self.ranges)
        return f"{self.kind}, {nr} range{'s' if nr > 1 else ''}, {rng}"

    def __repr__(self) -> str:
        return f"{type(self).__name__}({self.describe()}, P={self.n_parameters})"


class ConstantCp(CpModel):
    """Constant heat capacity :math:`C_p = c`.

    .. math:: \\int_{T_1}^{T_2} C_p\\,dT = c\\,(T_2 - T_1), \\qquad
              \\int_{T_1}^{T_2} \\frac{C_p}{T}\\,dT = c\\,\\ln\\frac{T_2}{T_1}

    (Atkins' Physical Chemistry, Kirchhoff's law with constant :math:`\\Delta C_p`.)

    Parameters
    ----------
    value : float
        :math:`C_p`, J/(mol K).
    t_min, t_max : float
        Validity range, K (default: unlimited).
    allow_extrapolation : bool
        Evaluate outside the range instead of raising.
    """

    kind, form = "constant", "constant"
    _n_terms = 1
    _term_names = ("Cp",)
    _h_monomials = ((1, 1.0),)

    def __init__(self, value: float, t_min: float = 0.0, t_max: float = np.inf, allow_extrapolation: bool = False):
        super().__init__([(t_min, t_max)], [value], allow_extrapolation)

    def _make_names(self):
        return ["Cp"]

    def _cp_terms(self, T):
        return np.ones(T.shape + (1,))

    def _h_terms(self, T):
        return T[..., None]

    def _s_terms(self, T):
        return np.log(T)[..., None]


class PolynomialCp(CpModel):
    """Polynomial heat capacity :math:`C_p = a + bT + cT^2 + dT^3 + e/T^2` (T in K).

    Any subset of the terms may be given; the coefficient vector is always ``[a, b, c, d, e]``
    with absent terms 0 (units J/(mol K), J/(mol K^2), J/(mol K^3), J/(mol K^4), J K/mol).

    .. math::
        \\int C_p\\,dT = aT + \\frac{b}{2}T^2 + \\frac{c}{3}T^3 + \\frac{d}{4}T^4 - \\frac{e}{T},
        \\qquad
        \\int \\frac{C_p}{T}\\,dT = a\\ln T + bT + \\frac{c}{2}T^2 + \\frac{d}{3}T^3 - \\frac{e}{2T^2}

    This is the usual engineering correlation form (e.g. Poling, Prausnitz & O'Connell,
    The Properties of Gases and Liquids, 5th ed.; the :math:`e/T^2` term as in Maier & Kelley,
    J. Am. Chem. Soc. 54 (1932) 3243).

    Parameters
    ----------
    a, b, c, d, e : float
        Coefficients (SI, T in K).
    t_min, t_max : float
        Validity range, K (default unlimited).
    allow_extrapolation : bool
        Evaluate outside the range instead of raising.
    """

    kind, form = "polynomial", "polynomial"
    _n_terms = 5
    _term_names = ("a", "b", "c", "d", "e")
    _h_monomials = ((1, 1.0), (2, 0.5), (3, 1.0 / 3.0), (4, 0.25), (-1, -1.0))

    def __init__(self, a: float = 0.0, b: float = 0.0, c: float = 0.0, d: float = 0.0, e: float = 0.0,
                 t_min: float = 0.0, t_max: float = np.inf, allow_extrapolation: bool = False):
        super().__init__([(t_min, t_max)], [a, b, c, d, e], allow_extrapolation)

    @classmethod
    def from_terms(cls, terms: dict, t_min: float = 0.0, t_max: float = np.inf,
                   allow_extrapolation: bool = False) -> "PolynomialCp":
        """Build from a mapping of the present terms, e.g. ``{"a": 29.1, "c": 1e-6}``."""
        unknown = set(terms) - set(cls._term_names)
        if unknown:
            raise PhysicsError(f"polynomial heat capacity: unknown term(s) {', '.join(sorted(unknown))} "
                               f"(allowed: a, b, c, d, e for a + bT + cT^2 + dT^3 + e/T^2)")
        return cls(**{k: float(v) for k, v in terms.items()}, t_min=t_min, t_max=t_max,
                   allow_extrapolation=allow_extrapolation)

    def _make_names(self):
        return list(self._term_names)

    def _cp_terms(self, T):
        return _powers(T, (0, 1, 2, 3, -2), (1.0, 1.0, 1.0, 1.0, 1.0))

    def _h_terms(self, T):
        return _powers(T, (1, 2, 3, 4, -1), (1.0, 0.5, 1.0 / 3.0, 0.25, -1.0))

    def _s_terms(self, T):
        out = _powers(T, (0, 1, 2, 3, -2), (1.0, 1.0, 0.5, 1.0 / 3.0, -0.5))
        np.log(T, out=out[..., 0])
        return out


class ShomateCp(CpModel):
    """Shomate equation (NIST Chemistry WebBook form), one or more temperature ranges.

    .. math::
        C_p^\\circ = A + Bt + Ct^2 + Dt^3 + E/t^2, \\qquad t = T/(1000\\ \\mathrm{K})

    .. math::
        H^\\circ(T_2) - H^\\circ(T_1) = 1000\\,\\Big[At + \\frac{B}{2}t^2 + \\frac{C}{3}t^3
        + \\frac{D}{4}t^4 - \\frac{E}{t}\\Big]_{t_1}^{t_2}\\ \\mathrm{J/mol}

    .. math::
        S^\\circ(T_2) - S^\\circ(T_1) = \\Big[A\\ln t + Bt + \\frac{C}{2}t^2 + \\frac{D}{3}t^3
        - \\frac{E}{2t^2}\\Big]_{t_1}^{t_2}\\ \\mathrm{J/(mol\\,K)}

    Source: NIST Chemistry WebBook, NIST Standard Reference Database 69 (P. J. Linstrom and
    W. G. Mallard, eds.), gas/condensed phase thermochemistry data, "Shomate Equation"
    (coefficients A-E; F, G, H are not needed for differences). Native units: A in J/(mol K),
    B in J/(mol K kK), C in J/(mol K kK^2), D in J/(mol K kK^3), E in J kK^2/(mol K)
    (kK = 1000 K), exactly as tabulated by the WebBook.

    Parameters
    ----------
    ranges : sequence of (t_lo, t_hi, [A, B, C, D, E])
        Contiguous, increasing temperature ranges in K with their WebBook coefficients.
    allow_extrapolation : bool
        Evaluate outside the overall range with the nearest range instead of raising.
    """

    kind, form = "shomate", "Shomate"
    _n_terms = 5
    _term_names = ("A", "B", "C", "D", "E")
    # 1000·[t, t²/2, t³/3, t⁴/4, -1/t] with t = T/1000, as powers of T
    _h_monomials = ((1, 1.0), (2, 500.0e-6), (3, 1000.0 / 3.0 * 1e-9), (4, 250.0e-12), (-1, -1.0e6))

    def __init__(self, ranges: Sequence[tuple[float, float, Sequence[float]]], allow_extrapolation: bool = False):
        bounds, coeffs = _split_ranges(self.kind, self._term_names, ranges)
        super().__init__(bounds, coeffs, allow_extrapolation)

    def _make_names(self):
        return [f"{n}[{format_number(lo)}-{format_number(hi)} K]" for lo, hi in self.ranges for n in self._term_names]

    def _cp_terms(self, T):
        t = T / 1000.0
        return _powers(t, (0, 1, 2, 3, -2), (1.0, 1.0, 1.0, 1.0, 1.0))

    def _h_terms(self, T):
        t = T / 1000.0
        return _powers(t, (1, 2, 3, 4, -1), (1000.0, 500.0, 1000.0 / 3.0, 250.0, -1000.0))

    def _s_terms(self, T):
        t = T / 1000.0
        out = _powers(t, (0, 1, 2, 3, -2), (1.0, 1.0, 0.5, 1.0 / 3.0, -0.5))
        np.log(T, out=out[..., 0])
        return out


class Nasa7Cp(CpModel):
    """NASA 7-coefficient polynomials, two (or more) temperature ranges.

    Per range, with T in K and :math:`R` the molar gas constant:

    .. math::
        \\frac{C_p^\\circ}{R} = a_1 + a_2T + a_3T^2 + a_4T^3 + a_5T^4

    .. math::
        \\frac{H^\\circ(T)}{RT} = a_1 + \\frac{a_2}{2}T + \\frac{a_3}{3}T^2 + \\frac{a_4}{4}T^3
        + \\frac{a_5}{5}T^4 + \\frac{a_6}{T}

    .. math::
        \\frac{S^\\circ(T)}{R} = a_1\\ln T + a_2T + \\frac{a_3}{2}T^2 + \\frac{a_4}{3}T^3
        + \\frac{a_5}{4}T^4 + a_7

    Sources: Gordon & McBride, NASA RP-1311 (1994); McBride, Zehe & Gordon,
    NASA/TP-2002-211556 (2002); the format used by Cantera (``NasaPoly2``) and Burcat's tables.
    ``a6`` and ``a7`` are integration constants, not heat-capacity coefficients: they put
    :math:`H^\\circ` on the formation scale (elements in their reference states have
    :math:`H^\\circ(298.15\\,K) = 0`) and give the absolute entropy. They enter
    :meth:`absolute_enthalpy` / :meth:`absolute_entropy` only (used where no formation
    enthalpy / standard entropy is given); the integrals of :math:`C_p` ignore them.

    Range boundaries: :meth:`cp`, :meth:`absolute_enthalpy` and :meth:`absolute_entropy` use
    the range containing T, a temperature exactly on a boundary belonging to the LOWER range
    (Cantera's convention). :meth:`enthalpy_change` / :meth:`entropy_change` integrate the
    piecewise :math:`C_p`; they differ from differences of :meth:`absolute_enthalpy` across a
    boundary by the (tiny) mismatch of the two ranges' :math:`H` there (below 0.2 J/mol for
    every species of GRI-Mech 3.0).

    Parameters
    ----------
    ranges : sequence of (t_lo, t_hi, [a1, ..., a7])
        Contiguous, increasing ranges in K with their coefficients (units of R, T in K).
    allow_extrapolation : bool
        Evaluate outside the overall range with the nearest range instead of raising.
    """

    kind, form = "nasa7", "NASA-7"
    _n_terms = 7
    _term_names = ("a1", "a2", "a3", "a4", "a5", "a6", "a7")
    _h_monomials = ((1, R), (2, R / 2.0), (3, R / 3.0), (4, R / 4.0), (5, R / 5.0), None, None)

    def __init__(self, ranges: Sequence[tuple[float, float, Sequence[float]]], allow_extrapolation: bool = False):
        bounds, coeffs = _split_ranges(self.kind, self._term_names, ranges)
        super().__init__(bounds, coeffs, allow_extrapolation)

    @classmethod
    def from_two_ranges(cls, t_low: float, t_mid: float, t_high: float, low: Sequence[float],
                        high: Sequence[float], allow_extrapolation: bool = False) -> "Nasa7Cp":
        """Build from the classic two-range form (low range ``t_low``-``t_mid``, high ``t_mid``-``t_high``)."""
        return cls([(t_low, t_mid, low), (t_mid, t_high, high)], allow_extrapolation)

    def _make_names(self):
        return [f"{n}[{format_number(lo)}-{format_number(hi)} K]" for lo, hi in self.ranges for n in self._term_names]

    def _cp_terms(self, T):
        return _powers(T, (0, 1, 2, 3, 4, None, None), (R, R, R, R, R, 0.0, 0.0))

    def _h_terms(self, T):
        return _powers(T, (1, 2, 3, 4, 5, None, None), (R, R / 2.0, R / 3.0, R / 4.0, R / 5.0, 0.0, 0.0))

    def _s_terms(self, T):
        out = _powers(T, (0, 1, 2, 3, 4, None, None), (R, R, R / 2.0, R / 3.0, R / 4.0, 0.0, 0.0))
        np.log(T, out=out[..., 0])
        out[..., 0] *= R
        return out

    def absolute_enthalpy_basis(self, T) -> np.ndarray:
        """Basis of :math:`H^\\circ(T)` (range containing T), shape ``T.shape + (P,)``."""
        T = np.asarray(T, dtype=float)
        z = np.zeros_like(T)
        terms = R * np.stack([T, T * T / 2.0, T ** 3 / 3.0, T ** 4 / 4.0, T ** 5 / 5.0, np.ones_like(T), z], axis=-1)
        return self._blocks(T, terms)

    def absolute_entropy_basis(self, T) -> np.ndarray:
        """Basis of :math:`S^\\circ(T)` (range containing T), shape ``T.shape + (P,)``."""
        T = np.asarray(T, dtype=float)
        z = np.zeros_like(T)
        terms = R * np.stack([np.log(T), T, T * T / 2.0, T ** 3 / 3.0, T ** 4 / 4.0, z, np.ones_like(T)], axis=-1)
        return self._blocks(T, terms)

    def absolute_enthalpy(self, T, coeffs=None, check: bool = True) -> np.ndarray:
        """Standard molar enthalpy on the formation scale,
        :math:`H^\\circ = RT(a_1 + a_2T/2 + a_3T^2/3 + a_4T^3/4 + a_5T^4/5 + a_6/T)`, J/mol,
        evaluated with the range containing T (McBride, Zehe & Gordon, NASA/TP-2002-211556)."""
        self._check(T, check=check)
        return _contract(self.absolute_enthalpy_basis(T), self._coeffs(coeffs))

    def absolute_entropy(self, T, coeffs=None, check: bool = True) -> np.ndarray:
        """Standard molar entropy,
        :math:`S^\\circ = R(a_1\\ln T + a_2T + a_3T^2/2 + a_4T^3/3 + a_5T^4/4 + a_7)`, J/(mol K),
        evaluated with the range containing T (McBride, Zehe & Gordon, NASA/TP-2002-211556)."""
        self._check(T, check=check)
        return _contract(self.absolute_entropy_basis(T), self._coeffs(coeffs))
