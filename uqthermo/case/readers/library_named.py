"""Resolve ``{ library = "..." }`` references of a case file through the built-in data library.

A case may take a formation enthalpy, a standard entropy or a heat-capacity curve from the
datasets shipped by the ``chemicals`` package instead of typing the numbers
(:mod:`uqthermo.case.library`)::

    [species.CH4]
    formula = "CH4"
    cas = "74-82-8"                    # recommended: formulas can be ambiguous (isomers)
    [species.CH4.g]
    formation_enthalpy = { library = "ATcT" }                      # value and U (k = 2) from ATcT
    standard_entropy   = { library = "JANAF", u = "0.2 J/(mol*K)" } # JANAF states no u: give one
    heat_capacity      = { library = "shomate", relative_u = "1 %" }

The species is looked up by its ``cas`` when given, else by its ``formula``; the phase is the
table's phase symbol (``cr``/``s`` both mean the solid).

Uncertainty rule (one rule for every quantity):

* an uncertainty written by the user (``u``, ``U`` with ``k``, ``half_width``, ``relative_u``,
  with an optional ``distribution``) replaces the dataset's;
* otherwise the dataset's stated uncertainty is used (ATcT: its ± value as an expanded
  uncertainty with k = 2, see :mod:`uqthermo.case.library`);
* a value the dataset states no uncertainty for (JANAF, the WebBook Shomate curves, a few ATcT
  rows) needs one from the user — without it the case has a problem (``uqthermo check`` lists it
  with its key path). With it, the datum is marked *assumed* (the uncertainty is the user's, not
  the dataset's): results.json ``inputs[*].assumed`` is true and the run warns.
* reference elements (formation enthalpy 0 by definition) are exact.

Heat-capacity curves from the library take one ``relative_u`` (a single scale factor on the
whole curve, fully correlated across temperature), since the datasets give no coefficient
uncertainties to build a covariance from. ``extrapolate`` passes through; for
``library = "janaf"`` (a Shomate curve fitted to the JANAF 1998 Cp table) ``T = [lo, hi]``
sets the temperature range fitted.

The returned tables are ordinary case-file tables (``value``/``U``/``k``/``source`` or
``model``/``ranges``/``relative_u``), read by the usual readers, so every check applies.
"""

from __future__ import annotations

from typing import Any

from ...errors import InputError
from .fields import Collector, read_temperature

__all__ = ["resolve_scalar", "resolve_heat_capacity", "library_label", "SCALAR_DATASETS", "CP_DATASETS"]

#: Datasets usable for each scalar quantity (case-file spelling).
SCALAR_DATASETS = {"formation enthalpy": ("ATcT", "JANAF"), "standard entropy": ("JANAF",)}
#: Datasets usable for heat-capacity curves.
CP_DATASETS = ("shomate", "janaf")

_UNCERTAINTY_KEYS = ("u", "U", "half_width", "relative_u")
_SCALAR_KEYS = {"library", "u", "U", "k", "half_width", "relative_u", "distribution", "dof", "lower", "upper",
                "source", "note"}
_CP_KEYS = {"library", "relative_u", "extrapolate", "source", "note", "T"}
_UNITS = {"formation enthalpy": "J/mol", "standard entropy": "J/(mol*K)"}
_LIB_PHASE = {"g": "g", "l": "l", "s": "s", "cr": "s"}
_EXAMPLE_U = {"formation enthalpy": 'u = "0.5 kJ/mol"', "standard entropy": 'u = "0.2 J/(mol*K)"'}


def library_label(dataset: str, version: str) -> str:
    """Short dataset label for reports, e.g. ``"ATcT 1.112 via chemicals 1.5.2"``."""
    from ..library.base import chemicals_version as _chemicals_version

    if dataset == "shomate":
        name = f"NIST WebBook Shomate ({version})"
    else:
        name = f"{dataset} {version}"
    return f"{name} via chemicals {_chemicals_version()}"


def _species_table(key: str) -> str:
    """``species.CO2.g.formation_enthalpy`` → ``[species.CO2]`` (for hints)."""
    parts = key.split(".")
    return "[" + ".".join(parts[:2]) + "]" if len(parts) >= 2 else "[species.NAME]"


def _lookup_message(e: InputError, key: str) -> str:
    msg = e.message
    if getattr(e, "candidates", None) and "CAS" in msg:
        msg += f' (write cas = "..." under {_species_table(key)})'
    return msg


def _check_keys(c: Collector, node: dict, allowed: set, key: str) -> bool:
    bad = [k for k in node if k not in allowed]
    if bad:
        for k in bad:
            if k == "value":
                c.add(f"{key}.value", "give either value or library, not both (library takes the value from the dataset)")
            elif "u" not in allowed and k in ("u", "U", "k", "half_width", "distribution", "dof", "correlation",
                                               "covariance", "coefficients", "ranges", "model"):
                c.add(f"{key}.{k}", "a library curve takes one relative_u = \"... %\" on the whole curve "
                                    "(the datasets give no coefficients' uncertainties to build a covariance from)")
            else:
                c.add(f"{key}.{k}", f"unknown key for a library reference (allowed: {', '.join(sorted(allowed))})")
        return False
    return True


def _dataset_name(c: Collector, node: dict, key: str, allowed: tuple[str, ...]) -> str | None:
    name = node.get("library")
    if not isinstance(name, str) or not name.strip():
        c.add(f"{key}.library", f"must name a dataset: {' or '.join(repr(a) for a in allowed)}")
        return None
    low = name.strip().lower()
    for a in allowed:
        if low == a.lower():
            return a
    from ..library.named import ALIASES as _ALIASES

    canon = _ALIASES.get(low)
    if canon is not None and canon.lower() in [a.lower() for a in allowed]:
        return next(a for a in allowed if a.lower() == canon.lower())
    c.add(f"{key}.library", f"dataset {name!r} has no data for this quantity; use {' or '.join(repr(a) for a in allowed)}")
    return None


def _phase(c: Collector, sym: str, key: str) -> str | None:
    p = _LIB_PHASE.get(sym)
    if p is None:
        c.add(key, f"the data library has no data for phase {sym!r} (only g, l and s/cr); give value = \"...\" instead")
    return p


def resolve_scalar(c: Collector, node: dict, key: str, quantity: str, ident: str, sym: str, enabled: bool
                   ) -> tuple[dict | None, str]:
    """Turn ``{ library = "ATcT", ... }`` into an uncertain-quantity table for :func:`read_uncertain`.

    Parameters
    ----------
    c : Collector
        Problems are recorded here (one line each, with ``key``).
    node : dict
        The case-file table: ``library`` plus optional ``u``/``U`` + ``k``/``half_width``/
        ``relative_u``/``distribution``/``dof``/``source``/``note``.
    key : str
        Key path, e.g. ``"species.CH4.g.formation_enthalpy"``.
    quantity : {"formation enthalpy", "standard entropy"}
    ident : str
        CAS number (preferred) or formula of the species.
    sym : str
        Phase symbol of the table (g, l, cr, s, aq).
    enabled : bool
        False: look-ups are switched off (a problem is recorded).

    Returns
    -------
    (dict or None, str)
        The table (``value`` in J/mol or J/(mol*K), the dataset's ``U`` and ``k`` or the user's
        uncertainty, ``source`` = provenance, ``_assumed`` when the uncertainty is the user's for a
        value the dataset states none for) and the dataset label
        (e.g. ``"ATcT 1.112 via chemicals 1.5.2"``); ``(None, "")`` after recording a problem.
    """
    if not enabled:
        c.add(key, "library look-ups are disabled here; give value = \"...\" with its uncertainty instead")
        return None, ""
    if quantity not in SCALAR_DATASETS:
        c.add(key, f"the data library has no {quantity} data")
        return None, ""
    if not _check_keys(c, node, _SCALAR_KEYS, key):
        return None, ""
    ds = _dataset_name(c, node, key, SCALAR_DATASETS[quantity])
    ph = _phase(c, sym, key)
    if ds is None or ph is None:
        return None, ""
    from .. import library as lib

    try:
        if quantity == "formation enthalpy":
            lv = lib.lookup_formation_enthalpy(ident, ph, ds)
        else:
            lv = lib.lookup_standard_entropy(ident, ph, ds)
    except InputError as e:
        c.add(key, _lookup_message(e, key))
        return None, ""
    unit = _UNITS[quantity]
    label = library_label(lv.dataset, lv.version)
    user_u = [k for k in _UNCERTAINTY_KEYS if k in node]
    out: dict[str, Any] = {"value": f"{lv.value!r} {unit}"}
    source = lv.provenance
    if user_u:
        for k in ("u", "U", "k", "half_width", "relative_u", "distribution", "dof", "lower", "upper"):
            if k in node:
                out[k] = node[k]
        if lv.u is None:
            out["_assumed"] = True
            source += "; the dataset states no uncertainty: the uncertainty is the user's"
        elif lv.expanded_uncertainty is not None and lv.coverage_factor:
            source += (f"; uncertainty given by the user (replaces the dataset's ± {lv.expanded_uncertainty:g} {unit}, "
                       f"k = {lv.coverage_factor:g})")
        else:
            source += "; uncertainty given by the user (replaces the dataset's)"
    elif lv.u is None:
        c.add(key, f"{label} states no uncertainty for {lv.name or ident} ({sym}) = {lv.value:g} {unit}; "
                   f"give one, e.g. {_EXAMPLE_U[quantity]} (it is then flagged as assumed)")
        return None, label
    elif lv.u == 0.0:
        source += " (zero by definition: exact)"
    elif lv.expanded_uncertainty is not None and lv.coverage_factor:
        k = lv.coverage_factor
        out["U"] = f"{lv.expanded_uncertainty:.15g} {unit}"
        out["k"] = int(k) if float(k).is_integer() else float(k)
        source += f"; ± {lv.expanded_uncertainty:g} {unit} read as a 95 % expanded uncertainty (k = {k:g})"
    else:
        out["u"] = f"{lv.u:.15g} {unit}"
    if isinstance(node.get("source"), str) and node["source"].strip():
        source += "; " + node["source"].strip()
    elif "source" in node and not isinstance(node["source"], str):
        c.add(f"{key}.source", "must be a string")
    out["source"] = source
    return out, label


def resolve_heat_capacity(c: Collector, node: dict, key: str, ident: str, sym: str, enabled: bool
                          ) -> tuple[dict | None, str]:
    """Turn ``{ library = "shomate" | "janaf", relative_u = "1 %" }`` into a Shomate ``heat_capacity`` table.

    Parameters
    ----------
    c, key, ident, sym, enabled
        As :func:`resolve_scalar`.
    node : dict
        ``library`` (``"shomate"``: NIST WebBook coefficients, all their ranges; ``"janaf"``: a
        Shomate curve fitted to the JANAF 1998 Cp table), ``relative_u`` (required: the datasets
        state no Cp uncertainty), optional ``extrapolate``, ``T = [lo, hi]`` (janaf: range
        fitted), ``source``, ``note``.

    Returns
    -------
    (dict or None, str)
        ``{"model": "shomate", "ranges": [{"T": [...], "coefficients": [A..E]}, ...],
        "relative_u": ..., "_assumed": True, "source": provenance}`` and the dataset label;
        ``(None, "")`` after recording a problem.
    """
    if not enabled:
        c.add(key, "library look-ups are disabled here; give the heat_capacity model and coefficients instead")
        return None, ""
    if not _check_keys(c, node, _CP_KEYS, key):
        return None, ""
    ds = _dataset_name(c, node, key, CP_DATASETS)
    ph = _phase(c, sym, key)
    if ds is None or ph is None:
        return None, ""
    T_range = None
    if "T" in node:
        if ds != "janaf":
            c.add(f"{key}.T", "T (the range to fit) applies to library = \"janaf\"; the WebBook Shomate ranges are used as published")
            return None, ""
        tn = node["T"]
        if not (isinstance(tn, list) and len(tn) == 2):
            c.add(f"{key}.T", "must be [lower, upper] temperatures, e.g. [\"298.15 K\", \"1500 K\"]")
            return None, ""
        lo = read_temperature(c, tn[0], f"{key}.T[0]")
        hi = read_temperature(c, tn[1], f"{key}.T[1]")
        if lo is None or hi is None:
            return None, ""
        if not hi > lo:
            c.add(f"{key}.T", "upper temperature must exceed the lower one")
            return None, ""
        T_range = (lo, hi)
    from .. import library as lib
    from ..library.base import chemicals_version as _chemicals_version

    try:
        lc = lib.lookup_heat_capacity(ident, ph, ds, T_range=T_range)
    except InputError as e:
        c.add(key, _lookup_message(e, key))
        return None, ""
    label = library_label(lc.dataset, lc.version)
    if ds == "janaf":
        label = f"JANAF {lc.version} Cp table (Shomate fit) via chemicals {_chemicals_version()}"
    if "relative_u" not in node:
        c.add(key, f"{label} states no uncertainty for the Cp curve of {lc.name or ident} ({sym}, "
                   f"{lc.t_min:g}-{lc.t_max:g} K); add relative_u = \"... %\", e.g. \"1 %\" (it is then flagged as assumed)")
        return None, label
    out = lc.to_case_dict()
    source = out.get("source", lc.provenance)
    if lc.note and ds == "janaf":
        source += "; " + lc.note
    source += "; the dataset states no uncertainty: relative_u is the user's"
    if isinstance(node.get("source"), str) and node["source"].strip():
        source += "; " + node["source"].strip()
    elif "source" in node and not isinstance(node["source"], str):
        c.add(f"{key}.source", "must be a string")
    out["source"] = source
    out["relative_u"] = node["relative_u"]
    out["_assumed"] = True
    if ds == "janaf":
        out["_form"] = "JANAF Cp table (Shomate fit)"
    if "extrapolate" in node:
        out["extrapolate"] = node["extrapolate"]
    return out, label
