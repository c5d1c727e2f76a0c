"""The statement of result per output, in the form of JCGM 100:2008 §7.2.

GUM 7.2.3/7.2.4: state the estimate y, the expanded uncertainty U = k·u(y) with the
coverage factor k and the coverage probability, and how they were obtained; 7.2.6: give U
to at most two significant digits and y to the same decimal position. For example

    ΔrH(350 °C) = −179.6 kJ/mol, U = 1.0 kJ/mol (k = 1.96, 95 %, Monte Carlo, 200 000 trials)

Which result is stated: the Monte Carlo one where the run made it (JCGM 101 §7.4, §7.7:
y = mean, u(y) = standard deviation, the probabilistically symmetric coverage interval),
else the linear (GUM) one. For Monte Carlo, U is the half-width of the coverage interval
and k = U/u(y); the ± form is used only when both sides of the interval about y round to
the same U. Otherwise (a skewed distribution) the statement gives y and the coverage
interval instead of ± U, as JCGM 101 §7.7 reports it — but only when that asymmetry is real:
the endpoint asymmetry A = (y − y_low) − (y_high − y) must exceed 3 standard errors of A
(results.json ``monte_carlo.asymmetry``, from the order-statistic variance p(1 − p)/(N f(q)²)
of the endpoints or the adaptive batches, :mod:`uqthermo.uq.interval_noise`); an asymmetry
within the Monte Carlo noise is not a property of the distribution.

Where the JCGM 101 §8 comparison is undecided (the Monte Carlo is not stable to δ, point
``reported = "linear"``), the linear result is stated with that caveat and the Monte Carlo
interval as a further line. Every statement starts with the output's name.

Every number is a :class:`~uqthermo.report.sections.numbers.Num` (it carries its path in
results.json), so the concise section can be checked number by number.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass, field
from typing import Any

from ..fields import coverage_probability, headline_index, kind_symbol, mass_basis, num, outputs, pair, points, text
from ..rounding import fmt_fixed, fmt_k, fmt_sig, pct_label, uncertainty_decimals
from . import numbers as N
from .numbers import Num, Parts

#: how each quantity is written (results.json "quantity" → symbol)
SYMBOLS = {"ΔrH": "ΔrH", "ΔrG": "ΔrG", "log10 K": "log₁₀ K", "ΔH": "ΔH", "Q": "Q̇", "ΔT_ad": "ΔT_ad"}


@dataclass
class Statement:
    """One output's statement: ``parts`` (the §7.2 sentence), ``details`` (further lines), a badge."""

    name: str
    kind: str
    parts: list[Any] = field(default_factory=list)
    details: list[list[Any]] = field(default_factory=list)
    badge: tuple[str, str] | None = None
    method: str = ""              # "Monte Carlo" | "linear" | "exact"

    @property
    def text(self) -> str:
        return N.join(self.parts)


def symbol_of(output: Mapping) -> str:
    q = text(output.get("quantity"))
    return SYMBOLS.get(q, q) if q else kind_symbol(output.get("kind"))


def _unit(output: Mapping) -> str:
    u = text(output.get("unit"))
    return "" if u in ("", "1") else f" {u}"


def _argument(output: Mapping, oi: int, k: int, point: Mapping, tunit: str) -> list[Any]:
    """``(350 °C)`` after the symbol: the point's temperature (or the path for heating / adiabatic outputs)."""
    kind = output.get("kind")
    base = N.path("outputs", oi)
    if kind == "heating_enthalpy" and num(output.get("from_K")) is not None:
        return ["(", N.temperature(output.get("from_K"), tunit, N.path(base, "from_K")), " → ",
                N.temperature(point.get("temperature_K"), tunit, N.path(base, "points", k, "temperature_K")), ")"]
    if kind == "adiabatic_temperature_rise" and num(output.get("start_temperature_K")) is not None:
        return [" from ", N.temperature(output.get("start_temperature_K"), tunit, N.path(base, "start_temperature_K"))]
    if num(point.get("temperature_K")) is None:
        return []
    return ["(", N.temperature(point.get("temperature_K"), tunit, N.path(base, "points", k, "temperature_K")), ")"]


def _trials(results: Mapping, mc: Mapping, where: str) -> list[Any]:
    n = mc.get("samples")
    if num(n) is None:
        n = (results.get("run") or {}).get("samples")
        where = "run/samples"
    return [N.count(n, where), " trials"] if num(n) is not None else []


def statement(results: Mapping, oi: int, tunit: str = "K") -> Statement:
    """The statement of output ``oi`` at its headline point (see the module docstring)."""
    o = outputs(results)[oi]
    st = Statement(text(o.get("name")), text(o.get("kind")))
    pts = points(o)
    if not pts:
        st.parts = [st.name, ": no result"]
        return st
    k = headline_index(o)
    p = pts[k]
    base = N.path("outputs", oi, "points", k)
    unit = _unit(o)
    p_cov = coverage_probability(results, p)
    lab = Num(pct_label(p_cov), N.path(base, "coverage_probability") if p.get("coverage_probability") is not None
              else "run/coverage_probability", "percent")
    sym = [symbol_of(o), *_argument(o, oi, k, p, tunit)]
    mc = p.get("monte_carlo") or {}
    lin = p.get("linear") or {}
    y_mc, u_mc = num(mc.get("mean")), num(mc.get("standard_uncertainty"))
    lo, hi = pair(mc.get("coverage_interval"))
    linear_stated = p.get("reported") == "linear" and num(lin.get("estimate")) is not None \
        and (num(lin.get("standard_uncertainty")) or 0) > 0
    if y_mc is not None and u_mc is not None and u_mc > 0 and lo is not None and hi is not None and not linear_stated:
        st.method = "Monte Carlo"
        U = (hi - lo) / 2
        dU = uncertainty_decimals(U)
        # ± U when the interval is symmetric about y to the last digit of U, or when the asymmetry is
        # within the noise of the endpoints (|A| ≤ 3 s(A)); else state the interval
        asym = mc.get("asymmetry") if isinstance(mc.get("asymmetry"), Mapping) else {}
        sym_ok = (dU is not None and abs((y_mc - lo) - (hi - y_mc)) <= 10.0 ** (-dU) * (1 + 1e-9)) \
            or asym.get("significant") is False
        how = ["Monte Carlo, ", *_trials(results, mc, N.path(base, "monte_carlo", "samples"))]
        if sym_ok:
            st.parts = [*sym, " = ", N.value(y_mc, dU, N.path(base, "monte_carlo", "mean")), unit, ", U = ",
                        N.Num(fmt_fixed(U, dU), N.path(base, "monte_carlo", "coverage_interval"), "halfwidth"), unit,
                        " (k = ", Num(fmt_k(U / u_mc), N.path(base, "monte_carlo", "coverage_interval") + " "
                                      + N.path(base, "monte_carlo", "standard_uncertainty"), "ratio"),
                        ", ", lab, ", ", *how, ")"]
        else:
            d = uncertainty_decimals(u_mc)
            st.parts = [*sym, " = ", N.value(y_mc, d, N.path(base, "monte_carlo", "mean")), unit, ", ", lab, " coverage interval [",
                        N.value(lo, d, N.path(base, "monte_carlo", "coverage_interval", 0)), ", ",
                        N.value(hi, d, N.path(base, "monte_carlo", "coverage_interval", 1)), "]", unit, " (", *how,
                        "; the distribution is asymmetric about the estimate beyond 3 standard errors of the Monte Carlo "
                        "endpoints, so no ± U is stated)"]
        d = uncertainty_decimals(u_mc)
        st.details.append(["u(y) = ", N.value(u_mc, d, N.path(base, "monte_carlo", "standard_uncertainty")), unit,
                           "; ", lab, " coverage interval [", N.value(lo, d, N.path(base, "monte_carlo", "coverage_interval", 0)), ", ",
                           N.value(hi, d, N.path(base, "monte_carlo", "coverage_interval", 1)), "]", unit,
                           " (probabilistically symmetric, JCGM 101 §7.7)"])
        st.details += _validation(o, p, base, unit, results)
    elif num(lin.get("estimate")) is not None and (num(lin.get("standard_uncertainty")) or 0) > 0:
        st.method = "linear"
        U, kf = num(lin.get("expanded_uncertainty")), num(lin.get("coverage_factor"))
        u = num(lin.get("standard_uncertainty"))
        U_num = None
        if U is not None:
            U_num = lambda dec: N.value(U, dec, N.path(base, "linear", "expanded_uncertainty"))  # noqa: E731
        elif kf is not None:
            U = kf * u
            U_num = lambda dec: Num(fmt_fixed(U, dec), N.path(base, "linear", "coverage_factor") + " "  # noqa: E731
                                    + N.path(base, "linear", "standard_uncertainty"), "product")
        nu = lin.get("effective_dof")
        nu_s = "∞" if num(nu) is None or num(nu) > 1e6 else str(int(round(num(nu))))
        if U_num is not None:
            dU = uncertainty_decimals(U)
            st.parts = [*sym, " = ", N.value(lin.get("estimate"), dU, N.path(base, "linear", "estimate")), unit, ", U = ",
                        U_num(dU), unit, " (k = ", N.value(kf if kf is not None else U / u, 2,
                                                             N.path(base, "linear", "coverage_factor")),
                        ", ", lab, ", linear propagation (GUM), ν_eff = ",
                        Num(nu_s, N.path(base, "linear", "effective_dof"), "dof") if nu_s != "∞" else "∞", ")"]
        else:       # no coverage factor in the results: state y and u(y) (GUM 7.2.2)
            d = uncertainty_decimals(u)
            st.parts = [*sym, " = ", N.value(lin.get("estimate"), d, N.path(base, "linear", "estimate")), unit,
                        ", u(y) = ", N.value(u, d, N.path(base, "linear", "standard_uncertainty")), unit,
                        " (standard uncertainty, linear propagation (GUM))"]
        d = uncertainty_decimals(u)
        st.details.append(["u(y) = ", N.value(u, d, N.path(base, "linear", "standard_uncertainty")), unit])
        if y_mc is not None and u_mc is not None and lo is not None and hi is not None:
            dm = uncertainty_decimals(u_mc) if u_mc > 0 else d
            st.details.append(["Monte Carlo (", *_trials(results, mc, N.path(base, "monte_carlo", "samples")), "): y = ",
                               N.value(y_mc, dm, N.path(base, "monte_carlo", "mean")), unit, ", u(y) = ",
                               N.value(u_mc, dm, N.path(base, "monte_carlo", "standard_uncertainty")), unit, ", ", lab,
                               " coverage interval [", N.value(lo, dm, N.path(base, "monte_carlo", "coverage_interval", 0)),
                               ", ", N.value(hi, dm, N.path(base, "monte_carlo", "coverage_interval", 1)), "]", unit])
        st.details += _validation(o, p, base, unit, results)
    else:
        st.method = "exact"
        y = num(lin.get("estimate")) if num(lin.get("estimate")) is not None else y_mc
        where = N.path(base, "linear", "estimate") if num(lin.get("estimate")) is not None else N.path(base, "monte_carlo", "mean")
        st.parts = [*sym, " = ", Num(fmt_sig(y, 6), where, "value"), unit, " (exact: no uncertain input reaches this output)"]
    if mass_basis(o) and unit in st.parts:      # per kg of what: after the estimate's unit
        st.parts.insert(st.parts.index(unit) + 1, f" of {mass_basis(o)}")
    st.details += _curve_line(results, oi, tunit)
    st.details += _limit_line(o, oi, p, k, tunit)
    v = p.get("linear_validated")
    st.badge = ("ok", "linear validated") if v is True else (("no", "Monte Carlo reported") if v is False else None)
    if v is None and _undecided(p):
        st.badge = ("na", "linear vs Monte Carlo not decided")
    st.parts = Parts([st.name, ": ", *st.parts])
    st.details = [Parts(d) for d in st.details]
    return st


def _undecided(p: Mapping) -> bool:
    """The point's JCGM 101 §8 comparison was made but is undecided (Monte Carlo not stable to δ)."""
    val = p.get("validation")
    return isinstance(val, Mapping) and val.get("verdict") == "undecided"


def _validation(o: Mapping, p: Mapping, base: str, unit: str, results: Mapping | None = None) -> list[list[Any]]:
    """The JCGM 101 §8 comparison, in words that state what was done (never "linear ok NO")."""
    v = p.get("linear_validated")
    val = p.get("validation") or {}
    tol = num(val.get("tolerance"))
    if tol is None:
        return []
    t = Num(fmt_sig(tol, 2), N.path(base, "validation", "tolerance"))
    if v is None and _undecided(p):
        mc = p.get("monte_carlo") or {}
        stated = "linear" if p.get("reported") == "linear" else "Monte Carlo"
        return [["Linear (GUM) vs Monte Carlo not decided: the Monte Carlo is not stable to δ = ", t, unit, " at ",
                 *_trials(results or {}, mc, N.path(base, "monte_carlo", "samples")),
                 " (JCGM 101 §7.9); increase --samples or use adaptive. The ", stated, " result is stated."]]
    if v is None:
        return []
    dl, dh = num(val.get("d_low")), num(val.get("d_high"))
    worst = max(abs(dl or 0.0), abs(dh or 0.0))
    which = "d_low" if abs(dl or 0.0) >= abs(dh or 0.0) else "d_high"
    if v:
        return [["Linear (GUM) interval agrees with Monte Carlo within δ = ", t, unit, " (JCGM 101 §8)."]]
    return [["Linear (GUM) interval differs from Monte Carlo by ", Num(fmt_sig(worst, 2), N.path(base, "validation", which)), unit,
             ", more than δ = ", t, unit, " (JCGM 101 §8): the Monte Carlo result is stated."]]


def _curve_line(results: Mapping, oi: int, tunit: str) -> list[list[Any]]:
    """For outputs over a temperature window: the range of the estimate and of U over the window."""
    o = outputs(results)[oi]
    pts = points(o)
    if len(pts) < 2:
        return []
    unit = _unit(o)

    def est(p):
        mc = p.get("monte_carlo") or {}
        return ("monte_carlo", "mean") if num(mc.get("mean")) is not None else ("linear", "estimate")

    def val(p):
        a, b = est(p)
        return num((p.get(a) or {}).get(b))

    idx = [i for i, p in enumerate(pts) if val(p) is not None and num(p.get("temperature_K")) is not None]
    if len(idx) < 2:
        return []
    t_lo = min(idx, key=lambda i: num(pts[i].get("temperature_K")))
    t_hi = max(idx, key=lambda i: num(pts[i].get("temperature_K")))
    y_lo = min(idx, key=lambda i: val(pts[i]))
    y_hi = max(idx, key=lambda i: val(pts[i]))

    def u_of(p):
        mc = p.get("monte_carlo") or {}
        return num(mc.get("standard_uncertainty")) if num(mc.get("mean")) is not None else num((p.get("linear") or {}).get("standard_uncertainty"))

    d = uncertainty_decimals(max((u_of(pts[i]) or 0) for i in idx) or None)
    line = ["Over ", N.temperature(pts[t_lo].get("temperature_K"), tunit, N.path("outputs", oi, "points", t_lo, "temperature_K"), False),
            " to ", N.temperature(pts[t_hi].get("temperature_K"), tunit, N.path("outputs", oi, "points", t_hi, "temperature_K")),
            " the estimate runs from ",
            N.value(val(pts[y_lo]), d, N.path("outputs", oi, "points", y_lo, *est(pts[y_lo]))), " to ",
            N.value(val(pts[y_hi]), d, N.path("outputs", oi, "points", y_hi, *est(pts[y_hi]))), unit,
            "; the statement above is at the temperature with the largest u(y)."]
    return [line]


def _limit_line(o: Mapping, oi: int, p: Mapping, k: int, tunit: str) -> list[list[Any]]:
    if p.get("exceedance_probability") is None:
        return []
    what = ("final temperature" if o.get("kind") == "adiabatic_temperature_rise"
            and o.get("limit_applies_to", "final_temperature") != "rise" else "output")
    from .probability import probability_parts

    return [[f"Probability that the {what} exceeds the limit ", N.limit(o, oi, tunit), ": ",
             *probability_parts(p, "exceedance", N.path("outputs", oi, "points", k)), "."]]


def statements(results: Mapping, tunit: str = "K") -> list[Statement]:
    return [statement(results, i, tunit) for i in range(len(outputs(results)))]


__all__ = ["Statement", "statement", "statements", "symbol_of", "SYMBOLS"]
