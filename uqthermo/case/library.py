"""Built-in data library over the thermochemical datasets shipped by the ``chemicals`` package.

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
from dataclasses import dataclass, field
from typing import Iterable

import numpy as np

from uqthermo.errors import InputError

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

ATCT_COVERAGE_FACTOR = 2.0
"""ATcT ± values are 95 % expanded uncertainties; u = U / 2 (see module docstring)."""

T_REF = 298.15

# ------------------------------------------------------------------------------------------
# Formula handling
# ------------------------------------------------------------------------------------------

_ELEMENTS = set(
    "H He Li Be B C N O F Ne Na Mg Al Si P S Cl Ar K Ca Sc Ti V Cr Mn Fe Co Ni Cu Zn Ga Ge As Se "
    "Br Kr Rb Sr Y Zr Nb Mo Tc Ru Rh Pd Ag Cd In Sn Sb Te I Xe Cs Ba La Ce Pr Nd Pm Sm Eu Gd Tb "
    "Dy Ho Er Tm Yb Lu Hf Ta W Re Os Ir Pt Au Hg Tl Pb Bi Po At Rn Fr Ra Ac Th Pa U Np Pu Am Cm "
    "Bk Cf Es Fm Md No Lr Rf Db Sg Bh Hs Mt Ds Rg Cn Nh Fl Mc Lv Ts Og D".split()
)
_PHASE_SUFFIX = re.compile(r"\s*\(([a-z]{1,3}(?:,[^()]*)?)\)\s*$")
_CAS = re.compile(r"^\d{2,7}-\d{2}-\d$")
_TOKEN = re.compile(r"([A-Z][a-z]?)|(\()|(\))|(\[)|(\])|(\d+(?:\.\d+)?)")


def _split_phase(text: str) -> tuple[str, str | None]:
    m = _PHASE_SUFFIX.search(text)
    if m:
        return text[: m.start()].strip(), m.group(1).split(",")[0]
    return text.strip(), None


def _parse_counts(s: str) -> dict[str, float]:
    stack: list[dict[str, float]] = [{}]
    closers: list[str] = []
    pos = 0
    last: dict[str, float] | str | None = None
    while pos < len(s):
        m = _TOKEN.match(s, pos)
        if not m:
            raise ValueError(f"unexpected {s[pos]!r}")
        el, op, cp, ob, cb, num = m.groups()
        pos = m.end()
        if el:
            if el not in _ELEMENTS:
                raise ValueError(f"unknown element {el!r}")
            stack[-1][el] = stack[-1].get(el, 0.0) + 1.0
            last = el
        elif op or ob:
            stack.append({})
            closers.append(")" if op else "]")
            last = None
        elif cp or cb:
            if not closers or closers.pop() != (")" if cp else "]"):
                raise ValueError("unbalanced brackets")
            grp = stack.pop()
            for k, v in grp.items():
                stack[-1][k] = stack[-1].get(k, 0.0) + v
            last = grp
        else:
            n = float(num)
            if isinstance(last, str):
                stack[-1][last] += n - 1.0
            elif isinstance(last, dict):
                for k, v in last.items():
                    stack[-1][k] += v * (n - 1.0)
            else:
                raise ValueError("count without an element or group")
            last = None
    if closers:
        raise ValueError("unbalanced brackets")
    return stack[0]


def _parse_formula(text: str) -> tuple[dict[str, float], int]:
    s = text.strip().replace(" ", "")
    charge = 0
    # Trailing charge: "+2"/"-2" after the formula (ATcT "[He]+2"), or a bare sign ("CN-",
    # "O2-": the digits before a bare sign are the atom count, charge 1).
    m = re.search(r"([+-])(\d+)$", s)
    if m and m.start() > 0:
        charge = int(m.group(2)) * (1 if m.group(1) == "+" else -1)
        s = s[: m.start()]
    else:
        m = re.search(r"[+-]$", s)
        if m and m.start() > 0:
            charge = 1 if m.group(0) == "+" else -1
            s = s[: m.start()]
    counts: dict[str, float] = {}
    parts = re.split(r"[.·*]", s)
    for part in parts:
        if not part:
            raise ValueError("empty formula part")
        mult = 1.0
        mm = re.match(r"^(\d+(?:\.\d+)?)(?=[A-Z(\[])", part)
        if mm and len(parts) > 1:
            mult = float(mm.group(1))
            part = part[mm.end():]
        for k, v in _parse_counts(part).items():
            counts[k] = counts.get(k, 0.0) + mult * v
    if not counts:
        raise ValueError("no elements")
    return counts, charge


def _fmt_count(v: float) -> str:
    if abs(v - 1.0) < 1e-12:
        return ""
    if abs(v - round(v)) < 1e-9:
        return str(int(round(v)))
    return f"{v:g}"


def hill_formula(text: str) -> str:
    """Normalise a chemical formula to Hill order.

    Hill system (E. A. Hill, J. Am. Chem. Soc. 22 (1900) 478-494): with carbon present, C first,
    then H, then the other elements alphabetically; without carbon, all elements alphabetically.
    Groups in parentheses/brackets, counts, hydrate dots (``CuSO4.5H2O``) and a trailing phase
    suffix (``(g)``) are accepted; a trailing charge is kept as ``+``/``-``/``+2``...

    Parameters
    ----------
    text : str
        e.g. ``"CH3C(O)OH"``, ``"[CN]-"``, ``"H2O (g)"``.

    Returns
    -------
    str
        e.g. ``"C2H4O2"``, ``"CN-"``, ``"H2O"``.

    Raises
    ------
    ValueError
        Text that is not a formula.
    """
    body, _ = _split_phase(text)
    counts, charge = _parse_formula(body)
    counts = {k: v for k, v in counts.items() if abs(v) > 1e-12}
    if "C" in counts:
        order = ["C"] + (["H"] if "H" in counts else []) + sorted(k for k in counts if k not in ("C", "H"))
    else:
        order = sorted(counts)
    out = "".join(f"{k}{_fmt_count(counts[k])}" for k in order)
    if charge:
        out += ("+" if charge > 0 else "-") + (str(abs(charge)) if abs(charge) != 1 else "")
    return out


def _try_hill(text) -> str | None:
    if not isinstance(text, str) or not text.strip():
        return None
    try:
        return hill_formula(text)
    except (ValueError, KeyError, IndexError):
        return None


# ------------------------------------------------------------------------------------------
# Datasets
# ------------------------------------------------------------------------------------------


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
        return f"{self.title} ({self.key}) {self.version}, via chemicals {_chemicals_version()}"


@functools.lru_cache(maxsize=1)
def _chemicals_version() -> str:
    try:
        import chemicals

        return str(chemicals.__version__)
    except Exception:  # pragma: no cover - chemicals is a dependency
        return "?"


@functools.lru_cache(maxsize=1)
def _atct_version() -> str:
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

_PHASES = {"g": "g", "gas": "g", "l": "l", "liq": "l", "liquid": "l", "s": "s", "cr": "s", "solid": "s",
           "c": "s"}


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


def _nan_to_none(x):
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return None if not np.isfinite(v) else v


@functools.lru_cache(maxsize=1)
def _tables():
    """Load the chemicals tables once: {dataset: {quantity: {phase: {cas: payload}}}} plus
    metadata {cas: (name, raw formula)}."""
    import chemicals.reaction  # noqa: F401  (registers the data files)
    from chemicals import heat_capacity as hc
    from chemicals.data_reader import data_source

    ver = _atct_version()
    meta: dict[str, tuple[str | None, str | None]] = {}
    tabs: dict = {"ATcT": {"formation_enthalpy": {}}, "JANAF": {}, "shomate": {"heat_capacity": {}}}

    # --- ATcT (columns CAS, Chemical, Formula, Hf?_0K, Hf?, uncertainty)
    for ph, col in (("g", "Hfg"), ("l", "Hfl")):
        df = data_source(f"ATcT {ver} ({ph}).tsv")
        d = {}
        for cas, row in zip(df.index, df.itertuples(index=False)):
            r = row._asdict()
            val = _nan_to_none(r.get(col))
            if val is None:
                continue
            name = r.get("Chemical") if isinstance(r.get("Chemical"), str) else None
            form = r.get("Formula") if isinstance(r.get("Formula"), str) else None
            d[str(cas)] = (val, _nan_to_none(r.get("uncertainty")), name, form)
            meta.setdefault(str(cas), (name, _split_phase(form)[0] if form else None))
        tabs["ATcT"]["formation_enthalpy"][ph] = d

    # --- JANAF 1998 298.15 K values (columns Chemical, formula, Hfl Gfl S0l Cpl Hfg Gfg S0g Cpg)
    df = data_source("JANAF_1998.tsv")
    jq = {"formation_enthalpy": "Hf", "formation_gibbs_energy": "Gf", "standard_entropy": "S0"}
    for q in jq:
        tabs["JANAF"][q] = {"g": {}, "l": {}}
    for cas, row in zip(df.index, df.itertuples(index=False)):
        r = row._asdict()
        cas = str(cas)
        name = r.get("Chemical") if isinstance(r.get("Chemical"), str) else None
        form = r.get("formula") if isinstance(r.get("formula"), str) else None
        # JANAF names/formulas take precedence over ATcT's structural formulas for metadata
        meta[cas] = (name or meta.get(cas, (None, None))[0], form or meta.get(cas, (None, None))[1])
        for q, stem in jq.items():
            for ph in ("g", "l"):
                v = _nan_to_none(r.get(f"{stem}{ph}"))
                if v is not None:
                    tabs["JANAF"][q][ph][cas] = (v, None, name, form)

    # --- JANAF 1998 Cp tables (CAS -> [T list, Cp list])
    tabs["JANAF"]["heat_capacity"] = {
        "g": dict(hc.Cp_dict_JANAF_gas), "l": dict(hc.Cp_dict_JANAF_liquid), "s": dict(hc.Cp_dict_JANAF_solid)}

    # --- WebBook Shomate (CAS -> [solid, liquid, gas], each None or [[Tlo, Thi, A..E SI form], ...])
    sh = hc.WebBook_Shomate_coefficients
    for i, ph in enumerate(("s", "l", "g")):
        tabs["shomate"]["heat_capacity"][ph] = {cas: v[i] for cas, v in sh.items() if v[i] is not None}
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
# Results
# ------------------------------------------------------------------------------------------


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
        return f"{self.dataset_title} ({self.dataset}) {self.version}, via chemicals {_chemicals_version()}: {who}"


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
        return f"{self.dataset_title} ({self.dataset}) {self.version}, via chemicals {_chemicals_version()}: {who}"

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


def _shomate_si_to_nist(c) -> list[float]:
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
        ranges = sorted(((float(r[0]), float(r[1]), _shomate_si_to_nist(r[2:7])) for r in payload),
                        key=lambda r: r[0])
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
