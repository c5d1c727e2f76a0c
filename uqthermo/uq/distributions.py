"""Probability distributions assigned to input quantities (GUM §4.3, JCGM 101 §6.4).

Every distribution exposes the same small interface:

* ``estimate`` -- the best estimate x̂ used by the linear method. It is always the
  **expectation** of the assigned distribution (GUM 4.1.4, JCGM 101 §5.1.1 / 6.1),
  so for a truncated normal or an asymmetric triangular it differs from the stated
  location parameter.
* ``std`` -- the standard uncertainty u(x), the standard deviation of the distribution.
* ``dof`` -- degrees of freedom for the Welch–Satterthwaite formula (``inf`` except for
  the Student t).
* ``ppf(p)`` -- inverse cumulative distribution function, vectorised over ``p``.
* ``cdf(x)`` and ``isf(q)`` (inverse survival function, accurate in the upper tail).
* ``describe()`` -- a short human-readable text for reports.
* ``scaled(factor)`` -- the same kind of distribution with u multiplied by ``factor``
  (0 gives :class:`Exact`), used for what-if and data-purchase planning.

Invalid parameters (NaN, infinite, negative or zero uncertainty, non-positive widths,
too few degrees of freedom) raise :class:`~uqthermo.errors.StatisticsError`.
"""

from __future__ import annotations

import math
import re
from typing import Any

import numpy as np
from scipy import special, stats

from ..errors import StatisticsError

__all__ = [
    "Distribution",
    "Exact",
    "Normal",
    "Rectangular",
    "Triangular",
    "LogNormal",
    "StudentT",
    "TruncatedNormal",
    "parse_relative",
]


def finite_value(name: str, value: Any) -> float:
    try:
        v = float(value)
    except (TypeError, ValueError):
        raise StatisticsError(f"{name} must be a number, got {value!r}") from None
    if not math.isfinite(v):
        raise StatisticsError(f"{name} must be finite, got {v}")
    return v


def _positive(name: str, value: Any) -> float:
    v = finite_value(name, value)
    if v <= 0.0:
        raise StatisticsError(
            f"{name} must be positive, got {v:g} (use an exact value for a quantity without uncertainty)"
        )
    return v


def _g(x: float) -> str:
    return f"{x:.6g}"


class Distribution:
    """Base class: the probability distribution assigned to one input quantity.

    Subclasses set ``estimate`` (expectation), ``std`` (standard deviation = standard
    uncertainty u(x)) and ``dof`` and implement :meth:`ppf`. Default implementations of
    :meth:`isf` and :meth:`from_standard_normal` are provided; subclasses override them
    where an exact or more accurate form exists.
    """

    kind: str = "distribution"
    estimate: float
    std: float
    dof: float = math.inf

    # -- interface -------------------------------------------------------------------------
    def ppf(self, p: np.ndarray) -> np.ndarray:
        """Inverse cumulative distribution function G⁻¹(p), vectorised; p in [0, 1]."""
        raise NotImplementedError

    def cdf(self, x: np.ndarray) -> np.ndarray:
        """Cumulative distribution function G(x), vectorised."""
        raise NotImplementedError

    def ppf_at(self, p: float) -> float:
        """G⁻¹(p) at one probability, as a float."""
        return float(np.asarray(self.ppf(np.array([p])), dtype=float).reshape(-1)[0])

    def cdf_at(self, x: float) -> float:
        """G(x) at one value, as a float."""
        return float(np.asarray(self.cdf(np.array([x])), dtype=float).reshape(-1)[0])

    def isf(self, q: np.ndarray) -> np.ndarray:
        """Inverse survival function: the x with P(X > x) = q (accurate for small q)."""
        return self.ppf(1.0 - np.asarray(q, dtype=float))

    def from_standard_normal(self, z: np.ndarray) -> np.ndarray:
        """Map standard normal deviates z to this distribution: x = G⁻¹(Φ(z)).

        Used by the Gaussian copula (see :meth:`uqthermo.uq.inputs.InputSet.from_uniform`).
        The lower half uses ``ppf(Φ(z))`` and the upper half ``isf(Φ(−z))`` so that both
        tails keep full floating-point resolution.
        """
        z = np.asarray(z, dtype=float)
        out = np.empty_like(z)
        low = z <= 0.0
        if np.any(low):
            out[low] = self.ppf(special.ndtr(z[low]))
        high = ~low
        if np.any(high):
            out[high] = self.isf(special.ndtr(-z[high]))
        return out

    def describe(self) -> str:
        """Short text for reports, e.g. ``"rectangular, half-width 0.5"``."""
        raise NotImplementedError

    def scaled(self, factor: float) -> Distribution:
        """The same kind of distribution with its standard uncertainty multiplied by ``factor``.

        ``factor = 0`` returns :class:`Exact` at the estimate. Used by what-if studies.
        """
        f = finite_value("uncertainty scale factor", factor)
        if f < 0:
            raise StatisticsError(f"uncertainty scale factor must be >= 0, got {f:g}")
        if f == 0.0 or self.std == 0.0:
            return Exact(self.estimate)
        if f == 1.0:
            return self
        return self._scaled(f)

    def _scaled(self, factor: float) -> Distribution:
        raise NotImplementedError

    @property
    def parameters(self) -> dict[str, float]:
        """The defining parameters (for results files)."""
        return {}

    @property
    def is_exact(self) -> bool:
        """True when the quantity carries no uncertainty (std = 0)."""
        return self.std == 0.0

    def __repr__(self) -> str:
        args = ", ".join(f"{k}={v!r}" for k, v in self.parameters.items())
        return f"{type(self).__name__}({args})"

    def __eq__(self, other: object) -> bool:
        return type(self) is type(other) and self.parameters == other.parameters  # type: ignore[attr-defined]

    def __hash__(self) -> int:
        return hash((type(self).__name__, tuple(self.parameters.items())))


class Exact(Distribution):
    """A quantity known exactly: X = x̂ with probability one (std 0, dof ∞)."""

    kind = "exact"

    def __init__(self, estimate: float):
        self.estimate = finite_value("value", estimate)
        self.std = 0.0
        self.dof = math.inf

    def ppf(self, p):
        return np.full(np.shape(p), self.estimate, dtype=float)

    def isf(self, q):
        return np.full(np.shape(q), self.estimate, dtype=float)

    def from_standard_normal(self, z):
        return np.full(np.shape(z), self.estimate, dtype=float)

    def cdf(self, x):
        return (np.asarray(x, dtype=float) >= self.estimate).astype(float)

    def describe(self) -> str:
        return "exact"

    def _scaled(self, factor):
        return self

    @property
    def parameters(self):
        return {"estimate": self.estimate}


class Normal(Distribution):
    """Gaussian N(x̂, u²) (GUM 4.3.4; JCGM 101 §6.4.7).

    Parameters
    ----------
    estimate : float
        Expectation x̂.
    u : float
        Standard uncertainty u(x) > 0 (same unit as ``estimate``).
    """

    kind = "normal"

    def __init__(self, estimate: float, u: float):
        self.estimate = finite_value("value", estimate)
        self.std = _positive("standard uncertainty u", u)
        self.dof = math.inf

    @classmethod
    def from_expanded(cls, estimate: float, U: float, k: float) -> Normal:
        """Normal from an expanded uncertainty: u = U / k (GUM 4.3.3 and 6.2.1)."""
        U = _positive("expanded uncertainty U", U)
        k = _positive("coverage factor k", k)
        return cls(estimate, U / k)

    @classmethod
    def relative(cls, estimate: float, relative_u: float | str) -> Normal:
        """Normal with u = r·|x̂|, ``relative_u`` a fraction or text like ``"2 %"``."""
        e = finite_value("value", estimate)
        r = parse_relative(relative_u)
        if e == 0.0:
            raise StatisticsError("a relative uncertainty needs a non-zero value")
        return cls(e, r * abs(e))

    def ppf(self, p):
        return self.estimate + self.std * special.ndtri(np.asarray(p, dtype=float))

    def isf(self, q):
        return self.estimate - self.std * special.ndtri(np.asarray(q, dtype=float))

    def from_standard_normal(self, z):
        return self.estimate + self.std * np.asarray(z, dtype=float)

    def cdf(self, x):
        return special.ndtr((np.asarray(x, dtype=float) - self.estimate) / self.std)

    def describe(self) -> str:
        return f"normal, u {_g(self.std)}"

    def _scaled(self, factor):
        return Normal(self.estimate, self.std * factor)

    @property
    def parameters(self):
        return {"estimate": self.estimate, "u": self.std}


class Rectangular(Distribution):
    """Rectangular (uniform) distribution R(a, b) (GUM 4.3.7; JCGM 101 §6.4.2).

    Expectation (a + b)/2, standard uncertainty (b − a)/√12 = half-width/√3.

    Parameters
    ----------
    estimate : float
        Midpoint of the interval.
    half_width : float
        Half-width of the interval (> 0).
    """

    kind = "rectangular"

    def __init__(self, estimate: float, half_width: float):
        self.estimate = finite_value("value", estimate)
        self.half_width = _positive("half-width", half_width)
        self.lower = self.estimate - self.half_width
        self.upper = self.estimate + self.half_width
        self.std = self.half_width / math.sqrt(3.0)
        self.dof = math.inf

    @classmethod
    def from_bounds(cls, lower: float, upper: float) -> Rectangular:
        """Rectangular over [lower, upper] (lower < upper)."""
        lo, hi = finite_value("lower bound", lower), finite_value("upper bound", upper)
        if not hi > lo:
            raise StatisticsError(f"upper bound {hi:g} must exceed lower bound {lo:g}")
        return cls(0.5 * (lo + hi), 0.5 * (hi - lo))

    def ppf(self, p):
        return self.lower + (2.0 * self.half_width) * np.asarray(p, dtype=float)

    def isf(self, q):
        return self.upper - (2.0 * self.half_width) * np.asarray(q, dtype=float)

    def from_standard_normal(self, z):
        """G⁻¹(Φ(z)) = x̂ + a·erf(z/√2), as 2Φ(z) − 1 = erf(z/√2) (Abramowitz & Stegun 26.2.29):
        one erf instead of two halves through Φ; near the bounds exact to below ulp(a)."""
        return self.estimate + self.half_width * special.erf(np.asarray(z, dtype=float) * np.sqrt(0.5))

    def cdf(self, x):
        return np.clip((np.asarray(x, dtype=float) - self.lower) / (2.0 * self.half_width), 0.0, 1.0)

    def describe(self) -> str:
        return f"rectangular, half-width {_g(self.half_width)}"

    def _scaled(self, factor):
        return Rectangular(self.estimate, self.half_width * factor)

    @property
    def parameters(self):
        return {"estimate": self.estimate, "half_width": self.half_width}


class Triangular(Distribution):
    """Triangular distribution (GUM 4.3.9; JCGM 101 §6.4.5; general form: JCGM 101 6.4.5 note).

    Symmetric form ``Triangular(estimate, half_width)``: support [x̂ − a, x̂ + a], mode x̂,
    u = a/√6. General form via :meth:`from_bounds` (lower a, mode c, upper b):
    expectation (a + b + c)/3 and variance (a² + b² + c² − ab − ac − bc)/18.
    """

    kind = "triangular"

    def __init__(self, estimate: float, half_width: float):
        e = finite_value("value", estimate)
        a = _positive("half-width", half_width)
        self._set(e - a, e, e + a)

    def _set(self, lower: float, mode: float, upper: float) -> None:
        self.lower, self.mode, self.upper = lower, mode, upper
        self.estimate = (lower + mode + upper) / 3.0
        var = (lower**2 + mode**2 + upper**2 - lower * mode - lower * upper - mode * upper) / 18.0
        self.std = math.sqrt(max(var, 0.0))
        self.dof = math.inf
        self.half_width = 0.5 * (upper - lower)
        self._fc = (mode - lower) / (upper - lower)  # CDF at the mode

    @property
    def symmetric(self) -> bool:
        return math.isclose(self.mode - self.lower, self.upper - self.mode, rel_tol=1e-12, abs_tol=0.0)

    @classmethod
    def from_bounds(cls, lower: float, upper: float, mode: float | None = None) -> Triangular:
        """Triangular on [lower, upper] with the given mode (default: the midpoint)."""
        lo, hi = finite_value("lower bound", lower), finite_value("upper bound", upper)
        if not hi > lo:
            raise StatisticsError(f"upper bound {hi:g} must exceed lower bound {lo:g}")
        c = 0.5 * (lo + hi) if mode is None else finite_value("mode", mode)
        if not lo <= c <= hi:
            raise StatisticsError(f"mode {c:g} must lie within [{lo:g}, {hi:g}]")
        obj = cls.__new__(cls)
        obj._set(lo, c, hi)
        return obj

    def ppf(self, p):
        p = np.asarray(p, dtype=float)
        a, b, c, fc = self.lower, self.upper, self.mode, self._fc
        w = b - a
        left = a + np.sqrt(np.clip(p, 0.0, None) * w * (c - a))
        right = b - np.sqrt(np.clip(1.0 - p, 0.0, None) * w * (b - c))
        return np.where(p <= fc, left, right)

    def isf(self, q):
        q = np.asarray(q, dtype=float)
        a, b, c, fc = self.lower, self.upper, self.mode, self._fc
        w = b - a
        right = b - np.sqrt(np.clip(q, 0.0, None) * w * (b - c))
        left = a + np.sqrt(np.clip(1.0 - q, 0.0, None) * w * (c - a))
        return np.where(q <= 1.0 - fc, right, left)

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        a, b, c = self.lower, self.upper, self.mode
        w = b - a
        with np.errstate(divide="ignore", invalid="ignore"):
            left = (x - a) ** 2 / (w * (c - a)) if c > a else np.zeros_like(x)
            right = 1.0 - (b - x) ** 2 / (w * (b - c)) if b > c else np.ones_like(x)
        out = np.where(x <= c, left, right)
        return np.clip(np.where(x <= a, 0.0, np.where(x >= b, 1.0, out)), 0.0, 1.0)

    def describe(self) -> str:
        if self.symmetric:
            return f"triangular, half-width {_g(self.half_width)}"
        return f"triangular on [{_g(self.lower)}, {_g(self.upper)}], mode {_g(self.mode)}"

    def _scaled(self, factor):
        e = self.estimate
        return Triangular.from_bounds(
            e + factor * (self.lower - e), e + factor * (self.upper - e), e + factor * (self.mode - e)
        )

    @property
    def parameters(self):
        return {"lower": self.lower, "mode": self.mode, "upper": self.upper}


class LogNormal(Distribution):
    """Lognormal distribution for a positive quantity, given by its mean and standard deviation.

    ``estimate`` is the **expectation** E[X] = x̂ and ``u`` the standard deviation; the
    parameters of ln X ~ N(μ, σ²) follow from the moment relations
    σ² = ln(1 + (u/x̂)²), μ = ln x̂ − σ²/2 (e.g. Johnson, Kotz & Balakrishnan,
    *Continuous Univariate Distributions*, vol. 1, ch. 14). The median is exp(μ) < x̂.

    Parameters
    ----------
    estimate : float
        Expectation (> 0).
    u : float
        Standard uncertainty (> 0).
    """

    kind = "lognormal"

    def __init__(self, estimate: float, u: float):
        e = finite_value("value", estimate)
        if e <= 0.0:
            raise StatisticsError(f"a lognormal quantity must have a positive value, got {e:g}")
        self.estimate = e
        self.std = _positive("standard uncertainty u", u)
        self.dof = math.inf
        s2 = math.log1p((self.std / e) ** 2)
        self.sigma_log = math.sqrt(s2)
        self.mu_log = math.log(e) - 0.5 * s2

    def ppf(self, p):
        return np.exp(self.mu_log + self.sigma_log * special.ndtri(np.asarray(p, dtype=float)))

    def isf(self, q):
        return np.exp(self.mu_log - self.sigma_log * special.ndtri(np.asarray(q, dtype=float)))

    def from_standard_normal(self, z):
        return np.exp(self.mu_log + self.sigma_log * np.asarray(z, dtype=float))

    def cdf(self, x):
        x = np.asarray(x, dtype=float)
        with np.errstate(divide="ignore", invalid="ignore"):
            z = (np.log(np.where(x > 0, x, 1.0)) - self.mu_log) / self.sigma_log
        return np.where(x > 0, special.ndtr(z), 0.0)

    def describe(self) -> str:
        return f"lognormal, u {_g(self.std)}"

    def _scaled(self, factor):
        return LogNormal(self.estimate, self.std * factor)

    @property
    def parameters(self):
        return {"estimate": self.estimate, "u": self.std}


class StudentT(Distribution):
    """Scaled and shifted Student t distribution t_ν(x̂, s²) (JCGM 101 §6.4.9).

    JCGM 101 §6.4.9 parametrises the distribution by the location x̂, the **scale** s
    (for a Type A evaluation from n indications: s = s(x̄) = sample std/√n, ν = n − 1)
    and the degrees of freedom ν; its standard deviation is u(x) = s·√(ν/(ν − 2)), ν > 2.

    The constructor takes the *standard uncertainty* ``u`` (the standard deviation of
    the assigned distribution), so s = u·√((ν − 2)/ν) and ν must exceed 2. Use
    :meth:`from_scale` to give the JCGM 101 scale s directly.

    The linear method uses u = ``std`` with ``dof`` = ν in the Welch–Satterthwaite formula.
    (GUM Type A practice would pair s with ν; JCGM 101 §6.4.9 notes the difference.)

    Parameters
    ----------
    estimate : float
        Location (= expectation) x̂.
    u : float
        Standard uncertainty (> 0).
    dof : float
        Degrees of freedom ν (> 2).
    """

    kind = "student-t"

    def __init__(self, estimate: float, u: float, dof: float):
        e = finite_value("value", estimate)
        u = _positive("standard uncertainty u", u)
        nu = _finite_dof(dof)
        if nu <= 2.0:
            raise StatisticsError(
                f"a Student t given by its standard uncertainty needs dof > 2 (got {nu:g}): "
                "its variance is infinite otherwise"
            )
        self._init(e, u * math.sqrt((nu - 2.0) / nu), nu)

    def _init(self, estimate: float, scale: float, dof: float) -> None:
        self.estimate = estimate
        self.scale = scale
        self.dof = dof
        self.std = scale * math.sqrt(dof / (dof - 2.0)) if dof > 2.0 else math.inf

    @classmethod
    def from_scale(cls, estimate: float, scale: float, dof: float) -> StudentT:
        """t_ν(x̂, s²) from the JCGM 101 §6.4.9 scale s (any ν > 0; u(x) = s√(ν/(ν−2)), infinite for ν ≤ 2)."""
        e = finite_value("value", estimate)
        s = _positive("scale s", scale)
        nu = _finite_dof(dof)
        obj = cls.__new__(cls)
        obj._init(e, s, nu)
        return obj

    def ppf(self, p):
        return self.estimate + self.scale * special.stdtrit(self.dof, np.asarray(p, dtype=float))

    def isf(self, q):
        return self.estimate - self.scale * special.stdtrit(self.dof, np.asarray(q, dtype=float))

    def cdf(self, x):
        return special.stdtr(self.dof, (np.asarray(x, dtype=float) - self.estimate) / self.scale)

    def describe(self) -> str:
        return f"student-t, u {_g(self.std)}, dof {_g(self.dof)}"

    def _scaled(self, factor):
        return StudentT.from_scale(self.estimate, self.scale * factor, self.dof)

    @property
    def parameters(self):
        return {"estimate": self.estimate, "scale": self.scale, "dof": self.dof}


def _finite_dof(dof: Any) -> float:
    try:
        nu = float(dof)
    except (TypeError, ValueError):
        raise StatisticsError(f"degrees of freedom must be a number, got {dof!r}") from None
    if math.isnan(nu) or nu <= 0.0:
        raise StatisticsError(f"degrees of freedom must be positive, got {nu:g}")
    if math.isinf(nu):
        raise StatisticsError("infinite degrees of freedom: use a normal distribution instead")
    return nu


class TruncatedNormal(Distribution):
    """Normal N(μ, σ²) truncated to [lower, upper], for quantities that must stay physical.

    The stated ``value`` and ``u`` are the location μ and scale σ of the *parent* normal.
    ``estimate`` and ``std`` are the expectation and standard deviation of the truncated
    distribution (Johnson, Kotz & Balakrishnan, vol. 1, §10.1): with α = (a − μ)/σ,
    β = (b − μ)/σ and Z = Φ(β) − Φ(α),
    E[X] = μ + σ(φ(α) − φ(β))/Z and Var[X] = σ²[1 + (αφ(α) − βφ(β))/Z − ((φ(α) − φ(β))/Z)²].

    Parameters
    ----------
    estimate : float
        Location μ of the parent normal.
    u : float
        Scale σ of the parent normal (> 0).
    lower, upper : float or None
        Truncation bounds (``None`` = unbounded); at least one must be finite and
        lower < upper.
    """

    kind = "truncated-normal"

    def __init__(self, estimate: float, u: float, lower: float | None = None, upper: float | None = None):
        mu = finite_value("value", estimate)
        sigma = _positive("standard uncertainty u", u)
        lo = -math.inf if lower is None else float(lower)
        hi = math.inf if upper is None else float(upper)
        if math.isnan(lo) or math.isnan(hi):
            raise StatisticsError("truncation bounds must not be NaN")
        if not hi > lo:
            raise StatisticsError(f"upper bound {hi:g} must exceed lower bound {lo:g}")
        self.location, self.scale, self.lower, self.upper = mu, sigma, lo, hi
        self._a, self._b = (lo - mu) / sigma, (hi - mu) / sigma
        self._dist = stats.truncnorm(self._a, self._b, loc=mu, scale=sigma)
        mean, var = self._dist.stats(moments="mv")
        mean, var = float(mean), float(var)
        if not (math.isfinite(mean) and math.isfinite(var) and var > 0.0):
            raise StatisticsError(
                f"truncation [{lo:g}, {hi:g}] leaves no probability near value {mu:g} with u {sigma:g}"
            )
        self.estimate = mean
        self.std = math.sqrt(var)
        self.dof = math.inf

        # retained probability mass, in the numerically better tail form
        a, b = self._a, self._b
        self._mass = float(special.ndtr(-a) - special.ndtr(-b)) if a > 0 else float(special.ndtr(b) - special.ndtr(a))

    def ppf(self, p):
        """Inverse CDF: x = μ + σ Φ⁻¹(Φ(α) + p Z) (mirrored form when α > 0 for accuracy)."""
        p = np.asarray(p, dtype=float)
        if self._mass < 1e-8:
            return self._dist.ppf(p)
        a, mu, s, z = self._a, self.location, self.scale, self._mass
        if a <= 0:
            x = mu + s * special.ndtri(special.ndtr(a) + p * z)
        else:
            x = mu - s * special.ndtri(special.ndtr(-a) - p * z)
        return np.clip(x, self.lower, self.upper)

    def isf(self, q):
        """Inverse survival function, accurate for small q (mirrored form of :meth:`ppf`)."""
        q = np.asarray(q, dtype=float)
        if self._mass < 1e-8:
            return self._dist.isf(q)
        b, mu, s, z = self._b, self.location, self.scale, self._mass
        if b >= 0:
            x = mu - s * special.ndtri(special.ndtr(-b) + q * z)
        else:
            x = mu + s * special.ndtri(special.ndtr(b) - q * z)
        return np.clip(x, self.lower, self.upper)

    def cdf(self, x):
        return self._dist.cdf(np.asarray(x, dtype=float))

    def describe(self) -> str:
        bounds = []
        if math.isfinite(self.lower):
            bounds.append(f">= {_g(self.lower)}")
        if math.isfinite(self.upper):
            bounds.append(f"<= {_g(self.upper)}")
        return f"truncated normal, u {_g(self.scale)} (parent), " + " and ".join(bounds)

    def _scaled(self, factor):
        return TruncatedNormal(self.location, self.scale * factor, self.lower, self.upper)

    @property
    def parameters(self):
        return {"location": self.location, "scale": self.scale, "lower": self.lower, "upper": self.upper}


# --------------------------------------------------------------------------------------------
# relative uncertainties
# --------------------------------------------------------------------------------------------


_REL_UNITS = {"%": 1e-2, "percent": 1e-2, "‰": 1e-3, "permille": 1e-3, "ppm": 1e-6}
_REL_RE = re.compile(r"^\s*([-+]?(?:\d+\.?\d*|\.\d+)(?:[eE][-+]?\d+)?)\s*(%|percent|‰|permille|ppm)?\s*$")


def parse_relative(text: float | str) -> float:
    """Parse a relative uncertainty: ``"2 %"`` → 0.02, ``"500 ppm"`` → 5e-4, ``0.01`` → 0.01.

    A bare number (or numeric string without a unit) is taken as a fraction.
    """
    if isinstance(text, (int, float, np.floating, np.integer)) and not isinstance(text, bool):
        r = float(text)
    elif isinstance(text, str):
        m = _REL_RE.match(text)
        if not m:
            raise StatisticsError(f"cannot read relative uncertainty {text!r} (write e.g. \"2 %\")")
        r = float(m.group(1)) * _REL_UNITS.get(m.group(2) or "", 1.0)
    else:
        raise StatisticsError(f"relative uncertainty must be a number or text like \"2 %\", got {text!r}")
    if not math.isfinite(r) or r <= 0.0:
        raise StatisticsError(f"relative uncertainty must be positive, got {text!r}")
    return r
