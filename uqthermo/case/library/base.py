"""Shared types of the data library: provenance, looked-up values and curves, errors.

Owns :class:`DatasetInfo` (what a dataset is and what it says about uncertainties),
:class:`LibraryValue` and :class:`LibraryCp` (a value or a heat-capacity curve taken from one
named dataset), :class:`Match` (a species found by a search), :class:`LibraryLookupError`, and the
small helpers every source module uses (the installed ``chemicals`` version, NaN handling,
phase symbols). The data themselves live in one module per source family (see
:mod:`uqthermo.case.library`).
"""

from __future__ import annotations

import functools
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

from uqthermo.errors import InputError

T_REF = 298.15
"""Reference temperature of the standard-state tables, K."""

PHASES = {"g": "g", "gas": "g", "l": "l", "liq": "l", "liquid": "l", "s": "s", "cr": "s", "solid": "s",
          "c": "s"}
"""Phase spellings accepted in look-ups -> library phase symbol (g, l, s)."""


def nan_to_none(x):
    """float(x), or None for NaN, inf and non-numbers."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return None if not np.isfinite(v) else v


@dataclass(frozen=True)
class DatasetInfo:
    """Provenance of a dataset.

    Attributes
    ----------
    key : str
        Name used in case files (``library = "ATcT"``).
    title : str
    version : str
    citation : str
    quantities : dict
        quantity -> phases available.
    uncertainty : str
        What the dataset states about uncertainties and how they are converted.
    """

    key: str
    title: str
    version: str
    citation: str
    quantities: dict
    uncertainty: str

    @property
    def label(self) -> str:
        """e.g. ``"Active Thermochemical Tables (ATcT) 1.112, via chemicals 1.5.2"``."""
        return f"{self.title} ({self.key}) {self.version}, via chemicals {chemicals_version()}"



@functools.lru_cache(maxsize=1)
def chemicals_version() -> str:
    try:
        import chemicals

        return str(chemicals.__version__)
    except Exception:  # pragma: no cover - chemicals is a dependency
        return "?"



@dataclass(frozen=True)
class Match:
    """A species found in the library.

    Attributes
    ----------
    cas : str
    name : str or None
    formula : str or None
        Hill formula.
    datasets : dict
        quantity -> {dataset key -> phases}, e.g.
        ``{"formation_enthalpy": {"ATcT": ("g", "l"), "JANAF": ("g",)}, ...}``.
    """

    cas: str
    name: str | None
    formula: str | None
    datasets: dict = field(default_factory=dict)

    def describe(self) -> str:
        """One line: ``CAS  name  formula  quantity: dataset (phases); ...``."""
        parts = []
        for q, dd in self.datasets.items():
            parts.append(f"{q}: " + ", ".join(f"{d} ({', '.join(ph)})" for d, ph in dd.items()))
        return f"{self.cas:<12} {self.name or '?':<28} {self.formula or '?':<10} " + "; ".join(parts)


class LibraryLookupError(InputError):
    """A library look-up failed (unknown species, missing phase, ambiguous formula).

    Attributes
    ----------
    candidates : list of Match
        The species an ambiguous identifier matched (empty otherwise).
    """

    def __init__(self, message: str, candidates: Iterable[Match] = (), key: str | None = None):
        super().__init__(message, key=key)
        self.candidates = list(candidates)


@dataclass(frozen=True)
class LibraryValue:
    """A scalar taken from a dataset.

    Attributes
    ----------
    quantity : str
        ``"formation_enthalpy"``, ``"standard_entropy"`` or ``"formation_gibbs_energy"``.
    value : float
        J/mol (enthalpy, Gibbs energy) or J/(mol K) (entropy), at ``temperature``.
    u : float or None
        Standard uncertainty in the same unit; None where the dataset states none.
    unit : str
    dataset : str
        Dataset key (``"ATcT"``, ``"JANAF"``).
    version : str
        Dataset version (``"1.112"``, ``"4th edition (1998)"``).
    dataset_title : str
    cas, name, formula : str or None
        Identification (formula in Hill order).
    phase : str
        ``"g"``, ``"l"`` or ``"s"``.
    temperature : float
        Reference temperature, K (298.15).
    expanded_uncertainty : float or None
        The value as published (ATcT ±), if any.
    coverage_factor : float or None
        k used for u = U/k.
    note : str
        How the uncertainty was obtained or why it is missing.
    """

    quantity: str
    value: float
    u: float | None
    unit: str
    dataset: str
    version: str
    dataset_title: str
    cas: str
    name: str | None
    formula: str | None
    phase: str
    temperature: float = T_REF
    expanded_uncertainty: float | None = None
    coverage_factor: float | None = None
    note: str = ""

    @property
    def provenance(self) -> str:
        """Text for the report, e.g. ``"Active Thermochemical Tables (ATcT) 1.112, via chemicals
        1.5.2: Methane (CAS 74-82-8), g"``."""
        who = f"{self.name or self.formula or ''} (CAS {self.cas}), {self.phase}"
        return f"{self.dataset_title} ({self.dataset}) {self.version}, via chemicals {chemicals_version()}: {who}"


@dataclass(frozen=True)
class LibraryCp:
    """A heat-capacity curve taken from a dataset, in the case file's Shomate form.

    Attributes
    ----------
    model : str
        ``"shomate"``: Cp = A + B t + C t² + D t³ + E/t², t = T/1000 K, J/(mol K).
    ranges : list of (T_lo, T_hi, [A, B, C, D, E])
        Temperature ranges in K with their NIST-form coefficients.
    dataset, version, dataset_title : str
    cas, name, formula : str or None
    phase : str
    u : None
        Neither dataset states coefficient uncertainties.
    note : str
        Origin (for JANAF: the fit made from the table and its maximum deviation).
    points : tuple of ndarray or None
        JANAF only: the tabulated (T K, Cp J/(mol K)) used.
    """

    model: str
    ranges: list
    dataset: str
    version: str
    dataset_title: str
    cas: str
    name: str | None
    formula: str | None
    phase: str
    u: None = None
    note: str = ""
    points: tuple | None = None

    @property
    def t_min(self) -> float:
        return float(min(r[0] for r in self.ranges))

    @property
    def t_max(self) -> float:
        return float(max(r[1] for r in self.ranges))

    @property
    def provenance(self) -> str:
        who = f"{self.name or self.formula or ''} (CAS {self.cas}), {self.phase}"
        return f"{self.dataset_title} ({self.dataset}) {self.version}, via chemicals {chemicals_version()}: {who}"

    def cp(self, T) -> np.ndarray:
        """Cp at T (K) from the nominal coefficients, J/(mol K) (no range check beyond the ends:
        the nearest range is used)."""
        T = np.asarray(T, dtype=float)
        out = np.empty_like(T)
        edges = [r[1] for r in self.ranges[:-1]]
        idx = np.searchsorted(edges, T, side="left")
        for i, (_, _, c) in enumerate(self.ranges):
            m = idx == i
            t = T[m] / 1000.0
            A, B, C, D, E = c
            out[m] = A + B * t + C * t * t + D * t**3 + E / (t * t)
        return out

    def to_cp_model(self, allow_extrapolation: bool = False):
        """The curve as a :class:`uqthermo.thermo.cp.ShomateCp`."""
        from uqthermo.thermo.cp import ShomateCp

        return ShomateCp(self.ranges, allow_extrapolation=allow_extrapolation)

    def to_case_dict(self) -> dict:
        """The ``heat_capacity`` table of the case format (without uncertainties)."""
        return {
            "model": "shomate",
            "ranges": [{"T": [f"{lo:g} K", f"{hi:g} K"], "coefficients": list(map(float, c))}
                       for lo, hi, c in self.ranges],
            "source": self.provenance,
        }

