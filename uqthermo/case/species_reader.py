"""Read ``[species.*]`` tables: phases, heat-capacity curves, transitions, library look-ups."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ..errors import UqthermoError
from ..thermo import cp as cpm
from ..thermo.formula import parse_formula
from ..thermo.species import Phase, Species, Transition
from . import distributions_adapter as dist
from .loader import (
    CP_MODELS,
    PHASE_ALIASES,
    PHASE_SYMBOLS,
    POLY_TERMS,
    Collector,
    _check_name,
    _is_table,
    _quantity,
    _temperature,
    make_datum,
    matrix,
    read_uncertain,
    register,
)
from .schema import Datum, Settings

SPECIES_KEYS = {"formula", "name", "cas", "smiles", "note", "transition", "source"} | set(PHASE_SYMBOLS)
_PRIVATE = {"_assumed", "_dataset", "_provenance", "_estimate", "_label"}
PHASE_KEYS = {"formation_enthalpy", "standard_entropy", "heat_capacity", "note", "source"}
CP_KEYS = {"model", "value", "u", "U", "k", "relative_u", "half_width", "distribution", "dof", "coefficients", "ranges",
           "T", "unit", "correlation", "covariance", "source", "extrapolate", "library", "note", "lower", "upper"}
_CP_COMMON = {"model", "source", "extrapolate", "library", "note"}
#: keys each heat-capacity model reads; any other known key is refused rather than ignored
CP_MODEL_KEYS = {
    "constant": _CP_COMMON | {"value", "u", "U", "k", "relative_u", "half_width", "distribution", "dof", "lower",
                              "upper", "T"},
    "polynomial": _CP_COMMON | {"coefficients", "T", "unit", "u", "relative_u", "correlation", "covariance"},
    "shomate": _CP_COMMON | {"ranges", "u", "relative_u", "correlation", "covariance"},
    "nasa7": _CP_COMMON | {"ranges", "u", "relative_u", "correlation", "covariance"},
}
RANGE_KEYS = {"T", "coefficients", "u", "correlation", "covariance"}
MAX_ABS_ENTHALPY = 1e8      # J/mol (100 000 kJ/mol): far beyond any molecule
MAX_CP = 1e4                # J/(mol K)


def read_species(c: Collector, node: Any, data: dict[str, Datum], settings: Settings, *, library: bool = True,
                 demands: list | None = None) -> dict[str, Species]:
    """Read ``[species.*]``; ``demands`` (from :mod:`.temperature_windows`) give the temperature
    windows that ``library = "auto"`` heat-capacity curves must cover."""
    from .library_auto import SpeciesLibrary

    out: dict[str, Species] = {}
    if node is None:
        c.add("species", "no species defined; add at least one [species.NAME] table")
        return out
    if not _is_table(node):
        c.add("species", "must be a table of species ([species.NAME])")
        return out
    if not node:
        c.add("species", "no species defined; add at least one [species.NAME] table")
        return out
    from .limits import MAX_SPECIES

    if len(node) > MAX_SPECIES:
        c.add("species", f"{len(node)} species; a case holds at most {MAX_SPECIES} (keep the species the outputs need)")
        return out
    for name, sp in node.items():
        key = f"species.{name}"
        if not _check_name(c, name, key):
            continue
        if not _is_table(sp):
            c.add(key, "must be a table with phase data (g, l, s/cr, aq)")
            continue
        c.unknown_keys(sp, SPECIES_KEYS, key)
        lib = SpeciesLibrary(c, key, name, sp, library)
        lib.allow_extrapolation = bool(settings.allow_extrapolation)
        formula = sp.get("formula", name)
        if "formula" not in sp and library and (_uses_library(sp) or any(k in sp for k in ("cas", "name", "smiles"))):
            filled = _fill_formula(c, lib, sp, name)
            if filled is None:
                continue
            formula = filled
        if not isinstance(formula, str):
            c.add(f"{key}.formula", "must be a string such as \"C2H6O\"")
            continue
        try:
            parse_formula(formula)
        except (UqthermoError, ValueError) as e:   # ValueError: the thermo parser on e.g. "NaCl-." (reported)
            c.add(f"{key}.formula" if "formula" in sp else key,
                  f"cannot read formula {formula!r}: {getattr(e, 'message', None) or 'malformed charge or count'}"
                  + ("" if "formula" in sp else " (give formula = \"...\")"))
            continue
        phases: dict[str, Phase] = {}
        windows = _windows(lib, sp, name, demands or [], settings) if _uses_library(sp) else {}
        for sym in PHASE_SYMBOLS:
            if sym in sp:
                ph = _phase(c, sp[sym], f"{key}.{sym}", name, sym, formula, sp.get("cas"), data, settings, library,
                            lib, windows)
                if ph is not None:
                    phases[sym] = ph
        if not any(s in sp for s in PHASE_SYMBOLS):
            c.add(key, "no phase data; add e.g. [species.%s.g] with formation_enthalpy and heat_capacity" % name)
            continue
        transitions = _transitions(c, sp.get("transition", []), key, name, phases, data, lib)
        try:
            out[name] = Species(name=name, formula=formula, phases=phases, transitions=transitions)
        except UqthermoError as e:
            c.add(key, e.message)
    _library_warnings(c, data)
    return out


def _uses_library(sp: dict) -> bool:
    """Whether a species table has a ``library = "auto"``/source reference anywhere."""
    from .library_auto import is_auto_reference

    for sym in PHASE_SYMBOLS:
        ph = sp.get(sym)
        if _is_table(ph) and any(is_auto_reference(v) for v in ph.values()):
            return True
    for t in sp.get("transition", []) if isinstance(sp.get("transition"), list) else []:
        if _is_table(t) and any(is_auto_reference(t.get(k)) for k in ("temperature", "enthalpy")):
            return True
    return False


def _fill_formula(c: Collector, lib, sp: dict, name: str) -> str | None:
    """Formula of a species given by cas/name/smiles (or a key that is a name), from the library."""
    if not any(k in sp for k in ("cas", "name", "smiles")):
        try:
            parse_formula(name)
            return name                       # the key is a formula: keep today's behaviour
        except (UqthermoError, ValueError):
            lib.node = dict(sp, name=name)    # the key is a name: look it up as one
    ident = lib.identity()
    if ident is None:
        return None
    if ident.formula:
        return ident.formula
    if isinstance(sp.get("smiles"), str):
        try:
            from rdkit import Chem
            from rdkit.Chem.rdMolDescriptors import CalcMolFormula

            m = Chem.MolFromSmiles(sp["smiles"])
            if m is not None:
                return CalcMolFormula(m)
        except ImportError:
            pass
    c.add(f"species.{name}", "the library has no formula for this species; give formula = \"...\"")
    return None


def _windows(lib, sp: dict, name: str, demands: list, settings: Settings) -> dict:
    from .temperature_windows import phase_windows

    mine = [d for d in demands if d.species == name]
    trs = []
    for t in sp.get("transition", []) if isinstance(sp.get("transition"), list) else []:
        if not _is_table(t):
            continue
        fr, to, tn = t.get("from"), t.get("to"), t.get("temperature")
        T = None
        if _is_table(tn) and "library" in tn:
            T = lib.nominal_transition_temperature(fr, to)
        else:
            from .units import parse_quantity

            try:
                T = parse_quantity(tn.get("value") if _is_table(tn) else tn, "temperature")
            except Exception:
                T = None
        if T is not None and isinstance(fr, str) and isinstance(to, str):
            trs.append((fr, to, T))
    syms = [s for s in PHASE_SYMBOLS if s in sp]
    anchored = {s for s in syms if _is_table(sp[s]) and "formation_enthalpy" in sp[s]}
    return phase_windows(mine, trs, syms, anchored, settings.reference_temperature)


def _library_warnings(c: Collector, data: dict) -> None:
    """One grouped warning for library data with assumed uncertainties, one for estimates."""
    assumed = [d for d in data.values() if getattr(d, "provenance", None) and d.assumed]
    est = [d for d in data.values() if getattr(d, "provenance", None) and d.provenance.get("estimate")]
    if assumed:
        c.warn("", f"{len(assumed)} library datum(s) carry an assumed uncertainty (no source states one and the "
                   "sources do not disagree by more): " + ", ".join(f"{d.id} ({d.stated})" for d in assumed)
               + " — check them")
    if est:
        c.warn("", f"ESTIMATES, not measurements: {len(est)} library datum(s) are group-contribution estimates: "
                   + ", ".join(d.id for d in est) + " — replace them by measured data where the result matters")

def _phase(c: Collector, node: Any, key: str, sp: str, sym: str, formula: str, cas: Any, data: dict,
           settings: Settings, library: bool, lib=None, windows: dict | None = None) -> Phase | None:
    if not _is_table(node):
        c.add(key, "must be a table with formation_enthalpy, standard_entropy and/or heat_capacity")
        return None
    c.unknown_keys(node, PHASE_KEYS, key)
    fh = se = None
    ident = cas if isinstance(cas, str) and cas else formula
    if "formation_enthalpy" in node:
        fh = _sourced_scalar(c, node["formation_enthalpy"], f"{key}.formation_enthalpy", "molar_energy",
                             f"{sp}.{sym}.formation_enthalpy", "formation enthalpy", sp, sym, data, ident, library, lib)
        if fh is not None and abs(fh) > MAX_ABS_ENTHALPY:
            c.add(f"{key}.formation_enthalpy", f"{fh / 1e3:.4g} kJ/mol is not a plausible formation enthalpy")
            fh = None
    if "standard_entropy" in node:
        se = _sourced_scalar(c, node["standard_entropy"], f"{key}.standard_entropy", "molar_entropy",
                             f"{sp}.{sym}.standard_entropy", "standard entropy", sp, sym, data, ident, library, lib)
        if se is not None and sym != "aq" and se <= 0:
            c.add(f"{key}.standard_entropy", "the standard entropy of a neutral species is positive (third law)")
            se = None
    cp = None
    if "heat_capacity" in node:
        t_ref = settings.reference_temperature
        win = (windows or {}).get(sym) or (windows or {}).get(PHASE_ALIASES.get(sym, sym)) or (t_ref, t_ref)
        cp = _heat_capacity(c, node["heat_capacity"], f"{key}.heat_capacity", sp, sym, data, settings, ident, library,
                            lib, win)
    return Phase(symbol=sym, cp=cp, formation_enthalpy=fh, standard_entropy=se)


def _sourced_scalar(c: Collector, node: Any, key: str, dimension: str, datum_id: str, quantity: str, sp: str,
                    sym: str, data: dict, ident: str, library: bool, lib=None) -> float | None:
    lib_name = ""
    from .library_auto import is_auto_reference

    if lib is not None and is_auto_reference(node):
        node = lib.scalar(node, key, quantity, sym)
        if node is None:
            return None
        return _register_auto(c, node, key, dimension, datum_id, quantity, sp, sym, data)
    if _is_table(node) and "library" in node:
        from .library_reader import resolve_scalar

        node, lib_name = resolve_scalar(c, node, key, quantity, ident, sym, enabled=library)
        if node is None:
            return None
    assumed = bool(lib_name and _is_table(node) and node.pop("_assumed", False))
    parsed = read_uncertain(c, node, key, dimension)
    if parsed is None:
        return None
    d = make_datum(datum_id, quantity, dimension, parsed, species=sp, phase=sym, library=lib_name)
    if assumed:
        d.assumed = True
        c.warn(key, f"the {lib_name} dataset states no uncertainty for this value; an assumed uncertainty ({d.stated}) is used — check it")
    register(c, data, d, key)
    return parsed[0]


def _register_auto(c: Collector, node: dict, key: str, dimension: str, datum_id: str, quantity: str, sp: str,
                   sym: str, data: dict, transition: str = "") -> float | None:
    """Register a datum resolved by ``library = "auto"`` (private keys consumed here)."""
    prov, assumed, label = node.pop("_provenance"), node.pop("_assumed"), node.pop("_label")
    node.pop("_estimate", None)
    parsed = read_uncertain(c, node, key, dimension, temperature=dimension == "temperature")
    if parsed is None:
        return None
    d = make_datum(datum_id, quantity, dimension, parsed, species=sp, phase=transition or sym, library=label)
    d.assumed = bool(assumed)
    d.provenance = prov
    register(c, data, d, key)
    return parsed[0]


def _float_list(c: Collector, node: Any, n: int | None, key: str) -> list[float] | None:
    if not isinstance(node, list) or (n is not None and len(node) != n) or not node:
        c.add(key, f"must be a list of {n if n else 'some'} numbers")
        return None
    out = []
    for i, x in enumerate(node):
        if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
            c.add(f"{key}[{i}]", f"must be a finite number, got {x!r}")
            return None
        out.append(float(x))
    return out


def _t_range(c: Collector, node: Any, key: str) -> tuple[float, float] | None:
    if not (isinstance(node, list) and len(node) == 2):
        c.add(key, "must be [lower, upper] temperatures, e.g. [\"298 K\", \"1000 K\"]")
        return None
    lo = _temperature(c, node[0], f"{key}[0]")
    hi = _temperature(c, node[1], f"{key}[1]")
    if lo is None or hi is None:
        return None
    if not hi > lo:
        c.add(key, f"upper temperature must exceed the lower one ({node[0]} .. {node[1]})")
        return None
    return lo, hi


def _heat_capacity(c: Collector, node: Any, key: str, sp: str, sym: str, data: dict, settings: Settings,
                   ident: str, library: bool, lib=None, window: tuple | None = None):
    lib_name = ""
    from .library_auto import is_auto_reference

    if lib is not None and is_auto_reference(node):
        node = lib.heat_capacity(node, key, sym, window or (settings.reference_temperature,) * 2)
        if node is None:
            return None
        lib_name = node.pop("_label")
    elif _is_table(node) and "library" in node:
        from .library_reader import resolve_heat_capacity

        node, lib_name = resolve_heat_capacity(c, node, key, ident, sym, enabled=library)
        if node is None:
            return None
    if not _is_table(node):
        c.add(key, "must be a table with model = \"constant\" | \"polynomial\" | \"shomate\" | \"nasa7\"")
        return None
    model = node.get("model")
    if model not in CP_MODELS:
        c.unknown_keys(node, CP_KEYS | _PRIVATE, key)
        c.add(f"{key}.model", f"unknown heat-capacity model {model!r}; use one of {', '.join(CP_MODELS)}")
        return None
    before = len(c.problems)
    for k in node:
        if k in CP_KEYS and k not in CP_MODEL_KEYS[model]:
            c.add(f"{key}.{k}", f"not used by the {model} model (its keys: {', '.join(sorted(CP_MODEL_KEYS[model]))})")
    c.unknown_keys(node, CP_KEYS | _PRIVATE, key)
    if len(c.problems) > before:
        return None
    extrap = node.get("extrapolate", settings.allow_extrapolation)
    if not isinstance(extrap, bool):
        c.add(f"{key}.extrapolate", "must be true or false")
        return None
    datum_id = f"{sp}.{sym}.heat_capacity"
    source = node.get("source", "") if isinstance(node.get("source", ""), str) else ""
    try:
        if model == "constant":
            return _cp_constant(c, node, key, datum_id, sp, sym, data, extrap, lib_name)
        if model == "polynomial":
            return _cp_polynomial(c, node, key, datum_id, sp, sym, data, extrap, source, lib_name)
        return _cp_ranges(c, node, key, model, datum_id, sp, sym, data, extrap, source, lib_name)
    except UqthermoError as e:
        c.add(key, e.message)
        return None


def _cp_constant(c, node, key, datum_id, sp, sym, data, extrap, lib_name):
    sub = {k: v for k, v in node.items() if k not in ("model", "T", "extrapolate", "unit", "coefficients", "ranges",
                                                       "correlation", "covariance", "_assumed", "_dataset")}
    if "value" not in sub:
        c.add(f"{key}.value", "a constant heat capacity needs value = \"... J/(mol*K)\"")
        return None
    parsed = read_uncertain(c, sub, key, "molar_entropy", positive=True)
    if parsed is None:
        return None
    if parsed[0] > MAX_CP:
        c.add(f"{key}.value", f"{parsed[0]:.4g} J/(mol*K) is not a plausible molar heat capacity")
        return None
    t_lo, t_hi = 0.0, math.inf
    if "T" in node:
        tr = _t_range(c, node["T"], f"{key}.T")
        if tr is None:
            return None
        t_lo, t_hi = tr
    cp = cpm.ConstantCp(parsed[0], t_min=t_lo, t_max=t_hi, allow_extrapolation=extrap)
    d = make_datum(datum_id, "heat capacity", "molar_entropy", parsed, species=sp, phase=sym, library=lib_name)
    d.kind = "coefficients"
    d.positions = [0]
    d.nominal = np.array([parsed[0]])
    if "T" not in node:
        c.warn(key, "constant heat capacity with no stated validity range; it is used at every temperature of the path")
    register(c, data, d, key)
    return cp


def _cp_unit_factor(c, node, key) -> float | None:
    if "unit" not in node:
        return 1.0
    u = node["unit"]
    f = _quantity(c, f"1 {u}" if isinstance(u, str) else u, f"{key}.unit", "molar_entropy")
    return f


def _uncertainty_block(c: Collector, node: dict, key: str, names: list[str], nominal: np.ndarray, positions_all: list[int],
                       u_node: Any, corr_node: Any, cov_node: Any, factor: float = 1.0):
    """Per-coefficient uncertainty → (positions, distributions, correlation) or None (problem recorded)."""
    n = len(names)
    cov = None
    if cov_node is not None:
        if u_node is not None or corr_node is not None:
            c.add(key, "give either covariance, or u (with an optional correlation), not both")
            return None
        cov = matrix(c, cov_node, n, f"{key}.covariance")
        if cov is None:
            return None
        cov = cov * factor * factor
        if not np.allclose(cov, cov.T, rtol=1e-9, atol=0):
            c.add(f"{key}.covariance", "covariance matrix must be symmetric")
            return None
        u = np.sqrt(np.clip(np.diag(cov), 0, None))
        if np.any(np.diag(cov) < 0):
            c.add(f"{key}.covariance", "covariance matrix has a negative variance on its diagonal")
            return None
    else:
        if isinstance(u_node, dict):
            vals = []
            for nm in names:
                x = u_node.get(nm, 0.0)
                if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
                    c.add(f"{key}.u.{nm}", f"must be a finite number, got {x!r}")
                    return None
                vals.append(float(x))
            extra = set(u_node) - set(names)
            if extra:
                c.add(f"{key}.u", f"u given for coefficient(s) not in the curve: {', '.join(sorted(extra))}")
                return None
            u = np.array(vals)
        else:
            lst = _float_list(c, u_node, n, f"{key}.u")
            if lst is None:
                return None
            u = np.array(lst)
        u = u * factor
        if np.any(u < 0):
            c.add(f"{key}.u", "standard uncertainties must not be negative")
            return None
        if not np.any(u > 0):
            c.add(f"{key}.u", "all uncertainties are zero; omit u to make the curve exact")
            return None
    if corr_node is not None:
        r = matrix(c, corr_node, n, f"{key}.correlation")
        if r is None:
            return None
        if not np.allclose(r, r.T, atol=1e-12):
            c.add(f"{key}.correlation", "correlation matrix must be symmetric")
            return None
        if not np.allclose(np.diag(r), 1.0):
            c.add(f"{key}.correlation", "correlation matrix must have ones on its diagonal")
            return None
        bad = np.argwhere(np.abs(r) > 1 + 1e-12)
        if len(bad):
            i, j = bad[0]
            c.add(f"{key}.correlation", f"entry [{i}][{j}] = {r[i, j]:g} lies outside [-1, 1]")
            return None
    elif cov is not None:
        with np.errstate(invalid="ignore", divide="ignore"):
            r = cov / np.outer(u, u)
        r[~np.isfinite(r)] = 0.0
        np.fill_diagonal(r, 1.0)
    else:
        r = np.eye(n)
    if n > 1:
        w, v = np.linalg.eigh((r + r.T) / 2)
        if w[0] < -1e-10:
            which = "correlation" if corr_node is not None else "covariance"
            involved = [names[i] for i in range(n) if abs(v[i, 0]) > 0.1]
            pairs = ", ".join(f"[{i}][{j}] = {r[i, j]:g}" for i in range(n) for j in range(i + 1, n)
                              if names[i] in involved and names[j] in involved and r[i, j] != 0)
            c.add(f"{key}.{which}", f"matrix is not positive semidefinite (smallest eigenvalue {w[0]:.3g}): the entries "
                                    f"{pairs} between {', '.join(involved)} are inconsistent; check them")
            return None
    keep = [i for i in range(n) if u[i] > 0]
    dists = [dist.normal(float(nominal[i]), float(u[i])) for i in keep]
    return [positions_all[i] for i in keep], [names[i] for i in keep], dists, r[np.ix_(keep, keep)]


def _register_cp_datum(c, node, key, datum_id, sp, sym, data, nominal: np.ndarray, names: list[str],
                       per_coef, source, lib_name, model_label: str):
    """Register the heat-capacity datum: relative_u → one scale factor; per-coefficient u → a block."""
    kinds = [k for k in ("relative_u", "u", "covariance") if k in node]
    if "relative_u" in node and len(kinds) > 1:
        c.add(key, "give either relative_u (one factor on the whole curve) or per-coefficient u/covariance, not both")
        return
    if "relative_u" in node:
        from .loader import _percent

        r = _percent(c, node["relative_u"], f"{key}.relative_u")
        if r is None:
            return
        d = Datum(id=datum_id, quantity="heat capacity", unit="1", to_report=1.0, kind="scale",
                  distributions=[dist.normal(1.0, r)], variable_names=[f"{datum_id}[scale]"], correlation=None,
                  stated=f"relative u = {node['relative_u']} on the whole {model_label} curve", source=source,
                  species=sp, phase=sym, library=lib_name, nominal=nominal)
        if model_label == "nasa7":   # a6, a7 are integration constants, not heat-capacity coefficients
            d.positions = [i for i in range(len(nominal)) if i % 7 < 5]
        d.assumed = bool(node.get("_assumed"))
        d.provenance = node.get("_provenance")
        if d.assumed and d.provenance is None:
            c.warn(key, f"{lib_name} states no uncertainty for this curve; relative u = {node['relative_u']} is assumed — check it")
        register(c, data, d, key)
        return
    if per_coef is None:
        if lib_name:
            c.add(key, f"the {lib_name} curve has no stated uncertainty; add relative_u = \"... %\" (it will be flagged as assumed)")
            return
        d = Datum(id=datum_id, quantity="heat capacity", unit="1", to_report=1.0, kind="scale",
                  distributions=[dist.exact(1.0)], variable_names=[f"{datum_id}[scale]"], correlation=None,
                  stated="exact (no uncertainty stated)", source=source, species=sp, phase=sym, nominal=nominal)
        register(c, data, d, key)
        return
    positions, vnames, dists, r = per_coef
    d = Datum(id=datum_id, quantity="heat capacity", unit="coefficients", to_report=1.0, kind="coefficients",
              distributions=dists, variable_names=[f"{datum_id}[{n}]" for n in vnames], correlation=r,
              stated=f"per-coefficient u ({len(dists)} coefficients" + (", correlated)" if not np.allclose(r, np.eye(len(r))) else ")"),
              source=source, species=sp, phase=sym, library=lib_name, positions=positions, nominal=nominal)
    register(c, data, d, key)


def _cp_polynomial(c, node, key, datum_id, sp, sym, data, extrap, source, lib_name):
    coefs = node.get("coefficients")
    if not _is_table(coefs) or not coefs:
        c.add(f"{key}.coefficients", "a polynomial needs coefficients = { a = ..., b = ..., c = ..., d = ..., e = ... } "
              "for Cp = a + b·T + c·T² + d·T³ + e/T² (T in K, Cp in J/(mol*K) unless unit is given)")
        return None
    extra = set(coefs) - set(POLY_TERMS)
    if extra:
        c.add(f"{key}.coefficients", f"unknown term(s) {', '.join(sorted(extra))}; use a, b, c, d, e")
        return None
    factor = _cp_unit_factor(c, node, key)
    if factor is None:
        return None
    vec = np.zeros(5)
    for i, t in enumerate(POLY_TERMS):
        if t in coefs:
            x = coefs[t]
            if isinstance(x, bool) or not isinstance(x, (int, float)) or not math.isfinite(x):
                c.add(f"{key}.coefficients.{t}", f"must be a finite number, got {x!r}")
                return None
            vec[i] = float(x) * factor
    t_lo, t_hi = 0.0, math.inf
    if "T" in node:
        tr = _t_range(c, node["T"], f"{key}.T")
        if tr is None:
            return None
        t_lo, t_hi = tr
    else:
        c.warn(key, "polynomial heat capacity with no stated validity range; it is used at every temperature of the path")
    cp = cpm.PolynomialCp(*vec.tolist(), t_min=t_lo, t_max=t_hi, allow_extrapolation=extrap)
    if math.isfinite(t_hi) or t_lo > 0:
        grid = np.linspace(max(t_lo, 1.0), t_hi if math.isfinite(t_hi) else max(t_lo, 1.0) + 3000.0, 64)
        vals = np.asarray(cp.cp(grid))
        if np.any(vals <= 0):
            c.warn(key, f"the polynomial gives Cp ≤ 0 within its range (min {vals.min():.3g} J/(mol*K)); check the coefficients")
    present = [t for t in POLY_TERMS if t in coefs]
    per = None
    if "u" in node or "covariance" in node:
        unode = node.get("u")
        if isinstance(unode, list):
            if len(unode) != len(present):
                c.add(f"{key}.u", f"give one u per coefficient written ({', '.join(present)}), or a table {{ a = ..., ... }}")
                return None
            unode = dict(zip(present, unode))
        names = present
        per = _uncertainty_block(c, node, key, names, vec[[POLY_TERMS.index(t) for t in names]] ,
                                 [POLY_TERMS.index(t) for t in names], unode, node.get("correlation"),
                                 node.get("covariance"), factor)
        if per is None:
            return None
    elif "correlation" in node:
        c.add(f"{key}.correlation", "a correlation matrix needs per-coefficient u")
        return None
    _register_cp_datum(c, node, key, datum_id, sp, sym, data, vec, present, per, source, lib_name, "polynomial")
    return cp


def _cp_ranges(c, node, key, model, datum_id, sp, sym, data, extrap, source, lib_name):
    ncoef = 5 if model == "shomate" else 7
    labels = list("ABCDE") if model == "shomate" else [f"a{i}" for i in range(1, 8)]
    ranges = node.get("ranges")
    if not isinstance(ranges, list) or not ranges:
        c.add(f"{key}.ranges", f"a {model} curve needs ranges = [ {{ T = [\"lo K\", \"hi K\"], coefficients = [...{ncoef} numbers] }} ]")
        return None
    parsed_ranges = []
    u_blocks = []
    for i, r in enumerate(ranges):
        rk = f"{key}.ranges[{i}]"
        if not _is_table(r):
            c.add(rk, "must be a table with T and coefficients")
            return None
        c.unknown_keys(r, RANGE_KEYS, rk)
        tr = _t_range(c, r.get("T"), f"{rk}.T")
        coefs = r.get("coefficients")
        if model == "shomate" and isinstance(coefs, list) and len(coefs) in (6, 7, 8):
            coefs = coefs[:5]   # F, G, H of the WebBook form are not heat-capacity coefficients
        vals = _float_list(c, coefs, ncoef, f"{rk}.coefficients")
        if tr is None or vals is None:
            return None
        parsed_ranges.append((tr[0], tr[1], vals))
        u_blocks.append((r.get("u"), r.get("correlation"), r.get("covariance")))
    order = sorted(range(len(parsed_ranges)), key=lambda j: parsed_ranges[j][0])
    for a, b in zip(order, order[1:]):
        if parsed_ranges[b][0] < parsed_ranges[a][1] - 1e-9:
            c.add(f"{key}.ranges", f"ranges {a} and {b} overlap ({parsed_ranges[a][1]:g} K > {parsed_ranges[b][0]:g} K)")
            return None
        if parsed_ranges[b][0] > parsed_ranges[a][1] + 1e-6:
            c.add(f"{key}.ranges", f"gap between ranges {a} and {b} ({parsed_ranges[a][1]:g} K .. {parsed_ranges[b][0]:g} K)")
            return None
    parsed_ranges = [parsed_ranges[j] for j in order]
    u_blocks = [u_blocks[j] for j in order]
    if model == "shomate":
        cp = cpm.ShomateCp(parsed_ranges, allow_extrapolation=extrap)
    else:
        cp = cpm.Nasa7Cp(parsed_ranges, allow_extrapolation=extrap)
    nominal = np.asarray(cp.coefficients, dtype=float)
    any_range_u = any(b[0] is not None or b[2] is not None for b in u_blocks)
    top_u = node.get("u") is not None or node.get("covariance") is not None
    per = None
    if top_u and any_range_u:
        c.add(key, "give per-coefficient u either at the top (single range) or inside each range, not both")
        return None
    if top_u:
        if len(parsed_ranges) != 1:
            c.add(f"{key}.u", "with several ranges, give u inside each range (ranges[i].u)")
            return None
        u_blocks = [(node.get("u"), node.get("correlation"), node.get("covariance"))]
    if top_u or any_range_u:
        positions, vnames, dists = [], [], []
        blocks = []
        for j, (un, rn, cn) in enumerate(u_blocks):
            if un is None and cn is None:
                continue
            lo, hi, _ = parsed_ranges[j]
            names = [f"{lab}@{lo:g}-{hi:g}K" for lab in labels]
            pos = list(range(j * ncoef, (j + 1) * ncoef))
            res = _uncertainty_block(c, node, f"{key}.ranges[{j}]" if not top_u else key, names,
                                     nominal[pos], pos, un, rn, cn)
            if res is None:
                return None
            positions += res[0]
            vnames += res[1]
            dists += res[2]
            blocks.append(res[3])
        from scipy.linalg import block_diag

        per = (positions, vnames, dists, block_diag(*blocks))
    _register_cp_datum(c, node, key, datum_id, sp, sym, data, nominal, labels, per, source, lib_name, model)
    return cp


def _transitions(c: Collector, node: Any, key: str, sp: str, phases: dict[str, Phase], data: dict, lib=None
                 ) -> list[Transition]:
    out: list[Transition] = []
    if not isinstance(node, list):
        c.add(f"{key}.transition", "must be an array of tables ([[species.%s.transition]])" % sp)
        return out
    pairs: dict[frozenset, int] = {}
    for i, t in enumerate(node):
        tk = f"{key}.transition[{i}]"
        if not _is_table(t):
            c.add(tk, "must be a table with from, to, temperature and enthalpy")
            continue
        c.unknown_keys(t, {"from", "to", "temperature", "enthalpy", "source", "note", "pressure"}, tk)
        fr, to = t.get("from"), t.get("to")
        ok = True
        for k, v in (("from", fr), ("to", to)):
            if v not in PHASE_SYMBOLS:
                c.add(f"{tk}.{k}", f"unknown phase {v!r}; use one of {', '.join(PHASE_SYMBOLS)}")
                ok = False
            elif v not in phases:
                c.add(f"{tk}.{k}", f"phase {v!r} has no data in [species.{sp}.{v}]")
                ok = False
        if not ok:
            continue
        if fr == to:
            c.add(tk, f"a transition from {fr!r} to itself is meaningless")
            continue
        pair = frozenset((fr, to))
        if pair in pairs:
            c.add(tk, f"transition between {fr!r} and {to!r} is given twice (also transition[{pairs[pair]}]); "
                      "give each transition once, in the heating direction")
            continue
        pairs[pair] = i
        if "temperature" not in t or "enthalpy" not in t:
            c.add(tk, "needs temperature and enthalpy")
            continue
        tid = f"{sp}.transition.{fr}-{to}"
        from .library_auto import is_auto_reference

        auto_t = lib is not None and is_auto_reference(t["temperature"])
        auto_h = lib is not None and is_auto_reference(t["enthalpy"])
        tnode, hnode = t["temperature"], t["enthalpy"]
        if auto_t:
            tnode = lib.transition(tnode, f"{tk}.temperature", fr, to, "temperature")
            if tnode is None:
                continue
        tt = read_uncertain(c, {k: v for k, v in tnode.items() if not k.startswith("_")} if auto_t else tnode,
                            f"{tk}.temperature", "temperature", temperature=True)
        if tt is None:
            continue
        if auto_h:
            hnode = lib.transition(hnode, f"{tk}.enthalpy", fr, to, "enthalpy", T=tt[0])
            if hnode is None:
                continue
        th = read_uncertain(c, {k: v for k, v in hnode.items() if not k.startswith("_")} if auto_h else hnode,
                            f"{tk}.enthalpy", "molar_energy")
        if th is None:
            continue
        if th[0] < 0 and (fr, to) in (("cr", "l"), ("s", "l"), ("l", "g"), ("cr", "g"), ("s", "g")):
            c.add(f"{tk}.enthalpy", f"melting/vaporisation/sublimation enthalpy must be positive on heating ({fr}→{to})")
            continue
        if abs(th[0]) > 1e6:
            c.add(f"{tk}.enthalpy", f"{th[0] / 1e3:.4g} kJ/mol is not a plausible transition enthalpy")
            continue
        register(c, data, make_datum(f"{tid}.temperature", "transition temperature", "temperature", tt,
                                     species=sp, phase=f"{fr}-{to}"), f"{tk}.temperature")
        register(c, data, make_datum(f"{tid}.enthalpy", "transition enthalpy", "molar_energy", th,
                                     species=sp, phase=f"{fr}-{to}"), f"{tk}.enthalpy")
        for auto, nd, did in ((auto_t, tnode, f"{tid}.temperature"), (auto_h, hnode, f"{tid}.enthalpy")):
            if auto and did in data:
                data[did].library = nd["_label"]
                data[did].provenance = nd["_provenance"]
                data[did].assumed = bool(nd["_assumed"])
        if data[f"{tid}.temperature"].source == "" and isinstance(t.get("source"), str):
            data[f"{tid}.temperature"].source = t["source"]
        if data[f"{tid}.enthalpy"].source == "" and isinstance(t.get("source"), str):
            data[f"{tid}.enthalpy"].source = t["source"]
        out.append(Transition(from_phase=fr, to_phase=to, temperature=tt[0], enthalpy=th[0]))
    # consistency: a phase left twice on heating, or transitions whose temperatures do not rise along a chain
    said: set[str] = set()

    def once(message: str) -> None:     # the same defect is met from every start of the chain
        if message not in said:
            said.add(message)
            c.add(f"{key}.transition", message)

    by_from: dict[str, Transition] = {}
    for t in out:
        if t.from_phase in by_from:
            once(f"phase {t.from_phase!r} has two transitions on heating "
                 f"(to {by_from[t.from_phase].to_phase!r} and to {t.to_phase!r}); keep the stable one")
        by_from[t.from_phase] = t
    for t in out:
        nxt = by_from.get(t.to_phase)
        seen = {t.from_phase}
        cur = t
        while nxt is not None:
            if nxt.temperature <= cur.temperature:
                once(f"{cur.from_phase}→{cur.to_phase} at {cur.temperature:g} K is followed by "
                     f"{nxt.from_phase}→{nxt.to_phase} at {nxt.temperature:g} K; temperatures must rise along the chain")
                break
            if nxt.to_phase in seen:
                once("transitions form a cycle through phases " + ", ".join(sorted(seen | {nxt.from_phase, nxt.to_phase})))
                break
            seen.add(nxt.from_phase)
            cur, nxt = nxt, by_from.get(nxt.to_phase)
    return out
