"""Tables of the report: number formatting, display tables and pandas DataFrames.

Everything here works from the results dict (format ``uqthermo.results/1``) alone.

Rounding rule (the one the report states and the tests check)
-------------------------------------------------------------
Following GUM (JCGM 100:2008) 7.2.6, a standard uncertainty is given to **two
significant digits**, and every number that belongs to it (the estimate, the
expanded uncertainty, coverage-interval end points, one-sided bounds, margins) is
rounded to the **same decimal position**. Monte Carlo columns use the Monte Carlo
standard uncertainty of the point, linear columns the linear one. Rounding is half
away from zero on the decimal representation of the stored float (``repr``). When
rounding the uncertainty carries it to a third digit (0.0995 → 0.100) the position
moves one place left (0.10). Other numbers:

* variance shares and their confidence intervals: percent with one decimal;
* probabilities (exceedance, MTSR above MTT/TD24, phase change, criticality classes): two
  significant digits (per cent down to 0.1 %, below that m×10⁻ⁿ) with the one-sided 95 %
  upper bound rounded up and the number of trials, as ``report.style.probability_text``
  writes them; no hit shows the bound, "< 6×10⁻⁵ (95 % upper bound, 50 000 trials)", never 0 %.
  A standard-error column is rounded at its own second significant digit;
* coverage factor k: two decimals; effective degrees of freedom: integer (∞ above 10⁶);
* validation tolerance δ and the differences d_low, d_high: two significant digits;
* what-if expanded uncertainties: the decimal position of the point's (linear)
  standard uncertainty, as for U in the linear table;
* planner expanded uncertainties (target, front, recommendation): three significant
  digits, so that sets either side of the target stay distinguishable;
* sensitivity indices: value ± confidence half-width, rounded at two significant
  digits of the half-width (between 2 and 4 decimals);
* exact (zero-uncertainty) inputs: up to six significant digits.

Numbers are written with an ASCII hyphen-minus and no thousands separators, so that
they paste into spreadsheets as numbers. Very small or very large numbers switch to
``1.23e-08`` notation with the same number of significant digits.
"""

from __future__ import annotations

import math
import re
from collections.abc import Mapping, Sequence
from dataclasses import dataclass, field
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

import pandas as pd

# ---------------------------------------------------------------------------
# small accessors (the results dict may miss optional keys)
# ---------------------------------------------------------------------------

KIND_LABELS = {
    "reaction_enthalpy": ("reaction enthalpy", "ΔrH"),
    "heating_enthalpy": ("heating enthalpy", "ΔH"),
    "heat_release": ("heat release rate", "Q̇"),
    "adiabatic_temperature_rise": ("adiabatic temperature rise", "ΔT_ad"),
    "reaction_gibbs_energy": ("reaction Gibbs energy", "ΔrG"),
    "equilibrium_constant": ("equilibrium constant", "K"),
}

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


def kind_label(kind: str | None) -> str:
    return KIND_LABELS.get(kind or "", (str(kind or "output").replace("_", " "), "y"))[0]


def kind_symbol(kind: str | None) -> str:
    return KIND_LABELS.get(kind or "", ("", "y"))[1]


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


def pct_label(p: float) -> str:
    """0.95 → "95 %", 0.995 → "99.5 %"."""
    s = f"{100 * p:.3f}".rstrip("0").rstrip(".")
    return f"{s} %"


def point_u(point: Mapping) -> float | None:
    """The point's reported standard uncertainty (Monte Carlo when present, else linear)."""
    mc = point.get("monte_carlo") or {}
    lin = point.get("linear") or {}
    u = num(mc.get("standard_uncertainty"))
    return u if u is not None else num(lin.get("standard_uncertainty"))


def point_estimate(point: Mapping) -> float | None:
    mc = point.get("monte_carlo") or {}
    lin = point.get("linear") or {}
    y = num(mc.get("mean"))
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


def _shown_unit(text_: str) -> str:
    return str(text_).replace("degC", "°C").replace("degF", "°F")


def limit_text(output: Mapping) -> str:
    """The limit as the case wrote it, e.g. "final temperature > 90 °C" or "Q̇ > cooling capacity 1.2 MW"."""
    lim = output.get("limit")
    if isinstance(lim, Mapping):
        value, unit = num(lim.get("value")), str(lim.get("unit") or "")
        written = lim.get("as_written")
        side = ">" if lim.get("side", "above") != "below" else "<"
        label = str(lim.get("label") or "limit")
    else:
        value, unit, written, side, label = num(output.get("limit_K")), "K", None, ">", "limit"
    if value is None:
        return ""
    shown = _shown_unit(written) if isinstance(written, str) and written.strip() else \
        f"{fmt_value(value)}{'' if unit in ('', '1') else ' ' + unit}"
    what = "final temperature" if output.get("kind") == "adiabatic_temperature_rise" and \
        output.get("limit_applies_to", "final_temperature") != "rise" else kind_symbol(output.get("kind"))
    return f"{what} {side} {label + ' ' if label != 'limit' else ''}{shown}"


def probability_cell(point: Mapping, key: str) -> str:
    """A point's probability field (``exceedance_probability``, ``p_phase_change``, …) as report text, with its
    one-sided upper bound and the trials (:func:`uqthermo.report.style.probability_text`)."""
    from .style import probability_text

    base = "exceedance" if key == "exceedance_probability" else key
    ub = point.get(f"{base}_upper_bound")
    n = point.get(f"{base}_trials")
    if n is None and point.get(f"{base}_standard_error") is not None:
        n = (point.get("monte_carlo") or {}).get("samples")
    basis = point.get("exceedance_basis") if key == "exceedance_probability" else None
    return probability_text(point.get(key), ub, n, basis=basis)


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


# ---------------------------------------------------------------------------
# number formatting
# ---------------------------------------------------------------------------

def _dec(x: float) -> Decimal:
    return Decimal(repr(float(x)))


def uncertainty_decimals(u: Any, sig: int = 2) -> int | None:
    """Decimal position that keeps ``sig`` significant digits of ``u`` (GUM 7.2.6).

    Returns the number of decimals (negative for tens, hundreds…), or None for a
    missing, zero or non-finite uncertainty.
    """
    v = num(u)
    if v is None or not math.isfinite(v) or v <= 0:
        return None
    dec = sig - 1 - math.floor(math.log10(v))
    rounded = _dec(v).quantize(Decimal(1).scaleb(-dec), rounding=ROUND_HALF_UP)
    if rounded >= Decimal(1).scaleb(sig - dec):
        dec -= 1
    return dec


def _plain(q: Decimal) -> str:
    s = format(q, "f")
    if s.startswith("-") and Decimal(s) == 0:
        s = s[1:]
    return s


def fmt_fixed(x: Any, dec: int | None) -> str:
    """Round ``x`` to ``dec`` decimals (half away from zero); "—" when missing.

    Uses ``e`` notation when the number would need more than 6 decimals or more
    than 9 integer digits.
    """
    v = num(x)
    if v is None:
        return "—"
    if not math.isfinite(v):
        return "∞" if v > 0 else "-∞"
    if dec is None:
        return fmt_value(v)
    if dec > 6 or abs(v) >= 1e9:
        # significant digits implied by the decimal position
        exp = math.floor(math.log10(abs(v))) if v != 0 else -dec
        sig = min(max(1, exp + dec + 1), 15)     # a double carries at most ~15–17 significant digits
        return fmt_sig(v, sig, force_exp=True)
    q = _dec(v).quantize(Decimal(1).scaleb(-dec), rounding=ROUND_HALF_UP)
    return _plain(q)


def fmt_sig(x: Any, sig: int = 3, force_exp: bool = False) -> str:
    """Round ``x`` to ``sig`` significant digits (half away from zero)."""
    v = num(x)
    if v is None:
        return "—"
    if not math.isfinite(v):
        return "∞" if v > 0 else "-∞"
    if v == 0:
        return "0"
    exp = math.floor(math.log10(abs(v)))
    d = _dec(v)
    q = d.quantize(Decimal(1).scaleb(exp - sig + 1), rounding=ROUND_HALF_UP)
    if q != 0 and math.floor(math.log10(abs(float(q)))) > exp:  # 9.99 → 10.0
        exp += 1
        q = d.quantize(Decimal(1).scaleb(exp - sig + 1), rounding=ROUND_HALF_UP)
    if force_exp or exp < -4 or exp >= 9:
        mant = q.scaleb(-exp)
        mant = mant.quantize(Decimal(1).scaleb(-(sig - 1)), rounding=ROUND_HALF_UP)
        return f"{_plain(mant)}e{exp:+03d}"
    if exp - sig + 1 >= 0:
        return _plain(q.quantize(Decimal(1)))
    return _plain(q)


def fmt_u(u: Any) -> str:
    """Standard uncertainty to two significant digits."""
    return fmt_fixed(u, uncertainty_decimals(u))


def fmt_interval(iv: Any, dec: int | None) -> str:
    lo, hi = pair(iv)
    if lo is None or hi is None:
        return "—"
    return f"[{fmt_fixed(lo, dec)}, {fmt_fixed(hi, dec)}]"


def fmt_share(s: Any) -> str:
    v = num(s)
    return "—" if v is None else fmt_fixed(100 * v, 1)


def fmt_share_ci(ci: Any) -> str:
    lo, hi = pair(ci)
    if lo is None or hi is None:
        return "—"
    return f"[{fmt_fixed(100 * lo, 1)}, {fmt_fixed(100 * hi, 1)}]"


def fmt_k(k: Any) -> str:
    return fmt_fixed(k, 2)


def fmt_dof(nu: Any, infinite_if_missing: bool = False) -> str:
    """Degrees of freedom as an integer; "∞" above 10⁶, for "inf", or (optionally) when missing.

    JSON has no infinity, so a missing ``effective_dof`` next to a coverage factor
    means infinitely many degrees of freedom (all inputs of type B / normal).
    """
    if isinstance(nu, str) and nu.strip().lower() in {"inf", "infinity", "∞"}:
        return "∞"
    v = num(nu)
    if v is None:
        return "∞" if infinite_if_missing else "—"
    if not math.isfinite(v) or v > 1e6:
        return "∞"
    return str(int(round(v)))


def fmt_probability(p: Any, se: Any = None) -> str:
    """Probability as percent, rounded at 2 significant digits of its standard error."""
    v = num(p)
    if v is None:
        return "—"
    s = num(se)
    dec = uncertainty_decimals(100 * s) if s else None
    if dec is None:
        return fmt_sig(100 * v, 3) + " %"
    return fmt_fixed(100 * v, dec) + " %"


def fmt_value(x: Any) -> str:
    """A value with no associated uncertainty (exact inputs, costs, temperatures)."""
    v = num(x)
    if v is None:
        return "—"
    if float(v).is_integer() and abs(v) < 1e9:
        return str(int(v))
    s = fmt_sig(v, 6)
    if "." in s and "e" not in s:
        s = s.rstrip("0").rstrip(".")
    return s


def fmt_temperature(t: Any) -> str:
    v = num(t)
    if v is None:
        return "—"
    return fmt_fixed(v, 2).rstrip("0").rstrip(".") if not float(v).is_integer() else str(int(v))


def fmt_cost(c: Any) -> str:
    v = num(c)
    if v is None:
        return "—"
    return str(int(round(v))) if abs(v) >= 100 or float(v).is_integer() else fmt_fixed(v, 2)


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


# ---------------------------------------------------------------------------
# display tables (already-formatted strings; rendered by both templates)
# ---------------------------------------------------------------------------

@dataclass
class DisplayTable:
    """A table ready for rendering: every cell is a string.

    ``align`` holds per column "l" (left, no wrapping), "w" (left, wraps), "r"
    (right, numbers) or "c". ``notes`` are printed under the table.
    """

    key: str
    caption: str
    columns: list[str]
    align: list[str]
    rows: list[list[str]] = field(default_factory=list)
    notes: list[str] = field(default_factory=list)

    def __bool__(self) -> bool:  # an empty table is not rendered
        return bool(self.rows)


def _unit(output: Mapping) -> str:
    return text(output.get("unit")) or "1"


def unit_suffix(unit: Any) -> str:
    """" kJ/mol" for a unit after a number; "" for a dimensionless output ("1" or none)."""
    u = text(unit)
    return "" if u in ("", "1") else f" {u}"


def in_unit(unit: Any) -> str:
    """Caption suffix: ", in kJ/mol" or ", dimensionless"."""
    u = text(unit)
    return ", dimensionless" if u in ("", "1") else f", in {u}"


def summary_table(results: Mapping) -> DisplayTable:
    """One row per output at its headline point."""
    p_cov = coverage_probability(results)
    t = DisplayTable(
        "summary",
        "Results at a glance",
        ["Output", "Quantity", "T / K", "Estimate", "u", f"{pct_label(p_cov)} coverage interval", "Unit", "Linear method", "Main driver", "Share / %"],
        ["l", "w", "r", "r", "r", "r", "l", "l", "l", "r"],
    )
    curve = False
    for o in outputs(results):
        pts = points(o)
        if not pts:
            continue
        i = headline_index(o)
        p = pts[i]
        u = point_u(p)
        dec = uncertainty_decimals(u)
        mc = p.get("monte_carlo") or {}
        lin = p.get("linear") or {}
        iv = mc.get("coverage_interval") if mc.get("coverage_interval") is not None else lin.get("coverage_interval")
        drivers = p.get("drivers") or []
        main, main_share = "—", "—"
        if drivers:
            main, main_share = text(drivers[0].get("datum")), fmt_share(drivers[0].get("share"))
        tlabel = fmt_temperature(p.get("temperature_K"))
        if len(pts) > 1:
            curve = True
            tlabel += " *"
        t.rows.append([
            text(o.get("name")), kind_label(o.get("kind")), tlabel,
            fmt_fixed(point_estimate(p), dec), fmt_fixed(u, dec), fmt_interval(iv, dec), _unit(o),
            validation_label(p), main, main_share,
        ])
    if curve:
        t.notes.append("* Curve outputs are summarised at the temperature with the largest standard uncertainty; all points are in the results section.")
    t.notes.append("Estimate, u and interval from the Monte Carlo method (JCGM 101) where it was run, else from the linear method (GUM).")
    return t


def validation_label(point: Mapping) -> str:
    v = point.get("linear_validated")
    if v is True:
        return "validated"
    if v is False:
        return "not validated"
    return "not checked"


def inputs_table(results: Mapping) -> DisplayTable:
    rows = [i for i in (results.get("inputs") or []) if isinstance(i, Mapping)]
    cols = ["Datum", "Quantity", "Value", "Stated uncertainty", "u", "Unit", "Distribution", "Source"]
    align = ["l", "w", "r", "w", "r", "w", "w", "w"]
    t = DisplayTable("inputs", "Input data", cols, align)
    for i in rows:
        est, u = i.get("estimate"), i.get("standard_uncertainty")
        if isinstance(est, (list, tuple)):
            us = u if isinstance(u, (list, tuple)) else [u] * len(est)
            parts = []
            for e, ui in zip(est, us):
                d = uncertainty_decimals(ui)
                parts.append(f"{fmt_fixed(e, d)} ± {fmt_u(ui)}" if d is not None else fmt_sig(e, 6))
            value, ustr = f"{len(est)} coefficients †", "per coefficient †"
            t.notes.append(f"† {text(i.get('datum'))}: coefficients (value ± u) {'; '.join(parts)}"
                           + (f" [{text(i.get('unit'))}]" if i.get("unit") else "") + ".")
        elif est is None and (num(i.get("n_parameters")) or 1) > 1:
            value, ustr = f"{int(num(i.get('n_parameters')))} coefficients", "per coefficient"
        else:
            d = uncertainty_decimals(u)
            value = fmt_fixed(est, d) if d is not None else fmt_value(est)
            ustr = fmt_u(u) if d is not None else ("0 (exact)" if num(u) == 0 else "—")
        source = text(i.get("source"))
        lib = i.get("library")
        if lib not in (None, False, ""):
            lib_s = "data library" if lib is True else f"data library: {text(lib)}"
            source = f"{source} ({lib_s})" if source else lib_s
        stated_s = text(i.get("stated")) or "—"
        if i.get("assumed"):
            stated_s += " (assumed)"
        t.rows.append([
            text(i.get("datum")), text(i.get("quantity")), value, stated_s, ustr,
            text(i.get("unit")), text(i.get("distribution")) or "—", source or "—",
        ])
    if any(i.get("assumed") for i in rows):
        t.notes.append("(assumed): the dataset states no uncertainty for this value; the uncertainty written in the case is an assumption — check it.")
    from .library_notes import provenance_notes

    t.notes += provenance_notes(rows)
    n_multi = [i for i in rows if (num(i.get("n_parameters")) or 1) > 1]
    if n_multi:
        t.notes.append("Heat-capacity data with several coefficients count as one datum in the driver ranking; their parameter count is in tables/inputs.csv.")
    return t


def correlations_table(results: Mapping) -> DisplayTable:
    t = DisplayTable("correlations", "Correlations between input data", ["Datum", "Datum", "Correlation coefficient r"], ["l", "l", "r"])
    for c in results.get("correlations") or []:
        if not isinstance(c, Mapping):
            continue
        b = c.get("between") or ["", ""]
        a1, a2 = (b + ["", ""])[:2] if isinstance(b, list) else ("", "")
        t.rows.append([text(a1), text(a2), fmt_sig(c.get("coefficient"), 3)])
    return t


def reactions_table(results: Mapping) -> DisplayTable:
    t = DisplayTable("reactions", "Reactions", ["Reaction", "Equation", "Anchor"], ["l", "w", "w"])
    for r in results.get("reactions") or []:
        if not isinstance(r, Mapping):
            continue
        anchor = {"formation": "formation enthalpies", "measured": "measured reaction enthalpy"}.get(r.get("anchor"), text(r.get("anchor")))
        t.rows.append([text(r.get("name")), text(r.get("equation")), anchor or "—"])
    return t


def mc_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    p_cov = coverage_probability(results)
    unit = _unit(output)
    t = DisplayTable(
        key, f"Monte Carlo results (JCGM 101){in_unit(unit)}",
        ["T / K", "Mean", "u", f"{pct_label(p_cov)} interval (prob.-symmetric)", f"{pct_label(p_cov)} shortest interval", "Median", "Skewness", "N"],
        ["r"] * 8,
    )
    for p in points(output):
        mc = p.get("monte_carlo") or {}
        if not mc:
            continue
        dec = uncertainty_decimals(mc.get("standard_uncertainty"))
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), fmt_fixed(mc.get("mean"), dec), fmt_u(mc.get("standard_uncertainty")),
            fmt_interval(mc.get("coverage_interval"), dec), fmt_interval(mc.get("shortest_coverage_interval"), dec),
            fmt_fixed(mc.get("median"), dec), fmt_fixed(mc.get("skewness"), 2), fmt_value(mc.get("samples")),
        ])
    return t


def linear_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    p_cov = coverage_probability(results)
    unit = _unit(output)
    t = DisplayTable(
        key, f"Linear propagation (GUM) and its validation (JCGM 101 §8){in_unit(unit)}",
        ["T / K", "Estimate", "u", "ν_eff", "k", "U", f"{pct_label(p_cov)} interval", "δ", "d_low", "d_high", "Linear method"],
        ["r"] * 10 + ["l"],
    )
    for p in points(output):
        lin = p.get("linear") or {}
        if not lin:
            continue
        dec = uncertainty_decimals(lin.get("standard_uncertainty"))
        val = p.get("validation") or {}
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), fmt_fixed(lin.get("estimate"), dec), fmt_u(lin.get("standard_uncertainty")),
            fmt_dof(lin.get("effective_dof"), infinite_if_missing=num(lin.get("coverage_factor")) is not None),
            fmt_k(lin.get("coverage_factor")), fmt_fixed(lin.get("expanded_uncertainty"), dec),
            fmt_interval(lin.get("coverage_interval"), dec),
            fmt_sig(val.get("tolerance"), 2), fmt_sig(val.get("d_low"), 2), fmt_sig(val.get("d_high"), 2),
            validation_label(p),
        ])
    if t.rows:
        t.notes.append("U = k·u with k from the t-distribution for ν_eff (Welch–Satterthwaite, GUM G.4). "
                       "The linear interval is validated when |d_low| and |d_high| do not exceed δ (JCGM 101 §8).")
    return t


def _bounds(point: Mapping) -> tuple[dict, str]:
    """One-sided bounds {P01, P05, P95, P99} and their basis, from ``margins`` or ``monte_carlo.one_sided``.

    ``margins`` (as written by the run) names bounds by confidence level:
    ``lower_P95`` is the 5th percentile, ``upper_P95`` the 95th, ``upper_P95_margin``
    = upper_P95 − estimate, ``lower_P95_margin`` = estimate − lower_P95.
    """
    mg = point.get("margins") or {}
    os_ = (point.get("monte_carlo") or {}).get("one_sided") or {}
    b = {
        "P01": num(mg.get("lower_P99")), "P05": num(mg.get("lower_P95")),
        "P95": num(mg.get("upper_P95")), "P99": num(mg.get("upper_P99")),
    }
    for k in b:
        if b[k] is None:
            b[k] = num(os_.get(k))
    basis = text(mg.get("basis")) or ("Monte Carlo quantiles" if os_ else "")
    return b, basis


def bounds_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    unit = _unit(output)
    t = DisplayTable(
        key, f"One-sided bounds and design margins{in_unit(unit)}",
        ["T / K", "P01", "P05", "P95", "P99", "y − P05", "P95 − y", "y − P01", "P99 − y"],
        ["r"] * 9,
    )
    bases = set()
    for p in points(output):
        b, basis = _bounds(p)
        if all(v is None for v in b.values()):
            continue
        bases.add(basis)
        mg = p.get("margins") or {}
        y = point_estimate(p)
        dec = uncertainty_decimals(point_u(p))

        def margin(key: str, bound: float | None, upper: bool) -> str:
            m = num(mg.get(key))
            if m is None and bound is not None and y is not None:
                m = bound - y if upper else y - bound
            return fmt_fixed(m, dec)

        t.rows.append([fmt_temperature(p.get("temperature_K"))]
                      + [fmt_fixed(b[k], dec) for k in ("P01", "P05", "P95", "P99")]
                      + [margin("lower_P95_margin", b["P05"], False), margin("upper_P95_margin", b["P95"], True),
                         margin("lower_P99_margin", b["P01"], False), margin("upper_P99_margin", b["P99"], True)])
    if t.rows:
        t.notes.append("Pxx is the xx-th percentile of the output distribution: P05 and P95 are one-sided 95 % bounds, P01 and P99 "
                       "one-sided 99 % bounds. The margins are their distances from the estimate y: what to subtract from or add "
                       "to y for a one-sided design value." + (f" Basis: {', '.join(sorted(x for x in bases if x))}." if any(bases) else ""))
    dv = [num((p.get("margins") or {}).get("design_value")) for p in points(output)]
    dv = [d for d in dv if d is not None]
    if dv:
        t.notes.append(f"Design value stated in the case: {fmt_value(dv[0])}{unit_suffix(unit)}; compare it with the one-sided bounds.")
    return t


def safety_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    """Thermal-safety indicators of an adiabatic output (final temperature, MTSR, criticality class)."""
    t = DisplayTable(key, "Thermal-safety indicators (estimates; see the cautions)", ["Indicator", "Value"], ["w", "w"])
    pts = points(output)
    if output.get("kind") != "adiabatic_temperature_rise" or not pts:
        return t
    p = pts[0]
    dec = uncertainty_decimals(point_u(p))

    def add(label: str, value: str) -> None:
        if value not in ("—", ""):
            t.rows.append([label, value])

    from .style import probability_text

    add("Start temperature / K", fmt_temperature(output.get("start_temperature_K")))
    add("Final temperature T_start + ΔT_ad, no evaporative cooling / K", fmt_fixed(p.get("final_temperature_K"), dec))
    if limit_text(output):
        add("Limit", limit_text(output))
    if p.get("exceedance_probability") is not None:
        add(f"P({limit_text(output) or 'final temperature > limit'})", probability_cell(p, "exceedance_probability"))
    add("Process temperature / K", fmt_temperature(output.get("process_temperature_K")))
    if num(output.get("accumulation")) is not None:
        add("Accumulation of unreacted material", fmt_sig(output.get("accumulation"), 3))
    add("Maximum temperature of the synthesis reaction (MTSR, no evaporative cooling) / K", fmt_fixed(p.get("mtsr_K"), dec))
    for key, lab in (("mtt", "Maximum technical temperature (MTT)"), ("td24", "T_D24 (24 h time to maximum rate)")):
        blk = output.get(key)
        if isinstance(blk, Mapping) and num(blk.get("value")) is not None:
            u = num(blk.get("standard_uncertainty")) or 0.0
            add(f"{lab} / K", fmt_temperature(blk.get("value")) + (f" (u = {fmt_u(u)} K)" if u > 0 else ""))
        else:
            add(f"{lab} / K", fmt_temperature(output.get(f"{key}_K")))
    if p.get("criticality_class") is not None:
        add("Criticality class at the estimates (1 = lowest, 5 = highest)", text(p.get("criticality_class")))
    probs = p.get("criticality_class_probabilities")
    if isinstance(probs, Mapping) and probs:
        ubs = p.get("criticality_class_probabilities_upper_bounds") or {}
        n = (p.get("monte_carlo") or {}).get("samples")
        for k, v in probs.items():
            add(f"P(criticality class {text(k)})",
                probability_text(v, ubs.get(k), n) if ubs else fmt_fixed(100 * (num(v) or 0), 1) + " %")
    for k, lab in (("p_mtsr_above_mtt", "P(MTSR > MTT)"), ("p_mtsr_above_td24", "P(MTSR > T_D24)"),
                   ("p_phase_change", "P(the charge reaches a phase change on its real path, e.g. the solvent boils)")):
        if p.get(k) is not None:
            add(lab, probability_cell(p, k))
    bl = p.get("boiling_limited")
    if isinstance(bl, Mapping):
        ft = bl.get("final_temperature_K") or {}
        v = num(ft.get("mean")) if num(ft.get("mean")) is not None else num(ft.get("estimate"))
        add("Boiling-limited end temperature (evaporative cooling, tempering) / K", fmt_fixed(v, dec))
        if bl.get("p_tempering_point_reached") is not None:
            add("P(tempering point reached: the solvent boils)", probability_text(
                bl.get("p_tempering_point_reached"), bl.get("p_tempering_point_reached_upper_bound"), bl.get("trials")))
        for ev in bl.get("evaporated") or []:
            if not isinstance(ev, Mapping):
                continue
            mol, kg = ev.get("mol") or {}, ev.get("kg") or {}
            m = num(mol.get("mean")) if num(mol.get("mean")) is not None else num(mol.get("estimate"))
            parts = [f"mean {fmt_sig(m, 3)} mol" + (f" ({fmt_sig(num(kg.get('mean')) if num(kg.get('mean')) is not None else num(kg.get('estimate')), 3)} kg)" if kg else "")]
            if num(mol.get("P95")) is not None:
                parts.append(f"95th percentile {fmt_sig(mol.get('P95'), 3)} mol" +
                             (f" ({fmt_sig(kg.get('P95'), 3)} kg)" if num(kg.get("P95")) is not None else ""))
            add(f"{text(ev.get('species'))}({text(ev.get('phase'))}) evaporated", "; ".join(parts))
    for key, lab in (("specific_heat_of_reaction", "Specific heat of reaction Q'_r / (kJ/kg of reaction mass)"),
                     ("specific_heat_capacity", "Specific heat capacity c'_p of the reaction mass / (J/(g·K))"),
                     ("final_pressure", "Final pressure of the closed vessel (ideal gas) / kPa")):
        blk = p.get(key)
        if isinstance(blk, Mapping):
            v = num(blk.get("mean")) if num(blk.get("mean")) is not None else num(blk.get("estimate"))
            u = num(blk.get("standard_uncertainty"))
            add(lab, fmt_fixed(v, uncertainty_decimals(u)) + (f" (u = {fmt_u(u)})" if u else "") if u else fmt_sig(v, 4))
    if len(t.rows) <= 1:
        t.rows = []
    return t


def exceedance_table(results: Mapping, output: Mapping, key: str) -> DisplayTable:
    t = DisplayTable(key, "Probability of exceeding the limit", ["T / K", "Limit", "P(beyond the limit)", "Standard error"],
                     ["r", "w", "w", "r"])
    for p in points(output):
        if p.get("exceedance_probability") is None:
            continue
        se = p.get("exceedance_standard_error")
        t.rows.append([
            fmt_temperature(p.get("temperature_K")), limit_text(output), probability_cell(p, "exceedance_probability"),
            fmt_probability(se, se) if num(se) else "—",
        ])
    if t.rows:
        bm = (results.get("run") or {}).get("bound_method")
        t.notes.append("The upper bound is a one-sided 95 % bound on the probability: with no trial beyond the limit the "
                       "probability is shown as below that bound, never as zero." + (f" Bound used: {text(bm)}." if bm else ""))
    return t


DRIVER_WHAT = {
    "linear": ("Shares are the linear variance contributions c_i² u²(x_i) / u²(y) (GUM 5.1.3), summed over the "
               "coefficients of each datum; covariance terms between correlated data are listed as their own signed "
               "rows (GUM 5.2.2), so that all rows sum to 100 %."),
    "sobol": ("Shares are first-order variance-based (Sobol) indices of each datum, estimated by sampling the model; "
              "the total-order indices ST also count interactions."),
}
DRIVER_WHY = {
    "linear": "the linear method is adequate for this output, so the shares are additive",
    "sobol": "the linear method is not adequate here (non-linear model or non-normal inputs), and variance-based indices capture what linear contributions miss",
}


def drivers_note(results: Mapping, point: Mapping) -> str:
    """What the driver shares are and why that method was used (plain text)."""
    run = results.get("run") or {}
    method = str(point.get("drivers_method") or run.get("drivers_method") or "")
    reason = text(point.get("drivers_reason")) or (text(run.get("drivers_reason")) if run.get("drivers_reason") != "per point" else "")
    parts = [DRIVER_WHAT.get(method, f"Ranking method: {text(method) or 'not stated'}.")]
    why = reason or DRIVER_WHY.get(method, "")
    if why:
        parts.append(f"Method chosen because {why}.")
    sens = point.get("sensitivity") or {}
    if str(sens.get("method")) == "sobol":
        est = []
        if num(sens.get("n_base")) is not None:
            est.append(f"N_base = {fmt_value(sens.get('n_base'))}")
        if num(sens.get("conf_level")) is not None:
            est.append(f"{pct_label(num(sens.get('conf_level')))} confidence intervals")
        if est:
            parts.append("Sobol estimator: " + ", ".join(est) + ".")
        if sens.get("independent_data") is False:
            parts.append("Correlations between data were left out of the Sobol sample; the linear shares show their effect.")
        for n in sens.get("notes") or []:
            parts.append(text(n))
    return " ".join(parts)


def drivers_table(output: Mapping, point: Mapping, key: str) -> DisplayTable:
    sens = point.get("sensitivity") or {}
    extra = [k for k in ("S1", "ST", "delta") if isinstance(sens.get(k), Mapping) and sens.get(k)]
    labels = {"S1": "S1 (first order)", "ST": "ST (total)", "delta": "δ (moment-independent)"}
    t = DisplayTable(
        key, f"Driver ranking at T = {fmt_temperature(point.get('temperature_K'))} K",
        ["Rank", "Datum", "Share of u²(y) / %", "Confidence interval / %"] + [labels[k] for k in extra],
        ["r", "l", "r", "r"] + ["r"] * len(extra),
    )
    for rank, d in enumerate(point.get("drivers") or [], start=1):
        datum = d.get("datum")
        row = [str(rank), text(datum), fmt_share(d.get("share")), fmt_share_ci(d.get("share_ci"))]
        for k in extra:
            entry = sens[k].get(datum)
            row.append(_fmt_index(entry))
        t.rows.append(row)
    if point.get("drivers_method") == "linear":
        from .drivers import covariance_label

        for c in point.get("covariance_terms") or []:
            t.rows.append(["", covariance_label(c.get("between") or []), fmt_share(c.get("share")), "—"] + ["—"] * len(extra))
    if t.rows and all(r[3] == "—" for r in t.rows):
        for r in t.rows:
            del r[3]
        del t.columns[3]
        del t.align[3]
    if extra:
        t.notes.append("Sensitivity indices given as value ± half-width of the confidence interval reported by the estimator.")
    from .drivers import rows_sum_note

    note = rows_sum_note(point)
    if note:
        t.notes.append("Shares: " + note + ".")
    return t


def _fmt_index(entry: Any) -> str:
    if entry is None:
        return "—"
    if isinstance(entry, (list, tuple)):
        v = entry[0] if entry else None
        ci = entry[1] if len(entry) > 1 else None
    else:
        v, ci = entry, None
    if num(ci) is not None and num(ci) > 0:
        dec = min(max(uncertainty_decimals(ci) or 3, 2), 4)
        return f"{fmt_fixed(v, dec)} ± {fmt_fixed(ci, dec)}"
    return fmt_fixed(v, 3)


def whatif_table(output: Mapping, point: Mapping, key: str, p_cov: float) -> DisplayTable:
    unit = _unit(output)
    t = DisplayTable(
        key, f"What-if: expanded uncertainty U ({pct_label(p_cov)}) at T = {fmt_temperature(point.get('temperature_K'))} K if one datum improved{in_unit(unit)}",
        ["Datum", "U now", "U with u halved", "U with datum exact", "Reduction if exact / %"],
        ["l", "r", "r", "r", "r"],
    )
    lin_u = num((point.get("linear") or {}).get("standard_uncertainty"))
    dec = uncertainty_decimals(lin_u if lin_u is not None else point_u(point))
    stated = any(num(w.get("U_stated")) is not None for w in point.get("whatif") or [])
    if stated:
        t.columns.insert(4, "U with candidate purchase")
        t.align.insert(4, "r")
    NO_CHANGE = "no measurable change"

    def cell(w, key):
        ok = (w.get("measurable") or {}).get(key) if isinstance(w.get("measurable"), Mapping) else None
        if ok is False and w.get("method") == "monte-carlo":
            return NO_CHANGE
        return fmt_fixed(w.get(key), dec)

    mc_rows = False
    for w in point.get("whatif") or []:
        now = num(w.get("U_now"))
        rem = num(w.get("U_removed"))
        red = fmt_fixed(100 * (1 - rem / now), 1) if now and rem is not None else "—"
        if cell(w, "U_removed") == NO_CHANGE:
            red = NO_CHANGE
        mc_rows = mc_rows or w.get("method") == "monte-carlo"
        row = [text(w.get("datum")), fmt_fixed(now, dec), cell(w, "U_halved"), cell(w, "U_removed"), red]
        if stated:
            row.insert(4, cell(w, "U_stated"))
        t.rows.append(row)
    if mc_rows:
        t.notes.append("Monte Carlo what-if on common random numbers (independent replicates give each change a "
                       "standard error, in results.json); a change smaller than twice its standard error is shown as "
                       "'no measurable change'.")
    elif point.get("whatif"):
        t.notes.append("From the linear (GUM) budget, which Monte Carlo validates for this point: exact, no sampling "
                       "noise. Where correlated data cancel variance, making one of them exact can increase U.")
    return t


def plan_candidates_table(plan: Mapping) -> DisplayTable:
    cur = text(plan.get("currency")) or "cost units"
    t = DisplayTable("plan_candidates", "Candidate data purchases", ["Id", "Datum", "Action", "New u / old u", f"Cost / {cur}"], ["l", "l", "w", "r", "r"])
    for c in plan.get("candidates") or []:
        if not isinstance(c, Mapping):
            continue
        factor = fmt_sig(c.get("factor"), 2) if num(c.get("factor")) is not None else (
            f"u → {fmt_sig(c.get('u'), 2)}" if num(c.get("u")) is not None else "—")
        t.rows.append([text(c.get("id")) or "—", text(c.get("datum")), text(c.get("action") or c.get("note")) or "—", factor, fmt_cost(c.get("cost"))])
    return t


def plan_front_table(plan: Mapping) -> DisplayTable:
    cur = text(plan.get("currency")) or "cost units"
    tgt = plan.get("target") or {}
    unit = text(tgt.get("unit"))
    t = DisplayTable("plan_front", "Cost–uncertainty front (each set is the cheapest way to reach its U)",
                     [f"Cost / {cur}", f"U / {unit}" if unit else "U", "Purchases", "Meets target"], ["r", "r", "w", "l"])
    tU = num(tgt.get("U"))
    for f in plan.get("front") or []:
        if not isinstance(f, Mapping):
            continue
        U = num(f.get("U"))
        meets = "—" if tU is None or U is None else ("yes" if U <= tU else "no")
        t.rows.append([fmt_cost(f.get("cost")), fmt_sig(U, 3), text(f.get("set")) or "(none)", meets])
    return t


# ---------------------------------------------------------------------------
# DataFrames (full precision; the CSV tables and the notebook use them)
# ---------------------------------------------------------------------------

def results_table(results: Mapping) -> pd.DataFrame:
    """One row per output point, full precision.

    Columns: output, kind, unit, temperature_K, estimate, standard_uncertainty,
    coverage_low, coverage_high, method (of the three before), coverage_probability,
    mc_* (mean, standard_uncertainty, coverage_low/high, shortest_low/high, median,
    skewness, samples, P01, P05, P95, P99), linear_* (estimate, standard_uncertainty,
    coverage_low/high, expanded_uncertainty, coverage_factor, effective_dof),
    linear_validated, validation_tolerance, d_low, d_high, margin_P95, margin_P99,
    exceedance_probability, exceedance_standard_error, exceedance_upper_bound, top_driver, top_driver_share,
    correlation_share, drivers_method.
    """
    check_results(results)
    rows = []
    for o in outputs(results):
        for p in points(o):
            mc = p.get("monte_carlo") or {}
            lin = p.get("linear") or {}
            val = p.get("validation") or {}
            mg = p.get("margins") or {}
            os_ = mc.get("one_sided") or {}
            mc_lo, mc_hi = pair(mc.get("coverage_interval"))
            sh_lo, sh_hi = pair(mc.get("shortest_coverage_interval"))
            li_lo, li_hi = pair(lin.get("coverage_interval"))
            use_mc = num(mc.get("mean")) is not None
            drivers = p.get("drivers") or []
            rows.append({
                "output": o.get("name"), "kind": o.get("kind"), "unit": o.get("unit"),
                "temperature_K": num(p.get("temperature_K")),
                "estimate": point_estimate(p), "standard_uncertainty": point_u(p),
                "coverage_low": mc_lo if use_mc else li_lo, "coverage_high": mc_hi if use_mc else li_hi,
                "method": "monte_carlo" if use_mc else "linear",
                "coverage_probability": coverage_probability(results, p),
                "mc_mean": num(mc.get("mean")), "mc_standard_uncertainty": num(mc.get("standard_uncertainty")),
                "mc_coverage_low": mc_lo, "mc_coverage_high": mc_hi, "mc_shortest_low": sh_lo, "mc_shortest_high": sh_hi,
                "mc_median": num(mc.get("median")), "mc_skewness": num(mc.get("skewness")), "mc_samples": num(mc.get("samples")),
                **{f"mc_{k}": num(os_.get(k)) for k in ("P01", "P05", "P95", "P99")},
                "linear_estimate": num(lin.get("estimate")), "linear_standard_uncertainty": num(lin.get("standard_uncertainty")),
                "linear_coverage_low": li_lo, "linear_coverage_high": li_hi,
                "linear_expanded_uncertainty": num(lin.get("expanded_uncertainty")),
                "linear_coverage_factor": num(lin.get("coverage_factor")), "linear_effective_dof": num(lin.get("effective_dof")),
                "linear_validated": p.get("linear_validated"),
                "validation_tolerance": num(val.get("tolerance")), "d_low": num(val.get("d_low")), "d_high": num(val.get("d_high")),
                "margin_P95": num(mg.get("P95")), "margin_P99": num(mg.get("P99")),
                "exceedance_probability": num(p.get("exceedance_probability")),
                "exceedance_standard_error": num(p.get("exceedance_standard_error")),
                "exceedance_upper_bound": num(p.get("exceedance_upper_bound")),
                "top_driver": drivers[0].get("datum") if drivers else None,
                "top_driver_share": num(drivers[0].get("share")) if drivers else None,
                "correlation_share": num(p.get("correlation_share")),
                "drivers_method": p.get("drivers_method"),
            })
    return pd.DataFrame(rows)


def inputs_frame(results: Mapping) -> pd.DataFrame:
    cols = ["datum", "quantity", "species", "phase", "stated", "distribution", "estimate",
            "standard_uncertainty", "unit", "source", "n_parameters", "library"]
    rows = []
    for i in results.get("inputs") or []:
        if isinstance(i, Mapping):
            r = {c: i.get(c) for c in cols}
            for c in ("estimate", "standard_uncertainty"):
                if isinstance(r[c], (list, tuple)):
                    r[c] = " ".join(repr(float(v)) if num(v) is not None else "" for v in r[c])
            rows.append(r)
    return pd.DataFrame(rows, columns=cols)


def output_frame(output: Mapping) -> pd.DataFrame:
    df = results_table({"outputs": [output]})
    return df


def drivers_frame(results: Mapping) -> pd.DataFrame:
    rows = []
    for o in outputs(results):
        for p in points(o):
            sens = p.get("sensitivity") or {}
            for rank, d in enumerate(p.get("drivers") or [], start=1):
                lo, hi = pair(d.get("share_ci"))
                r = {"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "rank": rank,
                     "datum": d.get("datum"), "share": num(d.get("share")), "share_ci_low": lo, "share_ci_high": hi,
                     "method": p.get("drivers_method")}
                for k in ("S1", "ST", "delta"):
                    e = (sens.get(k) or {}).get(d.get("datum")) if isinstance(sens.get(k), Mapping) else None
                    r[k] = num(e[0]) if isinstance(e, (list, tuple)) and e else num(e)
                    r[f"{k}_ci"] = num(e[1]) if isinstance(e, (list, tuple)) and len(e) > 1 else None
                rows.append(r)
            if p.get("drivers_method") == "linear":
                from .drivers import covariance_label

                for c in p.get("covariance_terms") or []:
                    rows.append({"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "rank": None,
                                 "datum": covariance_label(c.get("between") or []), "share": num(c.get("share")),
                                 "method": p.get("drivers_method")})
    return pd.DataFrame(rows)


def whatif_frame(results: Mapping) -> pd.DataFrame:
    rows = []
    for o in outputs(results):
        for p in points(o):
            for w in p.get("whatif") or []:
                se = w.get("standard_error") if isinstance(w.get("standard_error"), Mapping) else {}
                ok = w.get("measurable") if isinstance(w.get("measurable"), Mapping) else {}
                rows.append({"output": o.get("name"), "temperature_K": num(p.get("temperature_K")), "datum": w.get("datum"),
                             "U_now": num(w.get("U_now")), "U_halved": num(w.get("U_halved")), "U_removed": num(w.get("U_removed")),
                             "method": w.get("method"),
                             "U_halved_standard_error": num(se.get("U_halved")), "U_halved_measurable": ok.get("U_halved"),
                             "U_removed_standard_error": num(se.get("U_removed")), "U_removed_measurable": ok.get("U_removed")})
    return pd.DataFrame(rows, columns=["output", "temperature_K", "datum", "U_now", "U_halved", "U_removed", "method",
                                       "U_halved_standard_error", "U_halved_measurable", "U_removed_standard_error",
                                       "U_removed_measurable"])


def plan_frame(results: Mapping) -> pd.DataFrame:
    plan = results.get("plan") or {}
    best = plan.get("best") or {}
    rows = []
    for f in plan.get("front") or []:
        if isinstance(f, Mapping):
            s = f.get("set") or []
            rows.append({"cost": num(f.get("cost")), "U": num(f.get("U")), "set": " + ".join(map(str, s)),
                         "best": sorted(map(str, s)) == sorted(map(str, best.get("set") or [])) and num(f.get("cost")) == num(best.get("cost"))})
    return pd.DataFrame(rows, columns=["cost", "U", "set", "best"])


def csv_safe(df: pd.DataFrame) -> pd.DataFrame:
    """Guard text cells against spreadsheet formula injection (OWASP "CSV injection");
    see :func:`uqthermo.text_safety.csv_cell`. The CSV files themselves are written by
    :func:`uqthermo.text_safety.csv_frame_text`, which also quotes cells holding CR/LF."""
    out = df.copy()
    for c in out.columns:
        if out[c].dtype == object or pd.api.types.is_string_dtype(out[c]):
            out[c] = out[c].map(_csv_cell).astype(object)
    return out


def _csv_cell(v: Any) -> Any:
    from ..text_safety import csv_cell

    return csv_cell(v)


def frames(results: Mapping) -> dict[str, pd.DataFrame]:
    """All CSV tables, keyed by file stem (``results-<output>`` per output)."""
    out = {"inputs": inputs_frame(results)}
    names = slugs(results)
    for o, slug in zip(outputs(results), names):
        out[f"results-{slug}"] = output_frame(o)
    out["drivers"] = drivers_frame(results)
    out["whatif"] = whatif_frame(results)
    if results.get("plan"):
        out["plan"] = plan_frame(results)
    return out


__all__ = [
    "DisplayTable", "results_table", "inputs_frame", "drivers_frame", "whatif_frame", "plan_frame", "frames",
    "uncertainty_decimals", "fmt_fixed", "fmt_sig", "fmt_u", "fmt_interval", "fmt_share", "fmt_probability",
    "limit_text", "probability_cell",
    "slugs",
]
