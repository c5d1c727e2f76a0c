"""How the report writes numbers: the rounding rule, from the results dict alone.

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
  writes them; no hit shows the bound, "< 6×10⁻⁵ (95 % upper bound, 50 000 trials)", never 0 %;
  above 99 % the distance from 100 % keeps two significant digits ("99.86 %"), never 100 % unless
  every trial; a normal-approximation value below 10⁻⁹ shows as "< 10⁻⁹ (normal approximation)".
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
from decimal import ROUND_HALF_UP, Decimal
from typing import Any

from .fields import num, pair

__all__ = [
    "uncertainty_decimals", "fmt_fixed", "fmt_sig", "fmt_u", "fmt_interval", "fmt_share", "fmt_share_ci", "fmt_k",
    "fmt_dof", "fmt_probability", "fmt_value", "fmt_temperature", "fmt_cost", "pct_label", "distinct_sig",
]


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
    shown = fmt_sig(100 * v, 3) if dec is None else fmt_fixed(100 * v, dec)
    if 0 < v < 1 and num(shown) in (0.0, 100.0):   # not 0 or 1: never shown as "0 %" or "100 %"
        dec = uncertainty_decimals(100 * min(v, 1 - v)) or 0
        if dec > 4:
            return "> 99.9999 %" if v > 0.5 else "< 0.0001 %"
        shown = fmt_fixed(100 * v, dec)
    return shown + " %"


def distinct_sig(values: Any, sig: int = 3, most: int = 6) -> int:
    """The fewest significant digits (from ``sig`` up to ``most``) that print different values
    differently: 1.0727 and 1.0677 need 4 ("1.073", "1.068"), not 3 (both "1.07")."""
    vals = sorted({v for v in (num(x) for x in (values or [])) if v is not None})
    for s in range(sig, most + 1):
        if len({fmt_sig(v, s) for v in vals}) == len(vals):
            return s
    return most


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


def pct_label(p: float) -> str:
    """0.95 → "95 %", 0.995 → "99.5 %"."""
    s = f"{100 * p:.3f}".rstrip("0").rstrip(".")
    return f"{s} %"
