"""Uncertainty rules of the data library: where a library datum's standard uncertainty comes from.

Owns the rule that turns the selected value (or curve) and the other sources' values into one
standard uncertainty with its basis, and the assumed values used where nothing better exists.

The rule, in order:

1. **Exact**: an element in its reference state has ΔfH° = 0 by definition (u = 0).
2. **Stated**: the selected source states an uncertainty (ATcT ±, read as U with k = 2; CODATA ±,
   read as u; Perry's Table 2-151 ±%, read as a rectangular half-width a, u = a/√3 per GUM 4.3.7).
   For a scalar a stated uncertainty is used as it is: the sources that state one (ATcT, CODATA)
   are more recent and better founded than the compilations they would be compared with.
3. **Published**: the method's published typical deviation (an estimation method's average
   absolute error AAE with its standard deviation s, u = √(AAE² + s²); Alibakhshi's 4.5 %
   AARE, u = 4.5 % × √(π/2); Riedel's "seldom above 5 %", u = 5 %/√3) — the paper is named in the
   source module.
4. **Spread**: where several sources give the quantity (one value per source, estimates left
   out), u = max(u₀, half the spread), the spread being the largest minus the smallest value
   (for a curve: the largest relative spread over the temperature window). u₀ is the source's
   own u from rules 2-3 for a curve, or the assumed value of rule 5 for a scalar. The larger of the
   two counts: the spread is evidence that the uncertainty is at least that large, and a single
   source's u says nothing about disagreements between sources.
5. **Assumed**: otherwise the value in :data:`ASSUMED` for the source's kind — a rule of thumb of
   our own (common practice for handbook data), flagged as *assumed* in results.json and the
   report so that the user checks it.

**Outliers** (curves, before rule 4): one wrong value must not set the spread of a whole curve. At
each temperature of the window where other sources give a Cp (:func:`screen_outliers`):

* with three or more values (the selected curve's included), a value of another source is an
  outlier when it lies further from their median than both 3 × 1.4826 × MAD (the median absolute
  deviation scaled to a normal standard deviation — a robust 3σ) and :data:`OUTLIER_RELATIVE`
  of the median;
* with two values there is no majority, so source quality decides: a Cp known at one temperature
  only (CRC, Poling at 298.15 K — secondary compilations that never become curves) is an outlier
  when it disagrees with the selected curve by more than :data:`OUTLIER_RELATIVE`; two curves that
  disagree keep their spread.

**Outliers of scalars** (ΔfH°, S°, Tb, ...; :func:`screen_scalar_outliers`), where rule 4 applies
(not to an exact, stated or estimated value): the same robust rule (:func:`robust_outliers`) on the
sources' values when there are three or more, with a floor of :data:`OUTLIER_FACTOR` times the
assumed u of a compilation (:func:`outlier_floor`); two values keep their spread. Values equal to
:func:`copy_tolerance` count once (:func:`copy_groups`): a reprint is not a second opinion, so JANAF
reprinted by the WebBook and Yaws is no majority against the CRC Handbook.

The selected curve or value is never screened out (if it is the odd one, the spread stays). An
outlier is left out of the spread, named with its disagreement in the uncertainty's reason and in
``provenance.outliers``, and the run warns naming the datum and both sources.

**Wide spread without a majority**: where the spread sets u (rule 4, outliers already left out) and
u is larger than the outlier screen's floor (:func:`wide_spread_limit`: :data:`OUTLIER_FACTOR` times
the assumed u of a compilation — ΔfH° 5 kJ/mol, a Cp curve 10 %), the sources disagree far beyond
what compilations usually do and no majority says which is right (two distinct values, or values
too scattered for the median/MAD screen to single one out). u is then honest but large, and the run
warns naming the sources and their values (``provenance.wide_spread``). A rule of our own.

The basis is recorded with each datum (``exact``, ``stated``, ``published``, ``spread``,
``assumed``), so the report says for every library value where its uncertainty comes from.
"""

from __future__ import annotations

from dataclasses import dataclass, replace

import numpy as np

from .candidates import QUANTITY_UNITS, CurveCandidate, ScalarCandidate

__all__ = ["Uncertainty", "ASSUMED", "OUTLIER_RELATIVE", "scalar_uncertainty", "curve_uncertainty", "assumed_value",
           "screen_outliers", "outlier_text", "robust_outliers", "OUTLIER_FACTOR", "outlier_floor",
           "screen_scalar_outliers", "scalar_outlier_text", "copy_tolerance", "copy_groups", "wide_spread_limit"]

OUTLIER_RELATIVE = 0.10
"""Relative disagreement beyond which a heat capacity is screened as an outlier: five times the 2 %
assumed for handbook correlations; compilations of Cp near room temperature typically agree within
a few per cent (common practice), so a 10 % gap points to a transcription or identification error
rather than to a measurement spread. A rule of our own."""

OUTLIER_FACTOR = 5.0
"""Floor of the outlier limit of a scalar, in assumed uncertainties of a compilation (:func:`outlier_floor`):
the same factor as the heat capacities' :data:`OUTLIER_RELATIVE` (10 % = 5 × the 2 % assumed for
handbook correlations). A rule of our own."""

MAD_TO_SIGMA = 1.4826
"""MAD of a normal sample → its standard deviation (1/Φ⁻¹(3/4); Rousseeuw & Croux, JASA 88 (1993) 1273)."""

#: (quantity, source kind) -> assumed standard uncertainty (absolute; relative for heat capacity and
#: latent heats). Rules of thumb of our own, flagged as assumed wherever used.
ASSUMED = {
    ("formation_enthalpy", "evaluated"): 500.0, ("formation_enthalpy", "compilation"): 1000.0,
    ("formation_gibbs_energy", "evaluated"): 500.0, ("formation_gibbs_energy", "compilation"): 1000.0,
    ("standard_entropy", "evaluated"): 0.2, ("standard_entropy", "compilation"): 0.5,
    ("heat_capacity", "evaluated"): 0.01, ("heat_capacity", "compilation"): 0.02,
    ("heat_capacity", "correlation"): 0.02,
    ("boiling_temperature", "evaluated"): 0.05, ("boiling_temperature", "compilation"): 0.2,
    ("melting_temperature", "evaluated"): 0.2, ("melting_temperature", "compilation"): 0.5,
    ("vaporization_enthalpy", "evaluated"): 0.01, ("vaporization_enthalpy", "compilation"): 0.01,
    ("vaporization_enthalpy", "correlation"): 0.03,
    ("fusion_enthalpy", "evaluated"): 0.03, ("fusion_enthalpy", "compilation"): 0.03,
}
RELATIVE = {"heat_capacity", "vaporization_enthalpy", "fusion_enthalpy"}


@dataclass(frozen=True)
class Uncertainty:
    """A standard uncertainty and where it comes from.

    Attributes
    ----------
    u : float
        Standard uncertainty (SI, absolute) — for curves, relative (a factor on the whole curve).
    relative : bool
    basis : str
        ``exact``, ``stated``, ``published``, ``spread`` or ``assumed``.
    reason : str
        One sentence for the report.
    expanded, k : float or None
        The source's expanded uncertainty and coverage factor, when that is how it states it.
    distinct_values : int or None
        Of a scalar from several sources: how many distinct values (:func:`copy_groups`) the measured
        sources that count give, the selected one included; None where that was not counted.
    """

    u: float
    relative: bool
    basis: str
    reason: str
    expanded: float | None = None
    k: float | None = None
    outliers: tuple = ()
    """Sources left out of the spread: dicts with source, value, temperature_K, deviation_percent (from
    the selected value), rule — for a curve (:func:`screen_outliers`) in J/(mol*K), for a scalar
    (:func:`screen_scalar_outliers`) in SI with deviation and limit besides."""
    distinct_values: int | None = None

    @property
    def assumed(self) -> bool:
        return self.basis == "assumed"


def assumed_value(quantity: str, kind: str) -> float:
    """The assumed standard uncertainty of :data:`ASSUMED` for a quantity and source kind."""
    return ASSUMED.get((quantity, kind), ASSUMED.get((quantity, "compilation"), 0.0))


def _fmt(x: float, quantity: str, digits: int = 3) -> str:
    if quantity in ("formation_enthalpy", "formation_gibbs_energy", "vaporization_enthalpy", "fusion_enthalpy"):
        return f"{x / 1000:.{digits}g} kJ/mol"
    if quantity in ("standard_entropy", "heat_capacity"):
        return f"{x:.{digits}g} J/(mol*K)"
    return f"{x:.{digits}g} K"


def scalar_uncertainty(chosen: ScalarCandidate, others: list[ScalarCandidate], *, exact: bool = False) -> Uncertainty:
    """Standard uncertainty of a selected scalar (rules 1-5 of the module docstring).

    Parameters
    ----------
    chosen : ScalarCandidate
    others : list of ScalarCandidate
        One value per other source (same quantity, phase and temperature).
    exact : bool
        The value is zero by definition (reference element).
    """
    q = chosen.quantity
    rel = q in RELATIVE
    if exact:
        return Uncertainty(0.0, False, "exact", "element in its reference state: zero by definition")
    if chosen.u is not None and chosen.u_basis == "stated":
        return Uncertainty(chosen.u, False, "stated", chosen.u_note or f"stated by {chosen.source.label}",
                           chosen.expanded, chosen.k)
    if chosen.estimate:
        if chosen.u is None:
            a = assumed_value(q, "correlation")
            u = a * abs(chosen.value) if rel else a
            return Uncertainty(u, False, "assumed", "estimate without published error statistics: assumed")
        return Uncertainty(chosen.u, False, "published", chosen.u_note)
    if chosen.u is not None:
        u0, basis0, why0 = chosen.u, chosen.u_basis or "published", chosen.u_note
    else:
        a = assumed_value(q, chosen.source.kind)
        u0 = a * abs(chosen.value) if rel else a
        basis0 = "assumed"
        why0 = (f"no source states an uncertainty; {100 * a:g} % assumed for {chosen.source.kind} data" if rel else
                f"no source states an uncertainty; {_fmt(a, q)} assumed for {chosen.source.kind} data")
    measured = [o for o in others if not o.estimate]
    outliers = screen_scalar_outliers(chosen, measured)
    dropped = {o["source"] for o in outliers}
    vals = [chosen.value] + [o.value for o in measured if o.source.label not in dropped]
    result = Uncertainty(u0, False, basis0, why0)
    if len(vals) >= 2:
        half = 0.5 * (max(vals) - min(vals))
        if half > u0:
            result = Uncertainty(half, False, "spread",
                                 f"half the spread of {len(vals)} sources ({_fmt(min(vals), q, 4)} to {_fmt(max(vals), q, 4)}), "
                                 f"larger than the {basis0} {_fmt(u0, q)}")
        else:
            result = Uncertainty(u0, False, basis0, why0 + f"; larger than half the spread of {len(vals)} sources "
                                                           f"({_fmt(half, q)})")
    groups = copy_groups(vals, q)
    result = replace(result, distinct_values=len(groups))
    if outliers:
        result = replace(result, reason=f"{result.reason}; {scalar_outlier_text(outliers, chosen)}",
                         outliers=tuple(outliers))
    elif result.basis == "spread" and len(vals) >= 3:
        if len(groups) < 3:
            srcs = [chosen] + measured
            same = "; ".join(", ".join(srcs[i].source.label for i in g) for g in groups if len(g) > 1)
            result = replace(result, reason=f"{result.reason}; {same} give the same value to 0.01 "
                                            f"{_fmt(0, q).split()[-1]} (one evaluation reprinted: counted once), so "
                                            f"only {len(groups)} distinct values remain, no majority to leave one out")
    return result


def outlier_floor(quantity: str) -> tuple[float, float]:
    """(relative, absolute) floor of the outlier limit for a scalar quantity: :data:`OUTLIER_FACTOR`
    times the assumed u of a compilation (:data:`ASSUMED`), relative for the quantities of
    :data:`RELATIVE` — ΔfH° 5 kJ/mol, S° 2.5 J/(mol K), Tb 1 K, Tm 2.5 K, ΔvapH 5 %, ΔfusH 15 %."""
    a = OUTLIER_FACTOR * assumed_value(quantity, "compilation")
    return (a, 0.0) if quantity in RELATIVE else (0.0, a)


def wide_spread_limit(quantity: str, uncertainty: Uncertainty, value: float | None = None) -> float | None:
    """The limit a spread-based uncertainty exceeds, or None: the warning rule for sources that disagree
    widely without a majority (module docstring).

    .. math::
        u > \\max(r\\,|x|,\\ a), \\qquad (r, a) = \\text{outlier\\_floor(quantity)}

    i.e. u larger than :data:`OUTLIER_FACTOR` times the uncertainty assumed for a compilation
    (:data:`ASSUMED`), the same floor as the outlier screen (:func:`outlier_floor`; for a heat-capacity
    curve :data:`OUTLIER_RELATIVE`, relative). A rule of our own.

    Parameters
    ----------
    quantity : str
        ``formation_enthalpy``, ``heat_capacity``, ...
    uncertainty : Uncertainty
        The selected datum's uncertainty (only the basis ``spread`` can exceed).
    value : float, optional
        The selected value (SI), for the quantities whose floor is relative (ΔvapH, ΔfusH).

    Returns
    -------
    float or None
        The limit (SI; relative for a curve, like ``uncertainty.u``) when ``uncertainty.u`` exceeds it.
    """
    if uncertainty.basis != "spread":
        return None
    relative, absolute = outlier_floor(quantity)
    if uncertainty.relative:
        limit = relative if relative else OUTLIER_RELATIVE
    else:
        limit = max(relative * abs(value or 0.0), absolute)
    return float(limit) if limit > 0 and uncertainty.u > limit * (1 + 1e-9) else None


def screen_scalar_outliers(chosen: ScalarCandidate, others: list[ScalarCandidate]) -> list[dict]:
    """Other sources whose value of a scalar is an outlier by :func:`robust_outliers` (three or more
    values, the selected one included; floor :func:`outlier_floor`). Not applied to estimates.

    Returns one record per outlying source: ``source``, ``value``, ``selected_value``, ``deviation``
    (value − selected value) and ``limit`` in SI units (J/mol, J/(mol K), K), ``temperature_K``
    (where the value holds, None for a transition temperature), ``deviation_percent`` (from the
    selected value; None when that is 0) and ``rule``.
    """
    if chosen.estimate:
        return []
    others = [o for o in others if not o.estimate]
    relative, absolute = outlier_floor(chosen.quantity)
    groups = copy_groups([chosen.value] + [o.value for o in others], chosen.quantity)
    # one value per group of equal values (the selected value's group first), so reprints make no majority
    flagged, _, limit = robust_outliers([chosen.value] + [others[g[0] - 1].value for g in groups[1:]],
                                        relative=relative, absolute=absolute)
    n = len(others) + 1
    rule = (f"median/MAD of {n} sources" if len(groups) == n else
            f"median/MAD of {len(groups)} distinct values from {n} sources, equal values counted once")
    out = []
    for i in sorted(j for g in flagged for j in groups[g]):
        o = others[i - 1]
        dev = o.value - chosen.value
        out.append({"source": o.source.label, "value": float(o.value), "selected_value": float(chosen.value),
                    "deviation": float(dev), "limit": float(limit), "temperature_K": o.temperature,
                    "deviation_percent": float(100.0 * dev / abs(chosen.value)) if chosen.value else None,
                    "rule": rule})
    return out


def copy_tolerance(quantity: str) -> float:
    """Two sources' values of a scalar closer than this (SI) count as one value: 0.01 in the unit the
    tables print (kJ/mol for energies, J/(mol K), K) — the last digit of a two-decimal table. Such
    agreement is the mark of one evaluation reprinted (the NIST WebBook gives JANAF's gas-phase values
    for inorganic species; Yaws and the CRC Handbook take many of theirs from the same tables), not of
    independent measurements. A rule of our own."""
    return 10.0 * (1 + 1e-9) if QUANTITY_UNITS.get(quantity) == "J/mol" else 0.01 * (1 + 1e-9)


def copy_groups(values, quantity: str) -> list[list[int]]:
    """Indices of ``values`` grouped by equality to :func:`copy_tolerance` (single linkage, in order of
    first appearance; the group of ``values[0]``, the selected value, comes first)."""
    tol = copy_tolerance(quantity)
    groups: list[list[int]] = []
    for i, v in enumerate(values):
        hit = [g for g in groups if any(abs(v - values[j]) <= tol for j in g)]
        if hit:
            for g in hit[1:]:
                hit[0].extend(g)
                groups.remove(g)
            hit[0].append(i)
            hit[0].sort()
        else:
            groups.append([i])
    return groups


def scalar_outlier_text(outliers: list[dict], chosen: ScalarCandidate) -> str:
    """One clause per scalar outlier for the uncertainty's reason (source, disagreement, what was done)."""
    q = chosen.quantity
    return "; ".join(f"{o['source']} disagrees by {'+' if o['deviation'] > 0 else '-'}{_fmt(abs(o['deviation']), q)} "
                     f"({_fmt(o['value'], q, 4)} against {_fmt(o['selected_value'], q, 4)} from {chosen.source.label}), "
                     f"treated as an outlier ({o['rule']}, beyond {_fmt(o['limit'], q)} from their median) and left "
                     f"out of the spread" for o in outliers)


def robust_outliers(values, *, relative: float = 0.0, absolute: float = 0.0) -> tuple[list[int], float, float]:
    """The robust outlier rule shared by curves and scalars: which of ``values[1:]`` lie too far from the median.

    .. math::
        |x_i - \\tilde x| > \\max\\big(3 \\cdot 1.4826\\,\\mathrm{MAD},\\ r\\,|\\tilde x|,\\ a\\big),
        \\qquad \\mathrm{MAD} = \\mathrm{median}_i\\,|x_i - \\tilde x|

    with :math:`\\tilde x` the median of all values (1.4826 × MAD estimates a normal standard
    deviation: a robust 3σ; Rousseeuw & Croux, JASA 88 (1993) 1273) and a floor (``relative`` of the
    median, or ``absolute``) below which sources count as agreeing whatever the MAD.

    Parameters
    ----------
    values : sequence of float
        The selected source's value first (it is never flagged: if it is the odd one, the spread
        stays), then one value per other source.
    relative, absolute : float
        The floor of the limit, relative to the median and absolute (same unit as the values).

    Returns
    -------
    (list of int, float, float)
        Indices into ``values`` of the outliers (never 0; empty with fewer than three values, where
        there is no majority), the median and the limit used.
    """
    col = np.asarray(values, dtype=float)
    if col.size < 3:
        return [], float(np.median(col)) if col.size else float("nan"), float("inf")
    med = float(np.median(col))
    limit = max(3.0 * MAD_TO_SIGMA * float(np.median(np.abs(col - med))), relative * abs(med), absolute)
    return [i for i in range(1, col.size) if abs(col[i] - med) > limit], med, limit


def _values_on(o: CurveCandidate, grid: np.ndarray) -> np.ndarray:
    """Cp of source ``o`` on ``grid`` (NaN where it gives none: outside its range, or away from its one point)."""
    m = (np.abs(grid - o.t_min) < 1e-6) if o.single_point else (grid >= o.t_min - 1e-3) & (grid <= o.t_max + 1e-3)
    v = np.full_like(grid, np.nan, dtype=float)
    if np.any(m):
        v[m] = o.cp(grid[m])
    return v


def screen_outliers(chosen: CurveCandidate, others: list[CurveCandidate], grid: np.ndarray) -> list[dict]:
    """Other sources whose Cp is an outlier on ``grid`` (K) by the rule of the module docstring.

    Returns one record per outlying source at its worst temperature: ``source``, ``value`` and
    ``selected_value`` (J/(mol*K)), ``temperature_K``, ``deviation_percent`` (from the selected
    curve, signed) and ``rule`` (``"median/MAD of N sources"`` or ``"single value against the
    selected curve"``).
    """
    base = chosen.cp(grid)
    vals = [_values_on(o, grid) for o in others]
    found: dict[int, dict] = {}
    for j, T in enumerate(grid):
        present = [k for k, v in enumerate(vals) if np.isfinite(v[j])]
        if not present:
            continue
        col = np.array([base[j]] + [vals[k][j] for k in present])
        if col.size >= 3:
            flagged = [present[i - 1] for i in robust_outliers(col, relative=OUTLIER_RELATIVE)[0]]
            rule = f"median/MAD of {col.size} sources"
        else:
            (k,) = present
            flagged = [k] if (others[k].single_point and abs(vals[k][j] - base[j]) > OUTLIER_RELATIVE * abs(base[j])) \
                else []
            rule = "single value against the selected curve"
        for k in flagged:
            dev = 100.0 * (vals[k][j] - base[j]) / base[j]
            if k not in found or abs(dev) > abs(found[k]["deviation_percent"]):
                found[k] = {"source": others[k].source.label, "value": float(vals[k][j]),
                            "selected_value": float(base[j]), "temperature_K": float(T),
                            "deviation_percent": float(dev), "rule": rule}
    return [found[k] for k in sorted(found)]


def outlier_text(outliers: list[dict], selected: str) -> str:
    """One clause per outlier for the uncertainty's reason (source, disagreement, what was done)."""
    return "; ".join(f"{o['source']} disagrees by {o['deviation_percent']:+.0f} % at {o['temperature_K']:g} K "
                     f"({o['value']:.4g} against {o['selected_value']:.4g} J/(mol*K) from {selected}), treated as an "
                     f"outlier ({o['rule']}, beyond {100 * OUTLIER_RELATIVE:g} %) and left out of the spread"
                     for o in outliers)


def curve_uncertainty(chosen: CurveCandidate, others: list[CurveCandidate], window: tuple[float, float],
                      own_relative_u: float | None = None) -> tuple[Uncertainty, float]:
    """Relative standard uncertainty of a selected Cp curve over ``window`` (rules 2-5, outliers
    screened first).

    Returns
    -------
    (Uncertainty, max_half_spread)
        ``u`` relative; the largest relative half-spread found (0 with one source).
    """
    lo, hi = window
    grid = np.unique(np.concatenate([np.linspace(lo, hi, 25), [lo, hi]])) if hi > lo else np.array([lo])
    base = chosen.cp(grid)
    measured = [o for o in others if not o.estimate]
    outliers = screen_outliers(chosen, measured, grid) if not chosen.estimate else []
    dropped = {o["source"] for o in outliers}
    others = [o for o in others if o.source.label not in dropped]
    spread = 0.0
    n_used = 1
    for o in others:
        if o.estimate:
            continue
        if o.single_point:
            m = np.abs(grid - o.t_min) < 1e-6
        else:
            m = (grid >= o.t_min - 1e-3) & (grid <= o.t_max + 1e-3)
        if not np.any(m):
            continue
        n_used += 1
    if n_used >= 2:
        vals = [base]
        for o in others:
            if o.estimate:
                continue
            m = (np.abs(grid - o.t_min) < 1e-6) if o.single_point else (grid >= o.t_min - 1e-3) & (grid <= o.t_max + 1e-3)
            if np.any(m):
                v = np.full_like(grid, np.nan)
                v[m] = o.cp(grid[m])
                vals.append(v)
        arr = np.vstack(vals)
        with np.errstate(invalid="ignore"):
            hs = 0.5 * (np.nanmax(arr, axis=0) - np.nanmin(arr, axis=0)) / base
        spread = float(np.nanmax(hs)) if np.any(np.isfinite(hs)) else 0.0
    result = _curve_u(chosen, n_used, spread, lo, hi, own_relative_u)
    if outliers:
        result = replace(result, reason=f"{result.reason}; {outlier_text(outliers, chosen.source.label)}",
                         outliers=tuple(outliers))
    return result, spread


def _curve_u(chosen: CurveCandidate, n_used: int, spread: float, lo: float, hi: float,
             own_relative_u: float | None) -> Uncertainty:
    """Rules 2-5 for a curve, given the sources' spread (outliers already left out)."""
    ru = own_relative_u if own_relative_u is not None else chosen.relative_u
    if chosen.estimate:
        basis = chosen.u_basis or "assumed"
        return Uncertainty(ru if ru is not None else 0.05, True, "assumed" if basis == "assumed" else "published",
                           chosen.u_note or "estimate")
    if ru is not None:
        basis0 = "stated" if chosen.u_basis == "stated" else ("assumed" if chosen.u_basis in ("class", "assumed")
                                                              else "published")
        why0 = chosen.u_note or f"stated by {chosen.source.label}"
        if chosen.u_basis == "class":
            why0 = f"Zabransky et al. {chosen.u_note}, read as u = {100 * ru:.2g} % (class limits recalled, assumed)"
    else:
        ru = assumed_value("heat_capacity", chosen.source.kind)
        basis0 = "assumed"
        why0 = f"no source states an uncertainty; {100 * ru:g} % assumed for {chosen.source.kind} data"
    if n_used >= 2 and spread > ru:
        return Uncertainty(spread, True, "spread",
                           f"half the largest spread of {n_used} sources over {lo:g}-{hi:g} K "
                           f"({100 * spread:.2g} %), larger than the {basis0} {100 * ru:.2g} %")
    if n_used >= 2:
        why0 += f"; larger than half the spread of {n_used} sources ({100 * spread:.2g} %)"
    return Uncertainty(ru, True, basis0, why0)



