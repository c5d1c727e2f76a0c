"""Look-ups from one named dataset: ``library = "ATcT"``, ``"JANAF"`` or ``"shomate"``.

Owns the explicit look-ups of the three datasets a case file could name before ``library =
"auto"`` existed, with their original semantics (kept for compatibility): the value from that
dataset, its stated uncertainty if any, ambiguity errors for formulas shared by several entries
of that dataset, and :func:`search` for ``uqthermo data``.

Datasets (all read from the installed ``chemicals`` package, no network):

``ATcT``
    Active Thermochemical Tables, version as in chemicals' file names (1.112 in chemicals 1.5):
    standard formation enthalpies at 298.15 K of gases and liquids with their ± uncertainties
    (B. Ruscic et al., "Active Thermochemical Tables: thermochemistry for the 21st century",
    J. Phys.: Conf. Ser. 16 (2005) 561, doi:10.1088/1742-6596/16/1/078).
``JANAF``
    NIST-JANAF Thermochemical Tables, 4th edition (M. W. Chase, J. Phys. Chem. Ref. Data
    Monograph 9, 1998): formation enthalpies, Gibbs energies of formation and standard
    entropies at 298.15 K (gas and liquid) and tabulated Cp(T) (gas, liquid, solid).
    chemicals ships no uncertainties for them.
``shomate``
    NIST Chemistry WebBook Shomate coefficients (NIST Standard Reference Database 69;
    doi:10.18434/T4M88Q) for solids, liquids and gases, per temperature range. No uncertainties.

Uncertainty convention. ATcT publishes its uncertainties as "±" values that are, per the ATcT
documentation, estimated 95 % confidence limits (recalled from memory of the ATcT web pages;
chemicals' data column is just called ``uncertainty`` and its documentation does not say what it
means). They are therefore treated as expanded uncertainties U with coverage factor k = 2 and
converted to standard uncertainties u = U/2; :class:`LibraryValue` keeps both. Where a dataset
states no uncertainty, ``u`` is None and the case layer must ask the user for one (or flag an
assumed value). Reference elements (ΔfH = 0 by definition) get u = 0.

Matching: by CAS number, by name (case-insensitive), or by formula normalised to Hill order
(``CH3COOH`` → ``C2H4O2``; a trailing charge such as ``CN-`` is kept). A formula shared by
several species of a dataset (isomers, conformers) raises :class:`LibraryLookupError` listing
their CAS numbers (ATcT lists many isomers: e.g. CO2, C2H4, CH4O need the CAS number there).
Names and formulas come from the dataset tables, then chemicals' identifier databases (the large
one is loaded, once, only when a look-up would otherwise fail).

``DATASETS`` (built on first access) maps dataset keys to :class:`DatasetInfo` provenance.
"""

from __future__ import annotations

import functools
import re
from typing import Iterable

import numpy as np

from uqthermo.errors import InputError

from . import atct, janaf, webbook_shomate
from .atct import COVERAGE_FACTOR as ATCT_COVERAGE_FACTOR
from .base import (
    T_REF,
    DatasetInfo,
    LibraryCp,
    LibraryLookupError,
    LibraryValue,
    Match,
)
from .base import PHASES as _PHASES
from .formula import CAS_RE as _CAS
from .formula import split_phase as _split_phase
from .formula import try_hill as _try_hill

__all__ = [
    "DATASETS", "ATCT_COVERAGE_FACTOR", "lookup_formation_enthalpy", "lookup_standard_entropy",
    "lookup_formation_gibbs_energy", "lookup_heat_capacity", "search", "format_matches", "dataset_key",
    "ALIASES", "dataset_infos",
]


def _atct_version() -> str:
    return atct.version()


def _datasets() -> dict[str, DatasetInfo]:
    return {
        "ATcT": DatasetInfo(
            "ATcT", "Active Thermochemical Tables", _atct_version(),
            "B. Ruscic et al., J. Phys.: Conf. Ser. 16 (2005) 561; values of the ATcT thermochemical "
            f"network ver. {_atct_version()} as shipped in chemicals",
            {"formation_enthalpy": ("g", "l")},
            "± values are 95 % expanded uncertainties (ATcT documentation, recalled from memory); "
            "converted to standard uncertainties u = U/2",
        ),
        "JANAF": DatasetInfo(
            "JANAF", "NIST-JANAF Thermochemical Tables", "4th edition (1998)",
            "M. W. Chase, NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. Ref. Data "
            "Monograph 9 (1998)",
            {"formation_enthalpy": ("g", "l"), "formation_gibbs_energy": ("g", "l"),
             "standard_entropy": ("g", "l"), "heat_capacity": ("g", "l", "s")},
            "no uncertainties in the chemicals tables (u = None: give one or flag it as assumed)",
        ),
        "shomate": DatasetInfo(
            "shomate", "NIST Chemistry WebBook Shomate coefficients", "NIST SRD 69",
            "NIST Chemistry WebBook, NIST Standard Reference Database 69, doi:10.18434/T4M88Q",
            {"heat_capacity": ("g", "l", "s")},
            "no uncertainties in the dataset (u = None: give one or flag it as assumed)",
        ),
    }


@functools.lru_cache(maxsize=1)
def _dataset_infos() -> dict[str, DatasetInfo]:
    return _datasets()


def __getattr__(name: str):
    # DATASETS is built on first access (its version strings need chemicals imported).
    if name == "DATASETS":
        return dict(_dataset_infos())
    raise AttributeError(f"module {__name__!r} has no attribute {name!r}")


_ALIASES = {
    "atct": "ATcT", "active thermochemical tables": "ATcT",
    "janaf": "JANAF", "nist-janaf": "JANAF", "janaf1998": "JANAF", "janaf-1998": "JANAF",
    "shomate": "shomate", "webbook": "shomate", "nist": "shomate", "webbook-shomate": "shomate",
    "nist-shomate": "shomate",
}

def _dataset_key(name: str) -> str:
    key = _ALIASES.get(str(name).strip().lower())
    if key is None:
        raise InputError(f"unknown data library {name!r}; use one of ATcT, JANAF, shomate", key="library")
    return key


def _phase_key(phase: str) -> str:
    p = _PHASES.get(str(phase).strip().lower())
    if p is None:
        raise InputError(f"unknown phase {phase!r} for a library look-up; use g, l or s/cr", key="phase")
    return p


ALIASES = _ALIASES
dataset_key = _dataset_key


def dataset_infos() -> dict[str, DatasetInfo]:
    """The three named datasets' provenance (``DATASETS``)."""
    return dict(_dataset_infos())


@functools.lru_cache(maxsize=1)
def _tables():
    """The three named datasets as {dataset: {quantity: {phase: {cas: payload}}}} plus metadata
    {cas: (name, raw formula)} (built from :mod:`.atct`, :mod:`.janaf`, :mod:`.webbook_shomate`)."""
    meta: dict[str, tuple[str | None, str | None]] = {}
    tabs: dict = {"ATcT": {"formation_enthalpy": {}}, "JANAF": {}, "shomate": {"heat_capacity": {}}}
    for ph, d in atct.table().items():
        tabs["ATcT"]["formation_enthalpy"][ph] = {cas: (v, U, name, form) for cas, (v, U, name, form) in d.items()}
        for cas, (_, _, name, form) in d.items():
            meta.setdefault(cas, (name, form))
    jt = janaf.table()
    for cas, (name, form) in jt["_meta"].items():
        # JANAF names/formulas take precedence over ATcT's structural formulas for metadata
        meta[cas] = (name or meta.get(cas, (None, None))[0], form or meta.get(cas, (None, None))[1])
    for q in ("formation_enthalpy", "formation_gibbs_energy", "standard_entropy"):
        tabs["JANAF"][q] = {ph: {cas: (v, None) + jt["_meta"].get(cas, (None, None)) for cas, v in d.items()}
                            for ph, d in jt[q].items()}
    tabs["JANAF"]["heat_capacity"] = dict(janaf.cp_tables())
    sh = webbook_shomate.table()
    for ph in ("s", "l", "g"):
        tabs["shomate"]["heat_capacity"][ph] = sh[ph]
    return tabs, meta


@functools.lru_cache(maxsize=1)
def _small_db():
    try:
        from chemicals import identifiers

        return identifiers.get_pubchem_db()
    except Exception:  # pragma: no cover
        return None


_large_db_loaded = False


def _metadata(cas: str, *, deep: bool = False) -> tuple[str | None, str | None]:
    """(name, Hill formula) of a CAS number from the dataset tables, then chemicals' identifier
    databases (the small one always; the large one only with ``deep``)."""
    _, meta = _tables()
    name, form = meta.get(cas, (None, None))
    hill = _try_hill(form) if form else None
    if name and hill:
        return name, hill
    db = _small_db()
    if db is not None:
        try:
            r = db.search_CAS(cas, autoload=deep)
        except Exception:
            r = None
        if r:
            name = name or (r.common_name or r.iupac_name)
            hill = hill or _try_hill(r.formula)
    # chemicals' identifier database sometimes carries a simplified formula for minerals
    # ("magnetite (Fe3O4)" listed as FeO): a formula written in the name wins.
    if name:
        m = re.search(r"\(([A-Z][A-Za-z0-9]*)\)\s*$", name)
        in_name = _try_hill(m.group(1)) if m else None
        if in_name:
            hill = in_name
    return name, hill


@functools.lru_cache(maxsize=1)
def _index(deep: bool = False) -> dict[str, tuple[str | None, str | None]]:
    """CAS -> (name, Hill formula) for every CAS in any dataset."""
    tabs, _ = _tables()
    cas_all: set[str] = set()
    for ds in tabs.values():
        for q in ds.values():
            for ph in q.values():
                cas_all.update(ph)
    return {c: _metadata(c, deep=deep) for c in sorted(cas_all)}


@functools.lru_cache(maxsize=1)
def _deep_index() -> dict[str, tuple[str | None, str | None]]:
    """As :func:`_index` but resolving the remaining CAS numbers through chemicals' large
    identifier database (a few seconds, only when a look-up would otherwise fail)."""
    base = dict(_index())
    for c, (n, f) in base.items():
        if n is None or f is None:
            base[c] = _metadata(c, deep=True)
    return base


# ------------------------------------------------------------------------------------------

# ------------------------------------------------------------------------------------------
# Matching
# ------------------------------------------------------------------------------------------


def _available(cas: str) -> dict:
    tabs, _ = _tables()
    out: dict = {}
    for ds, qs in tabs.items():
        for q, phases in qs.items():
            ph = tuple(p for p in ("g", "l", "s") if cas in phases.get(p, {}))
            if ph:
                out.setdefault(q, {})[ds] = ph
    return out


def _match(cas: str, index) -> Match:
    name, formula = index.get(cas, (None, None))
    return Match(cas, name, formula, _available(cas))


def _candidates(identifier: str, pool: Iterable[str], index) -> tuple[list[str], str]:
    """CAS numbers in ``pool`` matching ``identifier``; second value tells how it matched."""
    pool = list(pool)
    ident = identifier.strip()
    if _CAS.match(ident):
        return ([ident] if ident in pool else []), "CAS number"
    low = ident.lower()
    by_name = [c for c in pool if (index.get(c, (None, None))[0] or "").lower() == low]
    if by_name:
        return by_name, "name"
    hill = _try_hill(ident)
    if hill is not None:
        by_formula = [c for c in pool if index.get(c, (None, None))[1] == hill]
        if by_formula:
            return by_formula, "formula"
    db = _small_db()
    if db is not None:
        try:
            r = db.search_name(low, autoload=False)
        except Exception:
            r = None
        if r and r.CASs in pool:
            return [r.CASs], "name"
    return [], "formula" if hill is not None else "name"


def _resolve(identifier, dataset: str, quantity: str, phase: str) -> tuple[str, dict]:
    tabs, _ = _tables()
    info = _dataset_infos()[dataset]
    label = f"{info.key} {info.version}"
    if not isinstance(identifier, str) or not identifier.strip():
        raise LibraryLookupError("give a formula, CAS number or name to look up", key="library")
    if quantity not in tabs[dataset]:
        have = ", ".join(q.replace("_", " ") for q in tabs[dataset])
        raise LibraryLookupError(f"{label} has no {quantity.replace('_', ' ')} data (it has: {have})")
    ident, suffix_phase = _split_phase(identifier)
    if suffix_phase and _PHASES.get(suffix_phase) and _PHASES[suffix_phase] != phase:
        raise LibraryLookupError(f"identifier {identifier!r} names phase {suffix_phase!r} but phase {phase!r} was asked")
    per_phase = tabs[dataset][quantity]
    table = per_phase.get(phase, {})
    all_cas = set().union(*per_phase.values())
    index = _index()
    cands, how = _candidates(ident, table, index)
    if not cands:
        other, _ = _candidates(ident, all_cas, index)
        if not other and how != "CAS number":
            deep = _deep_index()
            cands, how = _candidates(ident, table, deep)
            if not cands:
                other, _ = _candidates(ident, all_cas, deep)
            index = deep
        if not cands:
            if other:
                phases = sorted({p for c in other for p, t in per_phase.items() if c in t})
                raise LibraryLookupError(
                    f"{label} has no {quantity.replace('_', ' ')} of {ident!r} in phase {phase!r}"
                    f" (phases available: {', '.join(phases)})",
                    [_match(c, index) for c in other],
                )
            raise LibraryLookupError(
                f"{ident!r} not found in {label} {quantity.replace('_', ' ')} ({phase}) by {how}; "
                "try `uqthermo data SEARCH` for the CAS number"
            )
    if len(cands) > 1:
        def _desc(c):
            others = sorted({d for q in _available(c).values() for d in q if d != dataset})
            also = f"; also in {', '.join(others)}" if others else ""
            return f"{c} ({index.get(c, (None,))[0] or '?'}{also})"

        listed = ", ".join(_desc(c) for c in sorted(cands))
        raise LibraryLookupError(
            f"{how} {ident!r} matches {len(cands)} species in {label} ({phase}): {listed}; "
            "give the CAS number instead",
            [_match(c, index) for c in sorted(cands)],
        )
    cas = cands[0]
    return cas, {"index": index, "table": table}


# ------------------------------------------------------------------------------------------
# Look-ups
# ------------------------------------------------------------------------------------------


def _scalar(identifier, phase, dataset, quantity, unit) -> LibraryValue:
    ds = _dataset_key(dataset)
    ph = _phase_key(phase)
    cas, ctx = _resolve(identifier, ds, quantity, ph)
    val, U, name, _form = ctx["table"][cas]
    iname, hill = ctx["index"].get(cas, (name, None))
    info = _dataset_infos()[ds]
    if ds == "ATcT":
        if U is None:
            u, k, note = None, None, "ATcT states no uncertainty for this entry"
        elif U == 0.0:
            u, k, note = 0.0, None, "reference element (formation enthalpy zero by definition)"
        else:
            u, k = U / ATCT_COVERAGE_FACTOR, ATCT_COVERAGE_FACTOR
            note = (f"ATcT ± {U:g} J/mol taken as a 95 % expanded uncertainty (k = 2): u = U/2 = {u:g} J/mol")
    else:
        u, k, U = None, None, None
        note = f"{info.key} {info.version}: no uncertainty stated in the chemicals tables"
        if quantity in ("formation_enthalpy", "formation_gibbs_energy") and val == 0.0:
            u, note = 0.0, "reference element (zero by definition)"
    return LibraryValue(
        quantity=quantity, value=float(val), u=u, unit=unit, dataset=ds, version=info.version,
        dataset_title=info.title, cas=cas, name=name or iname, formula=hill, phase=ph,
        expanded_uncertainty=U, coverage_factor=k, note=note,
    )


def lookup_formation_enthalpy(identifier: str, phase: str, dataset: str = "ATcT") -> LibraryValue:
    """Standard formation enthalpy at 298.15 K (1 bar) from ATcT or JANAF.

    Parameters
    ----------
    identifier : str
        Formula (any order, normalised to Hill), CAS number or name.
    phase : str
        ``"g"`` or ``"l"`` (the chemicals copies of ATcT and JANAF have no solid-phase
        formation enthalpies).
    dataset : {"ATcT", "JANAF"}

    Returns
    -------
    LibraryValue
        value and u in J/mol. ATcT: u = U/2 from the published ± (95 %) value; JANAF: u None.

    Raises
    ------
    LibraryLookupError
        Unknown or ambiguous identifier, phase not in the dataset.
    """
    return _scalar(identifier, phase, dataset, "formation_enthalpy", "J/mol")


def lookup_standard_entropy(identifier: str, phase: str, dataset: str = "JANAF") -> LibraryValue:
    """Standard molar entropy at 298.15 K (1 bar), J/(mol K), from JANAF 1998 (u None).

    Parameters and errors as :func:`lookup_formation_enthalpy` (dataset: ``"JANAF"``).
    """
    return _scalar(identifier, phase, dataset, "standard_entropy", "J/(mol*K)")


def lookup_formation_gibbs_energy(identifier: str, phase: str, dataset: str = "JANAF") -> LibraryValue:
    """Standard Gibbs energy of formation at 298.15 K (1 bar), J/mol, from JANAF 1998 (u None).

    Parameters and errors as :func:`lookup_formation_enthalpy` (dataset: ``"JANAF"``).
    """
    return _scalar(identifier, phase, dataset, "formation_gibbs_energy", "J/mol")


def _shomate_si_to_nist(c) -> list[float]:  # noqa: D401 - kept for callers
    """chemicals stores Shomate coefficients for T in K (A, B/1e3, C/1e6, D/1e9, E*1e6);
    return the NIST form for t = T/1000 K."""
    A, B, C, D, E = map(float, c)
    return [A, B * 1e3, C * 1e6, D * 1e9, E / 1e6]


def lookup_heat_capacity(identifier: str, phase: str, dataset: str = "shomate",
                         T_range: tuple[float, float] | None = None) -> LibraryCp:
    """Heat-capacity curve in the case file's Shomate form.

    ``dataset="shomate"``: the NIST WebBook coefficients as they are, all ranges (chemicals
    stores them scaled for T in K; converted back to t = T/1000 K). ``dataset="janaf"``: a
    Shomate curve fitted by unweighted least squares (:func:`uqthermo.thermo.fitting.fit_cp`) to
    the JANAF 1998 Cp table between ``T_range`` (default 298.15 K to min(1500 K, table end));
    the note gives the largest deviation from the table.

    Parameters
    ----------
    identifier : str
        Formula, CAS number or name.
    phase : str
        ``"g"``, ``"l"`` or ``"s"``/``"cr"``.
    dataset : {"shomate", "janaf"}
    T_range : (float, float), optional
        JANAF only: temperature range to fit, K.

    Returns
    -------
    LibraryCp
        ``u`` is None (no coefficient uncertainties stated).
    """
    ds = _dataset_key(dataset)
    ph = _phase_key(phase)
    if ds not in ("shomate", "JANAF"):
        raise LibraryLookupError(f"{ds} has no heat-capacity data; use shomate or janaf", key="library")
    cas, ctx = _resolve(identifier, ds, "heat_capacity", ph)
    info = _dataset_infos()[ds]
    name, hill = ctx["index"].get(cas, (None, None))
    payload = ctx["table"][cas]
    if ds == "shomate":
        ranges = [(lo, hi, list(c)) for lo, hi, c in payload]   # NIST form already (webbook_shomate.table)
        return LibraryCp("shomate", ranges, ds, info.version, info.title, cas, name, hill, ph,
                         note="NIST WebBook Shomate coefficients (no uncertainty stated)")
    from uqthermo.thermo.fitting import fit_cp

    Ts, Cps = (np.asarray(v, dtype=float) for v in payload)
    if T_range is None:
        lo = T_REF if Ts.max() > T_REF else float(Ts[Ts > 0].min())
        lo = max(lo, float(Ts[Ts > 0].min()))
        T_range = (lo, min(1500.0, float(Ts.max())))
    lo, hi = float(min(T_range)), float(max(T_range))
    sel = (Ts >= lo - 1e-9) & (Ts <= hi + 1e-9) & (Ts > 0) & np.isfinite(Cps)
    if np.count_nonzero(sel) < 6:
        raise LibraryLookupError(
            f"the JANAF Cp table of {identifier!r} ({ph}) has {int(np.count_nonzero(sel))} points in "
            f"{lo:g}-{hi:g} K (table: {Ts.min():g}-{Ts.max():g} K); need 6 to fit a Shomate curve — "
            "widen T_range"
        )
    fit = fit_cp(Ts[sel], Cps[sel], model="shomate")
    dev = float(np.max(np.abs(fit.residuals)))
    ranges = [(float(Ts[sel].min()), float(Ts[sel].max()), [float(x) for x in fit.coefficients])]
    note = (f"Shomate curve fitted by uqthermo to {int(np.count_nonzero(sel))} JANAF 1998 Cp points, "
            f"{ranges[0][0]:g}-{ranges[0][1]:g} K; largest deviation {dev:.3g} J/(mol*K); no uncertainty stated")
    return LibraryCp("shomate", ranges, ds, info.version, info.title, cas, name, hill, ph, note=note,
                     points=(Ts[sel], Cps[sel]))


def search(text: str, limit: int = 50) -> list[Match]:
    """Find species in the library (for ``uqthermo data SEARCH``).

    Matches the CAS number exactly, the formula after Hill normalisation exactly, or the name
    as a case-insensitive substring. Exact matches come first.

    Parameters
    ----------
    text : str
    limit : int
        Maximum number of matches returned.

    Returns
    -------
    list of Match
    """
    if not isinstance(text, str) or not text.strip():
        raise InputError("give a formula, CAS number or (part of a) name to search for", key="search")
    q = text.strip()
    body, _ = _split_phase(q)
    index = _index()
    hill = _try_hill(body)
    low = body.lower()
    exact, partial = [], []
    for cas, (name, formula) in index.items():
        nm = (name or "").lower()
        if cas == body or (hill is not None and formula == hill) or nm == low:
            exact.append(cas)
        elif len(low) >= 2 and low in nm:
            partial.append(cas)
    if not exact and not partial:
        index = _deep_index()
        for cas, (name, formula) in index.items():
            nm = (name or "").lower()
            if cas == body or (hill is not None and formula == hill) or nm == low:
                exact.append(cas)
            elif len(low) >= 2 and low in nm:
                partial.append(cas)
    partial.sort(key=lambda c: (len(index[c][0] or ""), index[c][0] or ""))
    return [_match(c, index) for c in (exact + partial)[:limit]]


def format_matches(matches: list[Match]) -> str:
    """Plain-text table of :func:`search` results."""
    if not matches:
        return "no matches"
    head = f"{'CAS':<12} {'name':<28} {'formula':<10} data"
    return "\n".join([head] + [m.describe() for m in matches])
