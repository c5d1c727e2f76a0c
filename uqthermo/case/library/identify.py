"""Finding a species in the library by CAS number, name, formula or SMILES.

Owns species identification for ``library = "auto"`` and for the starter case: which CAS number a
case's ``cas``, ``name`` or ``formula`` means, the Hill formula to fill in when only a CAS number or
a name is given, and errors that name the closest alternatives.

Rules:

* **CAS number**: checked for its syntax and check digit (the last digit is the weighted sum of
  the others modulo 10, CAS Registry rules); an unknown number lists the library's numbers closest
  to it.
* **Name**: chemicals' identifier databases (names and synonyms, case-insensitive: ``benzol`` is
  benzene); failing that, the names of the library's tables; an unknown name lists the closest
  names (difflib similarity).
* **Formula**: normalised to Hill order and matched against the species that have data. Entries
  known only to ATcT (isomers, radicals and ions such as the three CO2 entries) count only when
  nothing else matches, so ``CO2`` means carbon dioxide; a formula still shared by several species
  (``C2H6O``: ethanol and dimethyl ether) is an error listing them.
"""

from __future__ import annotations

import difflib
import functools
from dataclasses import dataclass

from .base import LibraryLookupError, Match
from .formula import CAS_RE, try_hill

__all__ = ["Identity", "identify", "index", "cas_check_digit_ok", "suggest_names", "atct_only", "search"]


@dataclass(frozen=True)
class Identity:
    """A species found in the library.

    Attributes
    ----------
    cas, name, formula : str or None
        CAS number, a name, the Hill formula.
    smiles : str or None
    how : str
        ``"CAS number"``, ``"name"``, ``"formula"`` or ``"SMILES"``.
    """

    cas: str
    name: str | None
    formula: str | None
    smiles: str | None = None
    how: str = ""

    @property
    def label(self) -> str:
        return f"{self.name or self.formula or '?'} (CAS {self.cas})"


def cas_check_digit_ok(cas: str) -> bool:
    """CAS Registry check digit: Σ i·dᵢ (digits right to left before the check digit, i from 1) mod 10."""
    digits = cas.replace("-", "")
    body, check = digits[:-1], int(digits[-1])
    return sum(int(d) * (i + 1) for i, d in enumerate(reversed(body))) % 10 == check


@functools.lru_cache(maxsize=1)
def _db():
    try:
        from chemicals import identifiers

        return identifiers.get_pubchem_db()
    except Exception:  # pragma: no cover
        return None


def _db_cas(cas: str, deep: bool = False):
    db = _db()
    if db is None:
        return None
    try:
        return db.search_CAS(cas, autoload=deep) or None
    except Exception:
        return None


@functools.lru_cache(maxsize=1)
def _table_names() -> dict[str, tuple[str | None, str | None]]:
    """Names (and raw formulas) written in the sources' own tables."""
    from . import atct, crc, formation_tables, janaf, poling, trc

    out: dict[str, tuple[str | None, str | None]] = {}
    for ph in atct.table().values():
        for cas, (_, _, name, form) in ph.items():
            out.setdefault(cas, (name, form))
    for cas, (name, form) in janaf.table()["_meta"].items():
        out[cas] = (name or out.get(cas, (None, None))[0], form or out.get(cas, (None, None))[1])
    frames = [(crc.standard_table(), "Chemical"), (formation_tables.tables()[0], "name"),
              (formation_tables.tables()[1], "Compound"), (trc.table(), "Chemical"), (poling.table(), "Chemical")]
    for df, col in frames:
        for cas, nm in zip(df.index, df[col]):
            if isinstance(nm, str) and str(cas) not in out:
                out[str(cas)] = (nm.strip(), None)
    return out


def atct_only() -> frozenset:
    """CAS numbers listed by ATcT alone (isomers, radicals, ions): last resort for formula matches."""
    return _atct_only()


@functools.lru_cache(maxsize=1)
def _atct_only() -> frozenset:
    from . import atct, sources

    others: set = set()
    for m in sources.modules():
        if m is not atct:
            others |= set(m.catalog())
    return frozenset(set(atct.catalog()) - others)


def _meta(cas: str) -> tuple[str | None, str | None]:
    r = _db_cas(cas)
    name = (r.common_name or r.iupac_name) if r else None
    form = try_hill(r.formula) if r and r.formula else None
    if name and form:
        return name, form
    tn, tf = _table_names().get(cas, (None, None))
    return name or tn, form or (try_hill(tf) if tf else None)


@functools.lru_cache(maxsize=1)
def index() -> dict[str, tuple[str | None, str | None]]:
    """CAS -> (name, Hill formula) for every species that has data in a source."""
    from .sources import catalog

    return {cas: _meta(cas) for cas in catalog()}


def _describe(cas: str) -> str:
    name, form = index().get(cas, (None, None))
    return f"{cas} ({name or '?'}{', ' + form if form else ''})"


def suggest_names(text: str, n: int = 5) -> list[str]:
    """Library names closest to ``text`` (difflib ratio), e.g. for a misspelt name."""
    names = {nm.lower(): nm for nm, _ in index().values() if nm}
    return [names[m] for m in difflib.get_close_matches(text.lower(), list(names), n=n, cutoff=0.6)]


def _by_cas(cas: str, key: str) -> Identity:
    cas = cas.strip()
    if not CAS_RE.match(cas):
        raise LibraryLookupError(f"{cas!r} is not a CAS number (digits-digits-digit, e.g. 108-88-3)", key=key)
    if not cas_check_digit_ok(cas):
        close = difflib.get_close_matches(cas, list(index()), n=4, cutoff=0.7)
        raise LibraryLookupError(f"CAS number {cas} fails its check digit (a typing slip?)"
                                 + (f"; closest in the library: {', '.join(_describe(c) for c in close)}" if close else ""),
                                 [Match(c, *index()[c]) for c in close], key=key)
    idx = index()
    if cas in idx:
        name, form = idx[cas]
        r = _db_cas(cas)
        return Identity(cas, name, form, None, "CAS number")
    r = _db_cas(cas) or _db_cas(cas, deep=True)
    if r:
        return Identity(cas, r.common_name or r.iupac_name, try_hill(r.formula) if r.formula else None, None,
                        "CAS number")
    close = difflib.get_close_matches(cas, list(idx), n=4, cutoff=0.7)
    raise LibraryLookupError(f"unknown CAS number {cas}: no source in the library lists it"
                             + (f"; closest: {', '.join(_describe(c) for c in close)}" if close else "")
                             + "; search with `uqthermo data NAME`", [Match(c, *idx[c]) for c in close], key=key)


def _by_name(name: str, key: str) -> Identity:
    low = name.strip().lower()
    db = _db()
    r = None
    if db is not None:
        try:
            r = db.search_name(low, autoload=False)
        except Exception:
            r = None
    if r:
        cas = r.CASs
        iname, iform = _meta(cas)
        return Identity(cas, iname or r.common_name or name, iform or try_hill(r.formula), None, "name")
    hits = [c for c, (nm, _) in index().items() if nm and nm.lower() == low]
    if len(hits) == 1:
        nm, form = index()[hits[0]]
        return Identity(hits[0], nm, form, None, "name")
    if len(hits) > 1:
        raise LibraryLookupError(f"name {name!r} matches {len(hits)} species: {', '.join(_describe(c) for c in hits)}; "
                                 "give the CAS number", [Match(c, *index()[c]) for c in hits], key=key)
    close = suggest_names(name)
    raise LibraryLookupError(f"unknown name {name!r}" + (f"; closest: {', '.join(close)}" if close else "")
                             + "; give the CAS number or search with `uqthermo data`", key=key)


def _by_formula(formula: str, key: str) -> Identity:
    hill = try_hill(formula)
    if hill is None:
        raise LibraryLookupError(f"cannot read formula {formula!r}", key=key)
    idx = index()
    hits = [c for c, (_, f) in idx.items() if f == hill]
    rich = [c for c in hits if c not in _atct_only()]
    pool = rich or hits
    if len(pool) == 1:
        nm, _ = idx[pool[0]]
        return Identity(pool[0], nm, hill, None, "formula")
    if not pool:
        raise LibraryLookupError(f"no species with formula {hill} in the library; give the CAS number, a name, or "
                                 "a SMILES string for an estimate", key=key)
    listed = ", ".join(_describe(c) for c in sorted(pool)[:12]) + (" ..." if len(pool) > 12 else "")
    raise LibraryLookupError(f"formula {hill} matches {len(pool)} species: {listed}; give cas = \"...\" or "
                             "name = \"...\"", [Match(c, *idx[c]) for c in sorted(pool)], key=key)


def identify(*, cas: str | None = None, name: str | None = None, formula: str | None = None,
             smiles: str | None = None, key: str | None = None) -> Identity:
    """The species meant by a CAS number, else a name, else a formula (else a SMILES string).

    Raises
    ------
    LibraryLookupError
        Unknown CAS number or name, ambiguous formula — with the closest alternatives.
    """
    if cas:
        ident = _by_cas(cas, key)
    elif name:
        ident = _by_name(name, key)
    elif formula:
        ident = _by_formula(formula, key)
    elif smiles:
        return Identity("", None, None, smiles, "SMILES")
    else:
        raise LibraryLookupError("give cas, name or formula to find the species in the library", key=key)
    if smiles and not ident.smiles:
        ident = Identity(ident.cas, ident.name, ident.formula, smiles, ident.how)
    return ident


def search(text: str, limit: int = 50) -> list[Match]:
    """Species of the whole library matching ``text`` (for ``uqthermo data``).

    Exact matches first (CAS number, Hill formula, name or synonym), then names containing the
    text. ``Match.datasets`` maps quantity -> {"library": phases} (which phases have data).
    """
    from .formula import split_phase
    from .sources import catalog

    q = split_phase(text.strip())[0]
    low = q.lower()
    idx = index()
    cat = catalog()
    exact: list[str] = []
    if CAS_RE.match(q) and q in idx:
        exact.append(q)
    hill = try_hill(q)
    if hill:
        exact += [c for c, (_, f) in idx.items() if f == hill and c not in exact]
    try:
        ident = _by_name(q, None)
        if ident.cas not in exact:
            exact.insert(0, ident.cas)
    except LibraryLookupError:
        pass
    partial = []
    if len(low) >= 3:
        partial = [c for c, (nm, _) in idx.items() if nm and low in nm.lower() and c not in exact]
        partial.sort(key=lambda c: (len(idx[c][0] or ""), idx[c][0] or ""))
    rich = [c for c in exact if c not in _atct_only()] + [c for c in exact if c in _atct_only()]
    out = []
    for c in (rich + partial)[:limit]:
        name, form = idx.get(c) or _meta(c)
        out.append(Match(c, name, form, {k: {"library": tuple(sorted(v))} for k, v in cat.get(c, {}).items()}))
    return out
