"""Build the statistics layer's distributions from what a case file states.

A thin seam between the case vocabulary (contract §2) and :mod:`uqthermo.uq.distributions`,
so the case readers do not depend on the constructors' exact signatures.
"""

from __future__ import annotations

from ...uq import distributions as _d


def exact(value: float):
    """A certain value (no uncertainty)."""
    return _d.Exact(value)


def normal(value: float, u: float):
    """Normal with standard uncertainty ``u`` (GUM 4.3.4; JCGM 101 6.4.7)."""
    return _d.Normal(value, u)


def rectangular(value: float, half_width: float):
    """Rectangular of half-width ``a``: u = a/√3 (GUM 4.3.7; JCGM 101 6.4.2)."""
    return _d.Rectangular(value, half_width)


def triangular(value: float, half_width: float):
    """Symmetric triangular of half-width ``a``: u = a/√6 (GUM 4.3.9; JCGM 101 6.4.5)."""
    return _d.Triangular(value, half_width)


def lognormal(value: float, u: float):
    """Lognormal with mean ``value`` and standard deviation ``u`` (positive quantities)."""
    return _d.LogNormal(value, u)


def student_t(value: float, u: float, dof: float):
    """Scaled and shifted t with standard uncertainty ``u`` and ``dof`` degrees of freedom (JCGM 101 6.4.9)."""
    return _d.StudentT(value, u, dof)


def truncated_normal(value: float, u: float, lower: float, upper: float):
    """Normal N(value, u²) truncated to [lower, upper] (a physical bound)."""
    return _d.TruncatedNormal(value, u, lower, upper)
