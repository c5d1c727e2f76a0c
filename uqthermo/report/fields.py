"""Reading the results dict: tolerant accessors shared by the tables, figures, sections and terminal.

The results dict (format ``uqthermo.results/1``) may miss optional keys and may come from a
hand-edited results.json: these helpers return None, "" or an empty list rather than raise —
numbers (:func:`num`, :func:`pair`), user text (:func:`text`), the outputs and their points,
each point's reported estimate and standard uncertainty, the headline point of an output, the
names of output kinds, file-name stems (:func:`slugs`) and whether the results may feed
safety decisions (:func:`safety_relevant`).
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from typing import Any

__all__ = [
    "KIND_LABELS", "SAFETY_KINDS", "num", "pair", "text", "kind_label", "kind_symbol", "output_symbol", "QUANTITY_SYMBOLS", "mass_basis", "unit_with_basis", "check_results", "outputs", "points",
    "coverage_probability", "point_u", "point_estimate", "headline_index", "limit_on_output", "slugs", "safety_relevant",
]


KIND_LABELS = {
    "reaction_enthalpy": ("reaction enthalpy", "ΔrH"),
    "heating_enthalpy": ("heating enthalpy", "ΔH"),
    "heat_release": ("heat release rate", "Q̇"),
    "adiabatic_temperature_rise": ("adiabatic temperature rise", "ΔT_ad"),
    "reaction_gibbs_energy": ("reaction Gibbs energy", "ΔrG"),
    "equilibrium_constant": ("equilibrium constant", "log₁₀ K"),   # the output is log10 K, not K
}

#: display symbol of results.json ``quantity`` (the output's quantity, e.g. "log10 K" → "log₁₀ K")
QUANTITY_SYMBOLS = {"ΔrH": "ΔrH", "ΔrG": "ΔrG", "log10 K": "log₁₀ K", "ΔH": "ΔH", "Q": "Q̇", "ΔT_ad": "ΔT_ad"}


SAFETY_KINDS = {"heat_release", "adiabatic_temperature_rise"}


def num(x: Any) -> float | None:
    """Float value of ``x`` or None (accepts numbers, numeric strings, "inf"; NaN → None)."""
    if x is None or isinstance(x, bool):
        return None
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    if math.isnan(v):
        return None
    return v


def pair(x: Any) -> tuple[float | None, float | None]:
    """Two-element interval → (lo, hi) floats (None where missing)."""
    if isinstance(x, Sequence) and not isinstance(x, (str, bytes)) and len(x) == 2:
        return num(x[0]), num(x[1])
    return None, None


def text(x: Any) -> str:
    """User text as a one-line string (escaping is the template's job)."""
    if x is None:
        return ""
    if isinstance(x, bool):
        return "yes" if x else "no"
    if isinstance(x, (list, tuple)):
        return ", ".join(text(i) for i in x)
    if isinstance(x, Mapping):
        return ", ".join(f"{k} = {text(v)}" for k, v in x.items())
    return " ".join(str(x).split())


def kind_label(kind: str | None) -> str:
    return KIND_LABELS.get(kind or "", (str(kind or "output").replace("_", " "), "y"))[0]


def kind_symbol(kind: str | None) -> str:
    return KIND_LABELS.get(kind or "", ("", "y"))[1]


def output_symbol(output: Mapping) -> str:
    """The symbol of an output's quantity as shown in text ("ΔrH", "log₁₀ K", "Q̇"): from its results.json
    ``quantity``, else from its kind."""
    q = text(output.get("quantity"))
    return QUANTITY_SYMBOLS.get(q, q) if q else kind_symbol(output.get("kind"))


def mass_basis(output: Mapping) -> str:
    """What a per-mass output is per kg of, or "" (not per mass): ``basis = "mass"`` of a reaction
    enthalpy or Gibbs energy is per kg of ``mass_of`` converted; of a heating enthalpy per kg of the
    species heated (or of the mixture)."""
    if output.get("basis") != "mass" or "/kg" not in text(output.get("unit")):
        return ""
    if output.get("kind") in ("reaction_enthalpy", "reaction_gibbs_energy") and text(output.get("mass_of")):
        return f"{text(output.get('mass_of'))} converted"
    if output.get("kind") == "heating_enthalpy":
        return text(output.get("species")) or "the mixture"
    return text(output.get("mass_of"))


def unit_with_basis(output: Mapping) -> str:
    """The output's unit with its mass basis: "kJ/kg of acetic_anhydride converted"; else the unit ("" if none)."""
    u = text(output.get("unit"))
    u = "" if u in ("", "1") else u
    b = mass_basis(output)
    return f"{u} of {b}" if u and b else u


def check_results(results: Any) -> Mapping:
    """Raise InputError unless ``results`` is a mapping (the parsed results.json)."""
    if not isinstance(results, Mapping):
        from ..errors import InputError

        raise InputError(f"results must be a mapping (the parsed results.json), not {type(results).__name__}", key="results")
    return results


def outputs(results: Mapping) -> list[dict]:
    return [o for o in (results.get("outputs") or []) if isinstance(o, Mapping)]


def points(output: Mapping) -> list[dict]:
    return [p for p in (output.get("points") or []) if isinstance(p, Mapping)]


def coverage_probability(results: Mapping, point: Mapping | None = None) -> float:
    p = num((point or {}).get("coverage_probability"))
    if p is None:
        p = num((results.get("run") or {}).get("coverage_probability"))
    return 0.95 if p is None else p


def point_u(point: Mapping) -> float | None:
    """The point's reported standard uncertainty (Monte Carlo when present, else linear; linear where
    the point says ``reported = "linear"``: its comparison with Monte Carlo was undecided)."""
    mc = point.get("monte_carlo") or {}
    lin = point.get("linear") or {}
    u = num(mc.get("standard_uncertainty"))
    if point.get("reported") == "linear" and num(lin.get("standard_uncertainty")) is not None:
        u = None
    return u if u is not None else num(lin.get("standard_uncertainty"))


def point_estimate(point: Mapping) -> float | None:
    """The point's reported estimate (as :func:`point_u`)."""
    mc = point.get("monte_carlo") or {}
    lin = point.get("linear") or {}
    y = num(mc.get("mean"))
    if point.get("reported") == "linear" and num(lin.get("estimate")) is not None:
        y = None
    return y if y is not None else num(lin.get("estimate"))


def headline_index(output: Mapping) -> int:
    """Index of the point the report headlines for an output.

    ``output["headline_index"]`` when given; a single point; otherwise the point
    with the largest standard uncertainty (the widest point of a curve).
    """
    pts = points(output)
    hi = output.get("headline_index")
    if isinstance(hi, int) and 0 <= hi < len(pts):
        return hi
    if len(pts) <= 1:
        return 0
    us = [point_u(p) or -1.0 for p in pts]
    return max(range(len(pts)), key=lambda i: us[i])


def limit_on_output(output: Mapping, point: Mapping) -> float | None:
    """Limit expressed on the output's own scale (for a figure marker).

    For ``adiabatic_temperature_rise`` the case's ``limit`` is a temperature the
    *final* temperature must stay below (``limit_applies_to`` = "final_temperature",
    the default); the rise that reaches it is ``limit_K - start``, with the start
    temperature ``output["start_temperature_K"]`` or the point's ``temperature_K``.
    With ``limit_applies_to = "rise"`` (or for other kinds) the limit is used as is.
    """
    lim = num(output.get("limit_K"))
    if lim is None:
        lim = num(output.get("limit"))
    if lim is None and isinstance(output.get("limit"), Mapping):
        lim = num(output["limit"].get("value"))
    if lim is None:
        return None
    if output.get("kind") == "adiabatic_temperature_rise" and output.get("limit_applies_to", "final_temperature") != "rise":
        start = num(output.get("start_temperature_K"))
        if start is None:
            start = num(point.get("temperature_K"))
        if start is not None:
            return lim - start
    return lim


def slugs(results: Mapping) -> list[str]:
    """File-name-safe, unique stems for the outputs (ASCII letters, digits, ``-``, ``_``)."""
    seen: set[str] = set()
    out = []
    for i, o in enumerate(outputs(results), start=1):
        base = re.sub(r"[^A-Za-z0-9_-]+", "-", str(o.get("name") or "")).strip("-_")[:40] or f"output{i}"
        slug, n = base, 2
        while slug.lower() in seen:
            slug, n = f"{base}-{n}", n + 1
        seen.add(slug.lower())
        out.append(slug)
    return out


def safety_relevant(results: Mapping) -> bool:
    """True when results may feed safety decisions (heat release, adiabatic rise, or a limit)."""
    for o in outputs(results):
        if o.get("kind") in SAFETY_KINDS:
            return True
        if num(o.get("limit_K")) is not None or num(o.get("limit")) is not None or isinstance(o.get("limit"), Mapping):
            return True
        if any(p.get("exceedance_probability") is not None for p in points(o)):
            return True
    return False
