"""Distributions from what a case file states: a relative uncertainty ("2 %", "500 ppm") or a
mapping of a distribution's kind and parameters (GUM §4.3; JCGM 101 §6.4). The distributions
themselves are in :mod:`uqthermo.uq.distributions`.
"""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any


from ..errors import StatisticsError
from .distributions import (Distribution, Exact, LogNormal, Normal, Rectangular, StudentT, Triangular,
                            TruncatedNormal, finite_value, parse_relative)

__all__ = ["from_relative", "distribution_from_mapping"]

def from_relative(estimate: float, relative_u: float | str, distribution: str = "normal",
                  dof: float | None = None) -> Distribution:
    """Distribution whose standard uncertainty is u = r·|x̂| (r from :func:`parse_relative`).

    ``distribution``: ``"normal"`` | ``"lognormal"`` | ``"student-t"`` (needs ``dof``) |
    ``"rectangular"`` | ``"triangular"``; for the last two r is the *relative standard
    uncertainty* and the half-width follows as √3·u resp. √6·u.
    """
    e = finite_value("value", estimate)
    r = parse_relative(relative_u)
    if e == 0.0:
        raise StatisticsError("a relative uncertainty needs a non-zero value")
    u = r * abs(e)
    kind = distribution.lower()
    if kind == "normal":
        return Normal(e, u)
    if kind == "lognormal":
        return LogNormal(e, u)
    if kind in ("student-t", "student_t", "t"):
        if dof is None:
            raise StatisticsError("a Student t distribution needs dof")
        return StudentT(e, u, dof)
    if kind == "rectangular":
        return Rectangular(e, math.sqrt(3.0) * u)
    if kind == "triangular":
        return Triangular(e, math.sqrt(6.0) * u)
    raise StatisticsError(f"unknown distribution {distribution!r} for a relative uncertainty")


def distribution_from_mapping(spec: Mapping[str, Any]) -> Distribution:
    """Build a distribution from a plain mapping (``{"kind": "normal", "estimate": 1, "u": 0.1}``).

    Accepted kinds and keys: ``exact`` (estimate); ``normal`` (estimate, u | U and k |
    relative_u); ``rectangular`` / ``triangular`` (estimate, half_width | lower, upper
    [, mode]); ``lognormal`` (estimate, u); ``student-t`` (estimate, u | scale, dof);
    ``truncated-normal`` (estimate, u, lower, upper). Mainly for tests and tools.
    """
    kind = str(spec.get("kind", "normal")).lower()
    e = spec.get("estimate")
    try:
        if kind == "exact":
            return Exact(e)
        if "relative_u" in spec:
            return from_relative(e, spec["relative_u"], kind, spec.get("dof"))
        if kind == "normal":
            if "U" in spec:
                return Normal.from_expanded(e, spec["U"], spec.get("k", 2.0))
            return Normal(e, spec["u"])
        if kind in ("rectangular", "triangular"):
            cls = Rectangular if kind == "rectangular" else Triangular
            if "half_width" in spec:
                return cls(e, spec["half_width"])
            if kind == "triangular":
                return Triangular.from_bounds(spec["lower"], spec["upper"], spec.get("mode"))
            return Rectangular.from_bounds(spec["lower"], spec["upper"])
        if kind == "lognormal":
            return LogNormal(e, spec["u"])
        if kind in ("student-t", "student_t", "t"):
            if "scale" in spec:
                return StudentT.from_scale(e, spec["scale"], spec["dof"])
            return StudentT(e, spec["u"], spec["dof"])
        if kind in ("truncated-normal", "truncated_normal"):
            return TruncatedNormal(e, spec["u"], spec.get("lower"), spec.get("upper"))
    except KeyError as exc:
        raise StatisticsError(f"{kind} distribution needs {exc.args[0]!r}") from None
    raise StatisticsError(f"unknown distribution kind {kind!r}")
