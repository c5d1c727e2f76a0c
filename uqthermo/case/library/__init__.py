"""Built-in data library over the thermochemical data shipped by the ``chemicals`` package.

One module per data-source family, each citing its sources and saying what it states about
uncertainty:

==========================  ===================================================================
module                      owns
==========================  ===================================================================
:mod:`.atct`                Active Thermochemical Tables: ΔfH° (g, l) with stated ± (k = 2)
:mod:`.codata`              CODATA Key Values: S° of the reference elements, key species;
                            the reference elements (ΔfH° = 0 exactly)
:mod:`.janaf`               NIST-JANAF 1998: ΔfH°, ΔfG°, S° (g, l) and Cp tables (g, l, s)
:mod:`.webbook`             NIST WebBook constants: ΔfH°, S° (s, l, g), Tb, Tm, ΔvapH°(298 K)
:mod:`.webbook_shomate`     NIST WebBook Shomate Cp equations (g, l, s)
:mod:`.crc`                 CRC Handbook: standard-state table (s, l, g), ΔvapH, ΔfusH, Tb, Tm
:mod:`.formation_tables`    Yaws ΔfH°, S° (g); API Technical Data Book ΔfH° (g)
:mod:`.trc`                 TRC ideal-gas Cp equations of organic compounds
:mod:`.poling`              Poling et al. ideal-gas Cp polynomials; Cp(298 K) of gas and liquid
:mod:`.zabransky`           Zabransky et al. liquid Cp (critically evaluated, class I-VI)
:mod:`.perry`               Perry's Handbook: liquid Cp (DIPPR 100), inorganic Cp, ΔvapH (DIPPR 106)
:mod:`.phase_change`        Tb, Tm, Tc; ΔvapH(T) by PPDS12, Watson, Alibakhshi, Riedel
:mod:`.joback`              Joback group-contribution estimates (flagged as estimates)
==========================  ===================================================================

and the rules on top of them:

* :mod:`.identify` — finding a species by CAS number, name or formula (and filling in its
  formula), with the closest alternatives when that fails;
* :mod:`.selection` — ``library = "auto"``: the best source whose range covers the
  temperatures a case needs, with the reason recorded;
* :mod:`.uncertainty` — the standard uncertainty of a selected value: stated, published typical
  deviation, spread of the sources, or an assumed value (flagged);
* :mod:`.named` — the look-ups of one named dataset (``library = "ATcT" | "JANAF" | "shomate"``)
  with their original semantics, and :func:`search`.

Datasets load lazily on first use (importing this package does not import ``chemicals``).
"""

from __future__ import annotations

from .base import DatasetInfo, LibraryCp, LibraryLookupError, LibraryValue, Match
from .formula import hill_formula
from .named import (
    ATCT_COVERAGE_FACTOR,
    format_matches,
    lookup_formation_enthalpy,
    lookup_formation_gibbs_energy,
    lookup_heat_capacity,
    lookup_standard_entropy,
    search,
)

__all__ = [
    "DATASETS",
    "DatasetInfo",
    "LibraryValue",
    "LibraryCp",
    "Match",
    "LibraryLookupError",
    "hill_formula",
    "lookup_formation_enthalpy",
    "lookup_standard_entropy",
    "lookup_formation_gibbs_energy",
    "lookup_heat_capacity",
    "search",
    "format_matches",
    "ATCT_COVERAGE_FACTOR",
]


def __getattr__(name: str):
    # DATASETS is built on first access (its version strings need chemicals imported).
    if name == "DATASETS":
        from .named import dataset_infos

        return dataset_infos()
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")
