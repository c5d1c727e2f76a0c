"""Read the ``heat_capacity`` table of a species phase: the Cp models (constant, polynomial, Shomate,
NASA-7), their temperature ranges and the uncertainty of the curve (one relative factor, or
per-coefficient standard uncertainties with correlations or a covariance), as one datum."""

from __future__ import annotations

import math
from typing import Any

import numpy as np

from ...errors import UqthermoError
from ...thermo import cp as cpm
from ..schema import Datum, Settings
from . import distributions as dist
from .fields import (
    CP_MODELS,
    POLY_TERMS,
    Collector,
    is_table,
    make_datum,
    matrix,
    read_percent,
    read_quantity,
    read_temperature,
    read_uncertain,
    register,
)

__all__ = ["read_heat_capacity", "CP_KEYS", "CP_MODEL_KEYS", "RANGE_KEYS", "MAX_CP"]

_PRIVATE = {"_assumed", "_dataset", "_provenance", "_estimate", "_label", "_form"}
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
MAX_CP = 1e4                # J/(mol K)


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
    lo = read_temperature(c, node[0], f"{key}[0]")
    hi = read_temperature(c, node[1], f"{key}[1]")
    if lo is None or hi is None:
        return None
    if not hi > lo:
        c.add(key, f"upper temperature must exceed the lower one ({node[0]} .. {node[1]})")
        return None
    return lo, hi


def _stated_range(c: Collector, node: dict, key: str) -> tuple[float, float] | None:
    """The validity range of a curve from its optional key ``T``: (0, ∞) when absent, None when bad."""
    return _t_range(c, node["T"], f"{key}.T") if "T" in node else (0.0, math.inf)


def read_heat_capacity(c: Collector, node: Any, key: str, sp: str, sym: str, data: dict, settings: Settings,
                       ident: str, library: bool, lib=None, window: tuple | None = None):
    """Read ``[species.SP.SYM.heat_capacity]`` (or its library reference) into a Cp curve; registers
    the datum ``SP.SYM.heat_capacity`` (None after recording the problem)."""
    lib_name = ""
    from .library_auto import is_auto_reference

    if lib is not None and is_auto_reference(node):
        node = lib.heat_capacity(node, key, sym, window or (settings.reference_temperature,) * 2)
        if node is None:
            return None
        lib_name = node.pop("_label")
    elif is_table(node) and "library" in node:
        from .library_named import resolve_heat_capacity

        node, lib_name = resolve_heat_capacity(c, node, key, ident, sym, enabled=library)
        if node is None:
            return None
    if not is_table(node):
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
            cp = _cp_constant(c, node, key, datum_id, sp, sym, data, extrap, lib_name)
        elif model == "polynomial":
            cp = _cp_polynomial(c, node, key, datum_id, sp, sym, data, extrap, source, lib_name)
        else:
            cp = _cp_ranges(c, node, key, model, datum_id, sp, sym, data, extrap, source, lib_name)
    except UqthermoError as e:
        c.add(key, e.message)
        return None
    form = (node.get("_provenance") or {}).get("form") or node.get("_form")
    if cp is not None and isinstance(form, str) and form:
        cp.form = form     # a library curve held in Shomate form is named by its source's own form
    return cp


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
    tr = _stated_range(c, node, key)
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
    f = read_quantity(c, f"1 {u}" if isinstance(u, str) else u, f"{key}.unit", "molar_entropy")
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


def _curve_kind(node: dict, model_label: str) -> str:
    """What the relative u applies to: the library curve's own form (a Zabransky spline, a DIPPR
    polynomial, ...; held in Shomate form inside), else the case's model."""
    prov = node.get("_provenance") or {}
    if prov.get("form"):
        return f"{prov['form']} curve ({prov.get('selected', '')})".replace(" ()", "")
    return f"{model_label} curve"


def _register_cp_datum(c, node, key, datum_id, sp, sym, data, nominal: np.ndarray, names: list[str],
                       per_coef, source, lib_name, model_label: str):
    """Register the heat-capacity datum: relative_u → one scale factor; per-coefficient u → a block."""
    kinds = [k for k in ("relative_u", "u", "covariance") if k in node]
    if "relative_u" in node and len(kinds) > 1:
        c.add(key, "give either relative_u (one factor on the whole curve) or per-coefficient u/covariance, not both")
        return
    if "relative_u" in node:
        r = read_percent(c, node["relative_u"], f"{key}.relative_u")
        if r is None:
            return
        d = Datum(id=datum_id, quantity="heat capacity", unit="1", to_report=1.0, kind="scale",
                  distributions=[dist.normal(1.0, r)], variable_names=[f"{datum_id}[scale]"], correlation=None,
                  stated=f"relative u = {node['relative_u']} on the whole {_curve_kind(node, model_label)}", source=source,
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
    if not is_table(coefs) or not coefs:
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
    tr = _stated_range(c, node, key)
    if tr is None:
        return None
    t_lo, t_hi = tr
    if "T" not in node:
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
        if not is_table(r):
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
