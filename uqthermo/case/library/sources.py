"""Registry of the data-source modules: who has which quantity of which species.

Owns the list of source modules and the two questions every rule asks of them: the candidate
values of a quantity (:func:`scalar_candidates`) and the candidate heat-capacity curves
(:func:`curve_candidates`) of one species (by CAS number) in one phase, plus the merged
:func:`catalog` used to index names and formulas. Modules are imported, and their tables loaded,
on first use.
"""

from __future__ import annotations

import functools
import importlib

from .candidates import CurveCandidate, ScalarCandidate

__all__ = ["MODULES", "modules", "scalar_candidates", "curve_candidates", "catalog", "SOURCE_KEYS",
           "source_key"]

MODULES = ("codata", "atct", "janaf", "webbook", "webbook_shomate", "crc", "formation_tables", "trc", "poling",
           "zabransky", "perry", "phase_change", "joback")

#: source keys usable as ``library = "<key>"`` in case files (besides "auto").
SOURCE_KEYS = ("ATcT", "CODATA", "JANAF", "WebBook", "shomate", "CRC", "Yaws", "API-TDB", "TRC", "Poling",
               "Zabransky", "Perry-DIPPR", "Perry-2-151", "HEOS", "Yaws-Tb", "OpenNotebook", "VDI-PPDS", "Watson",
               "Alibakhshi", "Riedel", "Joback")


def source_key(name: str) -> str | None:
    """The canonical source key for a spelling (case-insensitive; ``webbook-shomate`` = ``shomate``)."""
    low = str(name).strip().lower().replace("_", "-").replace(" ", "-")
    aliases = {"nist-shomate": "shomate", "webbook-shomate": "shomate", "api": "API-TDB", "api-tdb": "API-TDB",
               "perry": "Perry-DIPPR", "dippr": "Perry-DIPPR", "janaf1998": "JANAF", "nist-janaf": "JANAF",
               "atct": "ATcT", "coolprop": "HEOS"}
    if low in aliases:
        return aliases[low]
    for k in SOURCE_KEYS:
        if k.lower() == low:
            return k
    return None


@functools.lru_cache(maxsize=None)
def _module(name: str):
    return importlib.import_module(f"{__package__}.{name}")


def modules():
    return [_module(m) for m in MODULES]


def _as_list(x) -> list:
    if x is None:
        return []
    return list(x) if isinstance(x, (list, tuple)) else [x]


def scalar_candidates(cas: str, quantity: str, phase: str, T: float | None = None) -> list[ScalarCandidate]:
    """All sources' values of ``quantity`` for ``cas`` in ``phase`` (``T``: the temperature a
    latent heat is wanted at)."""
    out: list[ScalarCandidate] = []
    for m in modules():
        out += _as_list(m.scalar(cas, quantity, phase, T))
    return out


def curve_candidates(cas: str, phase: str) -> list[CurveCandidate]:
    """All sources' heat-capacity curves of ``cas`` in ``phase``."""
    out: list[CurveCandidate] = []
    for m in modules():
        out += _as_list(m.curves(cas, phase))
    return out


@functools.lru_cache(maxsize=1)
def catalog() -> dict[str, dict[str, set]]:
    """{cas: {quantity: {phases}}} over every source that lists species (not the Joback table)."""
    from .formula import CAS_RE

    out: dict = {}
    for m in modules():
        for cas, qs in m.catalog().items():
            if not CAS_RE.match(cas):      # chemicals' placeholder numbers (e.g. 2099474000-00-0)
                continue
            d = out.setdefault(cas, {})
            for q, ph in qs.items():
                d.setdefault(q, set()).update(ph)
    return out
