"""Selection rules of the data library: ``library = "auto"``.

Owns the choice of one value or one heat-capacity curve among the sources that have it, and the
record of why (:class:`Selection`, written to results.json as the datum's ``provenance``).

Rules:

* **Validity first** — a curve is a candidate only if its validity range covers the whole
  temperature window the case needs (1 mK slack; the WebBook's 298 K range ends count as
  298.15 K). A Cp known at one temperature only (CRC, Poling at 298.15 K) never becomes a curve;
  it only enters the spread of sources.
* **Source rank** — among the candidates the first in :data:`RANK` wins: critically evaluated
  tables with stated uncertainties first (ATcT, CODATA), then the evaluated tables (JANAF, NIST
  WebBook), the critically reviewed correlations (Zabransky et al. for liquids, TRC for gases),
  then handbook compilations and correlations (CRC, Perry's/DIPPR, Poling, Yaws, API TDB), and
  group-contribution or corresponding-states estimates (Joback, Riedel) last — those only when
  nothing else has the quantity, and flagged as estimates.
* **One value per source** — the spread of sources (:mod:`.uncertainty`) counts each source once
  (its best-ranked variant that applies).
* A named source (``library = "CRC"``) takes that source's value; the other sources still give the
  spread.
"""

from __future__ import annotations

from dataclasses import dataclass, field

from .base import LibraryLookupError
from .candidates import QUANTITY_UNITS, CurveCandidate, ScalarCandidate
from .identify import Identity
from .uncertainty import (Uncertainty, curve_uncertainty, outlier_text, scalar_uncertainty,
                          wide_spread_limit)

__all__ = ["RANK", "Selection", "select_value", "select_curve", "QUANTITY_LABELS", "rank_of"]

RANK = {
    "formation_enthalpy": ("ATcT", "CODATA", "JANAF", "WebBook", "CRC", "API-TDB", "Yaws", "Joback"),
    "standard_entropy": ("CODATA", "JANAF", "WebBook", "CRC", "Yaws", "Joback"),
    "formation_gibbs_energy": ("JANAF", "CRC", "Joback"),
    ("heat_capacity", "g"): ("JANAF", "shomate", "TRC", "Poling", "Perry-2-151", "CRC", "Joback"),
    ("heat_capacity", "l"): ("Zabransky", "JANAF", "shomate", "Perry-DIPPR", "Perry-2-151", "CRC", "Poling"),
    ("heat_capacity", "s"): ("JANAF", "shomate", "Perry-2-151", "CRC"),
    "boiling_temperature": ("HEOS", "CRC", "WebBook", "Yaws-Tb", "Joback"),
    "melting_temperature": ("CRC", "WebBook", "OpenNotebook", "Joback"),
    "vaporization_enthalpy": ("CRC", "Perry-DIPPR", "VDI-PPDS", "Watson", "Alibakhshi", "Riedel", "Joback"),
    "fusion_enthalpy": ("CRC", "WebBook", "Joback"),
}

EXTRAPOLATION_RELATIVE_U = 0.05
"""Relative u assumed at least for a curve used beyond its range (only where the case allows it)."""

QUANTITY_LABELS = {
    "formation_enthalpy": "formation enthalpy", "standard_entropy": "standard entropy",
    "formation_gibbs_energy": "Gibbs energy of formation", "heat_capacity": "heat capacity",
    "boiling_temperature": "normal boiling point", "melting_temperature": "melting point",
    "vaporization_enthalpy": "enthalpy of vaporization", "fusion_enthalpy": "enthalpy of fusion",
}
_REPORT = {"J/mol": ("kJ/mol", 1e-3), "J/(mol*K)": ("J/(mol*K)", 1.0), "K": ("K", 1.0)}


def _rank_of(quantity: str, phase: str, key: str) -> int:
    order = RANK.get((quantity, phase)) or RANK.get(quantity) or ()
    return order.index(key) if key in order else len(order)


def rank_of(quantity: str, phase: str, key: str) -> int:
    """Position of source ``key`` in :data:`RANK` for a quantity and phase (unknown: last)."""
    return _rank_of(quantity, phase, key)


def _one_per_source(cands: list) -> list:
    seen, out = set(), []
    for c in cands:
        if c.source.key not in seen:
            seen.add(c.source.key)
            out.append(c)
    return out


@dataclass
class Selection:
    """The outcome of a selection.

    Attributes
    ----------
    identity : Identity
    quantity, phase : str
    chosen : ScalarCandidate or CurveCandidate
    considered : list
        One candidate per source (the chosen one first), with which of them cover the window.
    uncertainty : Uncertainty
    reason : str
        Why the chosen source won.
    window : (float, float) or None
        Temperature window a curve had to cover, K.
    mode : str
        ``"auto"`` or the named source key.
    """

    identity: Identity
    quantity: str
    phase: str
    chosen: ScalarCandidate | CurveCandidate
    considered: list
    uncertainty: Uncertainty
    reason: str
    window: tuple[float, float] | None = None
    mode: str = "auto"
    not_covering: list = field(default_factory=list)

    @property
    def value(self) -> float:
        return self.chosen.value

    @property
    def estimate(self) -> bool:
        return self.chosen.estimate

    @property
    def source_text(self) -> str:
        """One line for the datum's ``source`` field."""
        c = self.chosen
        who = self.identity.label
        ph = self.phase
        est = " (ESTIMATE)" if self.estimate else ""
        base = f"{c.source.title} ({c.source.label}){est}: {who}, {ph}"
        if isinstance(c, CurveCandidate):
            base += f", {c.form}"
        elif c.note:
            base += f", {c.note}"
        return base

    def provenance(self) -> dict:
        """The record written to results.json (``inputs[*].provenance``), in report units."""
        c = self.chosen
        u = self.uncertainty
        out = {
            "selection": self.mode, "selected": c.source.label, "source_title": c.source.title,
            "citation": c.source.citation, "reason": self.reason, "estimate": bool(self.estimate),
            "uncertainty_basis": u.basis, "uncertainty_reason": u.reason, "assumed": u.assumed,
            "cas": self.identity.cas, "name": self.identity.name, "formula": self.identity.formula,
        }
        if isinstance(c, CurveCandidate):
            lo, hi = self.window
            out.update({"window_K": [lo, hi], "relative_standard_uncertainty": u.u, "form": c.form,
                        "representation": c.shomate()[1]})
            rows = []
            outlying = {o["source"] for o in u.outliers}
            for o in self.considered + self.not_covering:
                row = {"source": o.source.label, "form": o.form, "range_K": [o.t_min, o.t_max],
                       "covers_window": bool((not o.single_point) and o.covers(lo, hi)), "estimate": o.estimate,
                       "outlier": o.source.label in outlying}
                at = [t for t in ((lo, hi) if hi > lo else (lo,)) if o.t_min - 1e-3 <= t <= o.t_max + 1e-3]
                row["cp_J_per_mol_K"] = {f"{t:g}": float(o.cp([t])[0]) for t in at}
                rows.append(row)
            out["sources"] = rows
            out["outliers"] = [dict(o, unit="J/(mol*K)") for o in u.outliers]
            wide = wide_spread_limit("heat_capacity", u)
            out["wide_spread"] = None if wide is None else {"quantity": "heat_capacity", "phase": self.phase,
                                                            "limit": wide, "unit": "relative"}
        else:
            unit, f = _REPORT[QUANTITY_UNITS[c.quantity]]
            out.update({"value": c.value * f, "unit": unit, "standard_uncertainty": u.u * f})
            if c.temperature is not None:
                out["temperature_K"] = c.temperature
            outlying = {o["source"] for o in u.outliers}
            out["sources"] = [{"source": o.source.label, "value": o.value * f, "unit": unit,
                               "standard_uncertainty": None if o.u is None else o.u * f,
                               "note": o.note, "estimate": o.estimate, "outlier": o.source.label in outlying}
                              for o in self.considered]
            out["outliers"] = [dict(o, unit=unit, **{k: o[k] * f for k in ("value", "selected_value", "deviation", "limit")})
                               for o in u.outliers]
            wide = wide_spread_limit(c.quantity, u, c.value)
            if wide is not None:
                wide = {"quantity": c.quantity, "phase": self.phase, "limit": wide * f, "unit": unit,
                        "distinct_values": u.distinct_values}
            out["wide_spread"] = wide
        return out


def _phases_with(ident: Identity, quantity: str) -> list[str]:
    from .sources import catalog

    return sorted(catalog().get(ident.cas, {}).get(quantity, set()))


def _estimates(ident: Identity, quantity: str, phase: str, T=None) -> tuple[list, str]:
    if not ident.smiles:
        return [], ""
    from .joback import EstimateUnavailable, from_smiles

    try:
        return from_smiles(ident.smiles, quantity, phase, T, ident.cas), ""
    except EstimateUnavailable as e:
        return [], str(e)


def select_value(ident: Identity, quantity: str, phase: str, *, T: float | None = None, source: str = "auto",
                 key: str | None = None) -> Selection:
    """Select a scalar (ΔfH°, S°, ΔfG°, Tb, Tm, ΔvapH(T), ΔfusH) for a species and phase.

    ``phase`` is ``g``/``l``/``s`` for standard values and ``l-g``/``s-l`` for transition data.

    Raises
    ------
    LibraryLookupError
        No source has the quantity in that phase (the phases that have it are listed), or the
        named source lacks it (the sources that have it are listed).
    """
    from .codata import is_reference_element
    from .sources import scalar_candidates

    label = QUANTITY_LABELS.get(quantity, quantity)
    cands = scalar_candidates(ident.cas, quantity, phase, T) if ident.cas else []
    note = ""
    if not [c for c in cands if not c.estimate]:
        extra, note = _estimates(ident, quantity, phase, T)
        cands += extra
    cands.sort(key=lambda c: _rank_of(quantity, phase, c.source.key))
    per_source = _one_per_source(cands)
    at = f" at {T:g} K" if T is not None and quantity == "vaporization_enthalpy" else ""
    if not per_source:
        other = [p for p in _phases_with(ident, quantity) if p != phase]
        msg = f"no source in the library has the {label} of {ident.label} in phase {phase!r}{at}"
        if other:
            msg += f" (phases with data: {', '.join(other)})"
        if note:
            msg += f"; {note}"
        elif not ident.smiles and quantity in ("formation_enthalpy", "standard_entropy"):
            msg += "; give a value, or smiles = \"...\" for a group-contribution estimate"
        raise LibraryLookupError(msg, key=key)
    if source != "auto":
        named = [c for c in per_source if c.source.key == source]
        if not named:
            have = ", ".join(c.source.label for c in per_source)
            raise LibraryLookupError(f"{source} has no {label} of {ident.label} in phase {phase!r}{at}; "
                                     f"sources that have it: {have} (or library = \"auto\")", key=key)
        chosen = named[0]
        reason = f"{source} named in the case"
    else:
        chosen = per_source[0]
        rest = [c.source.key for c in per_source[1:]]
        reason = (f"{chosen.source.key} ranks first of the {len(per_source)} source(s) with a value"
                  + (f" (also: {', '.join(rest)})" if rest else ""))
        if chosen.estimate:
            reason = f"ESTIMATE: no source has a measured value; {chosen.source.key} group contribution"
    others = [c for c in per_source if c is not chosen]
    exact = quantity == "formation_enthalpy" and is_reference_element(ident.cas, phase)
    unc = scalar_uncertainty(chosen, others, exact=exact)
    considered = [chosen] + others
    return Selection(ident, quantity, phase, chosen, considered, unc, reason, None, source)


def select_curve(ident: Identity, phase: str, window: tuple[float, float], *, source: str = "auto",
                 key: str | None = None, extrapolate: bool = False) -> Selection:
    """Select a heat-capacity curve covering ``window`` (K) for a species and phase.

    With ``extrapolate`` (the case allows extrapolation), a window no curve covers takes the
    curve that covers the largest part of it, and the reason says EXTRAPOLATED.

    Raises
    ------
    LibraryLookupError
        No curve covers the window (each source's range is listed), the phase has no curve at
        all (the phases that have one are listed), or the named source lacks one.
    """
    from .sources import curve_candidates
    from .zabransky import window_class_u

    lo, hi = float(min(window)), float(max(window))
    cands = curve_candidates(ident.cas, phase) if ident.cas else []
    note = ""
    if not [c for c in cands if not c.estimate and not c.single_point and c.covers(lo, hi)]:
        extra, note = _estimates(ident, "heat_capacity", phase)
        cands += extra
    cands.sort(key=lambda c: _rank_of("heat_capacity", phase, c.source.key))
    curves = [c for c in cands if not c.single_point]
    covering = [c for c in curves if c.covers(lo, hi)]
    win = f"{lo:g}-{hi:g} K" if hi > lo else f"{lo:g} K"
    if not curves:
        other = [p for p in _phases_with(ident, "heat_capacity") if p != phase]
        msg = f"no source in the library has a heat-capacity curve of {ident.label} in phase {phase!r}"
        if other:
            msg += f" (phases with one: {', '.join(other)})"
        if note:
            msg += f"; {note}"
        elif not ident.smiles and phase == "g":
            msg += "; give the curve, or smiles = \"...\" for a group-contribution estimate"
        raise LibraryLookupError(msg, key=key)
    extrapolated = ""
    if not covering and extrapolate:
        def overlap(c):
            return (max(0.0, min(hi, c.t_max) - max(lo, c.t_min)), -_rank_of("heat_capacity", phase, c.source.key))

        best = max(curves, key=overlap)
        covering = [best]
        extrapolated = (f"EXTRAPOLATED: no curve covers {lo:g}-{hi:g} K; {best.source.key} "
                        f"({best.t_min:g}-{best.t_max:g} K) covers the largest part of it; ")
    if not covering:
        rng = "; ".join(f"{c.source.key} {c.t_min:g}-{c.t_max:g} K" for c in _one_per_source(curves))
        raise LibraryLookupError(f"no heat-capacity curve of {ident.label} ({phase}) covers {win}: {rng}; "
                                 "narrow the temperatures, give T = [lo, hi] within a range, or give the curve",
                                 key=key)
    if source != "auto":
        named = [c for c in covering if c.source.key == source]
        if not named:
            have = "; ".join(f"{c.source.key} {c.t_min:g}-{c.t_max:g} K" for c in _one_per_source(curves))
            raise LibraryLookupError(f"{source} has no heat-capacity curve of {ident.label} ({phase}) covering {win}; "
                                     f"curves: {have} (or library = \"auto\")", key=key)
        chosen = named[0]
        reason = f"{source} named in the case; its range {chosen.t_min:g}-{chosen.t_max:g} K covers {win}"
    else:
        chosen = covering[0]
        skipped = [c for c in _one_per_source(curves) if c not in covering]
        reason = (f"{chosen.source.key} ({chosen.form}) ranks first of the curves covering {win} "
                  f"(range {chosen.t_min:g}-{chosen.t_max:g} K)") if not extrapolated else chosen.form
        if skipped:
            reason += "; not covering: " + ", ".join(f"{c.source.key} {c.t_min:g}-{c.t_max:g} K" for c in skipped)
        if chosen.estimate:
            reason = f"ESTIMATE: no measured curve covers {win}; " + reason
        reason = extrapolated + reason
    evidence = _one_per_source([chosen] + [c for c in cands if c is not chosen and
                                           (c.single_point or c.covers(lo, hi) or (c.t_max > lo and c.t_min < hi))])
    others = [c for c in evidence if c is not chosen]
    own = window_class_u(chosen, lo, hi) if chosen.u_basis == "class" else None
    unc, _ = curve_uncertainty(chosen, others, (lo, hi), own)
    if extrapolated and unc.u < EXTRAPOLATION_RELATIVE_U:
        why = (f"curve extrapolated beyond its range {chosen.t_min:g}-{chosen.t_max:g} K: "
               f"{100 * EXTRAPOLATION_RELATIVE_U:g} % assumed (the sources' {100 * unc.u:.2g} % holds only inside the "
               "range)")
        if unc.outliers:
            why += "; " + outlier_text(list(unc.outliers), chosen.source.label)
        unc = Uncertainty(EXTRAPOLATION_RELATIVE_U, True, "assumed", why, outliers=unc.outliers)
    not_cov = [c for c in _one_per_source(curves) if c not in evidence]
    return Selection(ident, "heat_capacity", phase, chosen, evidence, unc, reason, (lo, hi), source, not_cov)
