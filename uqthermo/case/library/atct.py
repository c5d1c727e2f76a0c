"""Active Thermochemical Tables (ATcT): formation enthalpies with stated uncertainties.

Owns the ATcT tables shipped by ``chemicals`` (version in the file names, 1.112 in chemicals
1.5): standard formation enthalpies at 298.15 K (and 0 K) of gases and liquids with their ±
uncertainties.

Source: B. Ruscic, R. E. Pinzon, M. L. Morton, G. von Laszevski, S. J. Bittner, S. G. Nijsure,
K. A. Amin, M. Minkoff, A. F. Wagner, "Introduction to Active Thermochemical Tables: several
'key' enthalpies of formation revisited", J. Phys. Chem. A 108 (2004) 9979-9997; B. Ruscic et al.,
"Active Thermochemical Tables: thermochemistry for the 21st century", J. Phys.: Conf. Ser. 16
(2005) 561, doi:10.1088/1742-6596/16/1/078.

Uncertainty: ATcT publishes "±" values that are, per the ATcT documentation, estimated 95 %
confidence limits (recalled from memory of the ATcT web pages; chemicals' column is just called
``uncertainty``). They are read as expanded uncertainties U with k = 2: u = U/2. A listed 0 ± 0
(reference elements) is exact.
"""

from __future__ import annotations

import functools
import re

from .base import T_REF, nan_to_none
from .candidates import ScalarCandidate, SourceInfo
from .formula import split_phase

__all__ = ["version", "info", "table", "scalar", "catalog", "COVERAGE_FACTOR"]

COVERAGE_FACTOR = 2.0
"""ATcT ± values are 95 % expanded uncertainties; u = U / 2."""


@functools.lru_cache(maxsize=1)
def version() -> str:
    """ATcT version of the tables shipped by chemicals (from its data file names)."""
    try:
        import chemicals.reaction  # noqa: F401  (registers the data files)
        from chemicals import data_reader

        names = [k for k in data_reader.load_cmds if k.startswith("ATcT ")]
    except Exception:  # pragma: no cover
        names = []
    for n in names:
        m = re.match(r"ATcT (\S+) \(", n)
        if m:
            return m.group(1)
    return "?"


@functools.lru_cache(maxsize=1)
def info() -> SourceInfo:
    return SourceInfo(
        "ATcT", "Active Thermochemical Tables", version(),
        "B. Ruscic et al., J. Phys. Chem. A 108 (2004) 9979; J. Phys.: Conf. Ser. 16 (2005) 561; "
        f"ATcT network ver. {version()} as shipped in chemicals", "evaluated",
        "± values are 95 % expanded uncertainties (ATcT documentation, recalled from memory); u = U/2")


@functools.lru_cache(maxsize=1)
def table() -> dict:
    """{phase: {cas: (value J/mol, U J/mol or None, name, formula)}} for g and l."""
    import chemicals.reaction  # noqa: F401
    from chemicals.data_reader import data_source

    out = {}
    for ph, col in (("g", "Hfg"), ("l", "Hfl")):
        df = data_source(f"ATcT {version()} ({ph}).tsv")
        d = {}
        for cas, row in zip(df.index, df.itertuples(index=False)):
            r = row._asdict()
            val = nan_to_none(r.get(col))
            if val is None:
                continue
            name = r.get("Chemical") if isinstance(r.get("Chemical"), str) else None
            form = r.get("Formula") if isinstance(r.get("Formula"), str) else None
            d[str(cas)] = (val, nan_to_none(r.get("uncertainty")), name, split_phase(form)[0] if form else None)
        out[ph] = d
    return out


def catalog() -> dict[str, dict[str, set]]:
    """{cas: {quantity: {phases}}}."""
    out: dict = {}
    for ph, d in table().items():
        for cas in d:
            out.setdefault(cas, {}).setdefault("formation_enthalpy", set()).add(ph)
    return out


def scalar(cas: str, quantity: str, phase: str, T=None) -> ScalarCandidate | None:
    if quantity != "formation_enthalpy" or phase not in ("g", "l"):
        return None
    row = table()[phase].get(cas)
    if row is None:
        return None
    val, U, _, _ = row
    src = info()
    if U is None:
        return ScalarCandidate(src, quantity, phase, cas, val, T_REF, note="ATcT states no uncertainty for this entry")
    if U == 0.0:
        return ScalarCandidate(src, quantity, phase, cas, val, T_REF, u=0.0, u_basis="stated",
                               u_note="ATcT 0 ± 0: reference element, zero by definition")
    return ScalarCandidate(src, quantity, phase, cas, val, T_REF, u=U / COVERAGE_FACTOR, u_basis="stated",
                           u_note=f"ATcT ± {U:g} J/mol read as a 95 % expanded uncertainty (k = 2)",
                           expanded=U, k=COVERAGE_FACTOR)


def curves(cas, phase):
    return []
