"""Model-agnostic statistics layer: input distributions, correlations, sampling,
GUM linear propagation, JCGM 101 Monte Carlo and its validation.

This package never imports the physics (``uqthermo.thermo``), the case layer or the
report layer: models are plain vectorised callables ``f(X[N, D]) -> Y[N, M]``.
"""

from .distributions import (
    Distribution,
    Exact,
    LogNormal,
    Normal,
    Rectangular,
    StudentT,
    Triangular,
    TruncatedNormal,
)
from .distribution_specs import distribution_from_mapping, from_relative
from .distributions import parse_relative
from .correlation import check_correlation
from .inputs import Datum, InputSet, InputVariable
from .linear import LinearResult, coverage_factor, propagate_linear, welch_satterthwaite
from .montecarlo import adaptive_batch_size, propagate_monte_carlo
from .montecarlo_result import MonteCarloResult
from .sampling import METHODS as SAMPLING_METHODS
from .sampling import UniformStream, iter_uniform_chunks, uniform_sample
from .stats import BinnedCDF, Moments, numerical_tolerance
from .validation import ValidationResult, validate_linear

__all__ = [
    "Distribution", "Exact", "Normal", "Rectangular", "Triangular", "LogNormal", "StudentT",
    "TruncatedNormal", "parse_relative", "from_relative", "distribution_from_mapping",
    "InputVariable", "InputSet", "Datum", "check_correlation",
    "uniform_sample", "iter_uniform_chunks", "UniformStream", "SAMPLING_METHODS",
    "propagate_linear", "LinearResult", "coverage_factor", "welch_satterthwaite",
    "propagate_monte_carlo", "MonteCarloResult", "adaptive_batch_size",
    "validate_linear", "ValidationResult",
    "numerical_tolerance", "Moments", "BinnedCDF",
]
