"""Weighted least-squares fits of heat-capacity models to measured (T, Cp[, u]) points.

Both supported forms are linear in their coefficients, so the fit is an ordinary (weighted)
linear least-squares problem solved through the singular value decomposition of the
column-scaled, whitened design matrix:

* ``polynomial``: Cp = a + b*T + c*T**2 + d*T**3 + e/T**2 (T in K), any subset of {a..e};
* ``shomate``: Cp = A + B*t + C*t**2 + D*t**3 + E/t**2 with t = T/1000 K (NIST Chemistry WebBook
  form; M. W. Chase, NIST-JANAF Thermochemical Tables, 4th ed., J. Phys. Chem. Ref. Data
  Monograph 9, 1998), all five terms by default.

The result carries the coefficient covariance matrix, so a case can use correlated coefficient
uncertainties directly (:meth:`CpFit.to_case_toml`). Reading measurement files lives in the
case layer (:mod:`uqthermo.case.cp_csv`, ``uqthermo fit DATA.csv``): this module does no I/O.
"""

from __future__ import annotations

import itertools
import math
import re
from dataclasses import dataclass, field
from typing import Sequence

import numpy as np

from uqthermo.errors import InputError

__all__ = [
    "POLYNOMIAL_TERMS",
    "SHOMATE_TERMS",
    "CpFit",
    "ModelScore",
    "fit_cp",
    "compare_models",
    "select_cp_model",
]

POLYNOMIAL_TERMS = ("a", "b", "c", "d", "e")
SHOMATE_TERMS = ("A", "B", "C", "D", "E")

_POLY_UNITS = {
    "a": "J/(mol*K)",
    "b": "J/(mol*K^2)",
    "c": "J/(mol*K^3)",
    "d": "J/(mol*K^4)",
    "e": "J*K/mol",
}


def _basis(model: str, terms: Sequence[str], T: np.ndarray) -> np.ndarray:
    """Design matrix X[i, k] = phi_k(T_i) of the model's basis functions (shape (N, P))."""
    T = np.asarray(T, dtype=float)
    x = T / 1000.0 if model == "shomate" else T
    cols = {
        0: np.ones_like(x),
        1: x,
        2: x * x,
        3: x * x * x,
        4: 1.0 / (x * x),
    }
    names = SHOMATE_TERMS if model == "shomate" else POLYNOMIAL_TERMS
    return np.stack([cols[names.index(t)] for t in terms], axis=-1)


def _check_model(model: str, terms) -> tuple[str, tuple[str, ...]]:
    if model not in ("polynomial", "shomate"):
        raise InputError(f"unknown heat-capacity model {model!r} for a fit; use 'polynomial' or 'shomate'",
                         key="model")
    allowed = SHOMATE_TERMS if model == "shomate" else POLYNOMIAL_TERMS
    if terms is None:
        terms = SHOMATE_TERMS if model == "shomate" else ("a", "b", "c")
    if isinstance(terms, str):
        # "abc" or "a,b,c" / "a b c"
        terms = tuple(terms) if terms.isalpha() else tuple(t for t in re.split(r"[\s,;+]+", terms) if t)
    terms = tuple(terms)
    bad = [t for t in terms if t not in allowed]
    if bad or not terms:
        raise InputError(
            f"terms {', '.join(map(repr, bad)) or '(none)'} not allowed for the {model} model; "
            f"choose from {', '.join(allowed)}",
            key="terms",
        )
    if len(set(terms)) != len(terms):
        raise InputError("terms repeat a coefficient", key="terms")
    # keep the canonical order
    terms = tuple(t for t in allowed if t in terms)
    return model, terms


def _fmt(x: float) -> str:
    """TOML float with round-trip precision."""
    x = float(x)
    if x == 0.0:
        return "0.0"
    s = repr(x)
    return s if ("." in s or "e" in s or "inf" in s or "nan" in s) else s + ".0"


def _toml_key(k: str) -> str:
    return k if re.fullmatch(r"[A-Za-z0-9_-]+", k) else '"' + k.replace("\\", "\\\\").replace('"', '\\"') + '"'


def _toml_str(s: str) -> str:
    return '"' + s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", " ") + '"'


@dataclass
class CpFit:
    r"""Result of a weighted least-squares heat-capacity fit.

    The estimate minimises :math:`\chi^2 = \sum_i \big((C_{p,i} - X_i\beta)/u_i\big)^2` with
    :math:`X_{ik} = \phi_k(T_i)`; its covariance is
    :math:`V = (X^\mathsf{T} W X)^{-1}`, :math:`W = \mathrm{diag}(u_i^{-2})` when the point
    uncertainties are taken as absolute, and :math:`V\,\chi^2/\nu` when they are not given
    (:math:`\nu = N - P`), as in scipy's ``curve_fit`` (``absolute_sigma``). Source: GUM
    (JCGM 100:2008) Annex H.3 (calibration by least squares); P. R. Bevington and
    D. K. Robinson, *Data Reduction and Error Analysis for the Physical Sciences*, 3rd ed., 2003,
    ch. 7.

    Attributes
    ----------
    model : str
        ``"polynomial"`` or ``"shomate"``.
    terms : tuple of str
        Fitted coefficient names in canonical order (``a..e`` or ``A..E``).
    coefficients : ndarray, shape (P,)
        Estimates (polynomial: SI units with T in K, see :meth:`coefficient_units`; Shomate:
        NIST form, t = T/1000 K, J/(mol K)).
    covariance, correlation : ndarray, shape (P, P)
    standard_uncertainty : ndarray, shape (P,)
    residuals : ndarray, shape (N,)
        Cp_measured - Cp_fitted, J/(mol K).
    normalized_residuals : ndarray or None
        residuals / u (only when u was given).
    chi2 : float
        Weighted sum of squares (unweighted when no u).
    dof : int
        N - P.
    reduced_chi2 : float
        chi2 / dof (NaN when dof = 0).
    absolute_sigma : bool
        True if the covariance uses the stated u as absolute; False if it was scaled by the
        reduced chi-squared (no u given, or ``absolute_sigma=False``).
    T_min, T_max : float
        Temperature range of the data, K.
    T, cp, u : ndarray
        The data used (u is None when not given).
    label : str
        Where the data came from (file name), carried into the case-file source.
    """

    model: str
    terms: tuple[str, ...]
    coefficients: np.ndarray
    covariance: np.ndarray
    correlation: np.ndarray
    standard_uncertainty: np.ndarray
    residuals: np.ndarray
    normalized_residuals: np.ndarray | None
    chi2: float
    dof: int
    reduced_chi2: float
    absolute_sigma: bool
    T_min: float
    T_max: float
    T: np.ndarray
    cp: np.ndarray
    u: np.ndarray | None
    label: str = ""
    condition_number: float = field(default=float("nan"))

    # ----------------------------------------------------------------- evaluation
    @property
    def n_points(self) -> int:
        return int(self.T.size)

    @property
    def n_parameters(self) -> int:
        return len(self.terms)

    def design_matrix(self, T) -> np.ndarray:
        """Basis functions at T, shape (..., P)."""
        return _basis(self.model, self.terms, np.asarray(T, dtype=float))

    def predict(self, T) -> np.ndarray:
        """Fitted Cp at T, J/(mol K)."""
        return self.design_matrix(T) @ self.coefficients

    def predict_uncertainty(self, T) -> np.ndarray:
        r"""Standard uncertainty of the fitted curve at T: :math:`\sqrt{\phi(T)^\mathsf{T} V \phi(T)}`, J/(mol K)."""
        X = self.design_matrix(T)
        return np.sqrt(np.einsum("...i,ij,...j->...", X, self.covariance, X))

    def full_coefficients(self) -> np.ndarray:
        """All five coefficients of the model (unfitted ones are exactly 0), canonical order."""
        names = SHOMATE_TERMS if self.model == "shomate" else POLYNOMIAL_TERMS
        out = np.zeros(5)
        for t, v in zip(self.terms, self.coefficients):
            out[names.index(t)] = v
        return out

    def full_covariance(self) -> np.ndarray:
        """5x5 covariance of all five coefficients in canonical order (zero rows/columns for the
        terms not fitted, which are exactly 0)."""
        names = SHOMATE_TERMS if self.model == "shomate" else POLYNOMIAL_TERMS
        idx = [names.index(t) for t in self.terms]
        V = np.zeros((5, 5))
        V[np.ix_(idx, idx)] = self.covariance
        return V

    def to_cp_model(self, allow_extrapolation: bool = False):
        """The fitted curve as a :mod:`uqthermo.thermo.cp` model, valid over the data range.

        Returns
        -------
        PolynomialCp or ShomateCp
            Coefficient vector in the model's canonical order (:meth:`full_coefficients`); its
            covariance is :meth:`full_covariance`.
        """
        from uqthermo.thermo import cp as cpm

        c = self.full_coefficients()
        if self.model == "shomate":
            return cpm.ShomateCp([(self.T_min, self.T_max, c)], allow_extrapolation=allow_extrapolation)
        return cpm.PolynomialCp(*c, t_min=self.T_min, t_max=self.T_max, allow_extrapolation=allow_extrapolation)

    def coefficient_units(self) -> list[str]:
        """Units of the coefficients (polynomial: SI with T in K; Shomate: NIST form)."""
        if self.model == "shomate":
            return ["J/(mol*K)"] * len(self.terms)
        return [_POLY_UNITS[t] for t in self.terms]

    @property
    def chi2_p_value(self) -> float:
        """P(chi2_nu >= chi2) — consistency of the stated u with the scatter (u given only)."""
        if self.u is None or self.dof <= 0:
            return float("nan")
        from scipy.stats import chi2

        return float(chi2.sf(self.chi2, self.dof))

    # ----------------------------------------------------------------- checks
    def coverage_warning(self, T_lo: float, T_hi: float) -> str | None:
        """Message when [T_lo, T_hi] (K) leaves the temperature range covered by the data, else None."""
        lo, hi = float(min(T_lo, T_hi)), float(max(T_lo, T_hi))
        tol = 1e-9 * max(1.0, self.T_max)
        below = self.T_min - lo
        above = hi - self.T_max
        if below <= tol and above <= tol:
            return None
        parts = []
        if below > tol:
            parts.append(f"{below:.4g} K below")
        if above > tol:
            parts.append(f"{above:.4g} K above")
        return (
            f"the Cp data{(' of ' + self.label) if self.label else ''} cover "
            f"{self.T_min:.6g}-{self.T_max:.6g} K but {lo:.6g}-{hi:.6g} K is used: the fitted "
            f"curve is extrapolated {' and '.join(parts)} the data"
        )

    def consistency_warning(self) -> str | None:
        """Message when the stated u do not explain the scatter (chi2 test at the 1 % level)."""
        p = self.chi2_p_value
        if not np.isfinite(p):
            return None
        if p < 0.01:
            return (f"the residuals are larger than the stated u explain (reduced chi2 = "
                    f"{self.reduced_chi2:.3g}, dof {self.dof}, p = {p:.2g}); the covariance may be "
                    "too small — check u or the model, or fit with absolute_sigma=False")
        if p > 0.99:
            return (f"the residuals are much smaller than the stated u (reduced chi2 = "
                    f"{self.reduced_chi2:.3g}, dof {self.dof}); the stated u may be overestimated")
        return None

    # ----------------------------------------------------------------- output
    def summary(self) -> str:
        """Plain-text fit report: coefficients with standard uncertainties, fit statistics,
        correlation matrix and residuals."""
        lines = []
        form = ("Cp = A + B*t + C*t^2 + D*t^3 + E/t^2, t = T/1000 K" if self.model == "shomate"
                else "Cp = a + b*T + c*T^2 + d*T^3 + e/T^2, T in K")
        lines.append(f"{self.model} fit ({form}), Cp in J/(mol*K)")
        lines.append(f"data: {self.n_points} points, {self.T_min:.6g}-{self.T_max:.6g} K"
                     + (f" from {self.label}" if self.label else ""))
        w = max(len(t) for t in self.terms)
        lines.append(f"  {'term':<{w}}  {'value':>16}  {'u (k=1)':>12}  {'u rel':>8}  unit")
        for t, v, s, un in zip(self.terms, self.coefficients, self.standard_uncertainty,
                               self.coefficient_units()):
            rel = f"{abs(s / v) * 100:.3g}%" if v != 0 else "-"
            lines.append(f"  {t:<{w}}  {v:>16.9g}  {s:>12.4g}  {rel:>8}  {un}")
        basis = "stated u, absolute" if self.absolute_sigma else (
            "scaled by reduced chi2" + ("" if self.u is not None else " (no u given)"))
        lines.append(f"chi2 = {self.chi2:.6g}, dof = {self.dof}, reduced chi2 = {self.reduced_chi2:.4g}"
                     f"; covariance: {basis}")
        rms = float(np.sqrt(np.mean(self.residuals**2)))
        lines.append(f"residuals: rms {rms:.4g}, max |r| {float(np.max(np.abs(self.residuals))):.4g} J/(mol*K)")
        if self.n_parameters > 1:
            lines.append("correlation matrix:")
            lines.append("  " + " ".join(f"{t:>8}" for t in self.terms))
            for t, row in zip(self.terms, self.correlation):
                lines.append(f"  {t:<{w}} " + " ".join(f"{r:8.4f}" for r in row))
        lines.append("points:  T [K]   Cp [J/(mol*K)]   fitted   residual" + ("   r/u" if self.u is not None else ""))
        fit = self.cp - self.residuals
        for i in range(self.n_points):
            extra = f"  {self.normalized_residuals[i]:6.2f}" if self.normalized_residuals is not None else ""
            lines.append(f"  {self.T[i]:9.3f}  {self.cp[i]:12.6g}  {fit[i]:12.6g}  {self.residuals[i]:10.3g}{extra}")
        warn = self.consistency_warning()
        if warn:
            lines.append("warning: " + warn)
        return "\n".join(lines)

    def to_case_toml(self, species: str, phase: str, source: str | None = None, *,
                     include_range: bool = True, header: bool = True) -> str:
        """The case-file ``heat_capacity`` table for this fit, ready to paste.

        Parameters
        ----------
        species, phase : str
            Species key and phase symbol (``[species.SPECIES.PHASE.heat_capacity]``).
        source : str, optional
            Text for the ``source`` key (default: a description of the fit).
        include_range : bool
            Write the data's temperature range as the validity range ``T = [...]``.
        header : bool
            Write a ``[species.X.p.heat_capacity]`` table header (True) or an inline
            ``heat_capacity = { ... }`` line to put under ``[species.X.p]`` (False).

        Returns
        -------
        str
            TOML text. Coefficients are in the contract's units (polynomial: SI, T in K;
            Shomate: NIST form, t = T/1000 K); ``u`` are standard uncertainties in the same
            order as the coefficients, ``correlation`` their correlation matrix. Numbers are
            written with round-trip precision so the matrix stays positive semidefinite.
        """
        if source is None:
            source = (f"uqthermo fit{(' of ' + self.label) if self.label else ''}: {self.model} "
                      f"({', '.join(self.terms)}), {self.n_points} points, {self.T_min:.6g}-{self.T_max:.6g} K, "
                      f"reduced chi2 {self.reduced_chi2:.3g} (dof {self.dof}), covariance "
                      + ("from stated u" if self.absolute_sigma else "scaled by reduced chi2"))
        T_range = f'["{self.T_min:.10g} K", "{self.T_max:.10g} K"]'
        if self.model == "shomate":
            full = self.full_coefficients()
            fitted = [t in self.terms for t in SHOMATE_TERMS]
            u_full = np.zeros(5)
            R_full = np.eye(5)
            idx = [SHOMATE_TERMS.index(t) for t in self.terms]
            u_full[idx] = self.standard_uncertainty
            R_full[np.ix_(idx, idx)] = self.correlation
            coef_txt = "[" + ", ".join(_fmt(v) for v in full) + "]"
            u_vals, R = u_full, R_full
            body = [("model", '"shomate"'),
                    ("ranges", "[ { T = " + T_range + ", coefficients = " + coef_txt + " } ]")]
            comment = "# Cp = A + B*t + C*t^2 + D*t^3 + E/t^2, t = T/1000 K, Cp in J/(mol*K)"
            if not all(fitted):
                comment += ("; not fitted (fixed at 0, u = 0): "
                            + ", ".join(t for t, f in zip(SHOMATE_TERMS, fitted) if not f))
        else:
            coef_txt = "{ " + ", ".join(f"{t} = {_fmt(v)}" for t, v in zip(self.terms, self.coefficients)) + " }"
            u_vals, R = self.standard_uncertainty, self.correlation
            body = [("model", '"polynomial"'), ("coefficients", coef_txt)]
            if include_range:
                body.append(("T", T_range))
            comment = ("# Cp = a + b*T + c*T^2 + d*T^3 + e/T^2, T in K, Cp in J/(mol*K); coefficient units: "
                       + ", ".join(f"{t} {_POLY_UNITS[t]}" for t in self.terms))
        body.append(("u", "[" + ", ".join(_fmt(v) for v in u_vals) + "]"))
        if len(u_vals) > 1:
            body.append(("correlation", "[" + ", ".join("[" + ", ".join(_fmt(r) for r in row) + "]" for row in R) + "]"))
        body.append(("source", _toml_str(source)))
        if header:
            head = f"[species.{_toml_key(species)}.{_toml_key(phase)}.heat_capacity]"
            out = [comment, head]
            for k, v in body:
                if k == "correlation":
                    rows = ",\n".join("  [" + ", ".join(_fmt(r) for r in row) + "]" for row in R)
                    out.append(f"correlation = [\n{rows},\n]")
                else:
                    out.append(f"{k} = {v}")
            return "\n".join(out) + "\n"
        return comment + "\nheat_capacity = { " + ", ".join(f"{k} = {v}" for k, v in body) + " }\n"


def fit_cp(T, cp, u=None, model: str = "polynomial", terms=None, *, absolute_sigma: bool = True,
           label: str = "") -> CpFit:
    r"""Fit a heat-capacity model to measured points by weighted linear least squares.

    .. math::

        \hat\beta = \arg\min_\beta \sum_i \left(\frac{C_{p,i} - \sum_k \beta_k \phi_k(T_i)}{u_i}\right)^2,
        \qquad V(\hat\beta) = (X^\mathsf{T} W X)^{-1} \;[\times \chi^2/\nu]

    solved by the SVD of the whitened design matrix with unit-norm columns (stable for the
    badly scaled polynomial basis 1, T, T², T³, 1/T²). Source: GUM (JCGM 100:2008) H.3;
    Bevington & Robinson (2003) ch. 7; identical to scipy.optimize.curve_fit for a linear model
    (``absolute_sigma=True`` when u is given).

    Parameters
    ----------
    T : array_like, shape (N,)
        Temperatures, K (> 0).
    cp : array_like, shape (N,)
        Measured molar heat capacities, J/(mol K).
    u : array_like, shape (N,), optional
        Standard uncertainties of cp, J/(mol K) (> 0). Without u the points are weighted equally
        and the covariance is scaled by the reduced chi-squared.
    model : {"polynomial", "shomate"}
    terms : sequence of str, optional
        Polynomial: subset of ``a b c d e`` (default ``a b c``); Shomate: subset of
        ``A B C D E`` (default all five).
    absolute_sigma : bool
        With u given: True (default) uses u as absolute standard uncertainties; False scales the
        covariance by the reduced chi-squared.
    label : str
        Data origin carried into reports.

    Returns
    -------
    CpFit

    Raises
    ------
    InputError
        Bad data (non-finite, non-positive T or u, shape mismatch), too few points for the
        number of terms, or terms that the data cannot identify (rank-deficient design).
    """
    model, terms = _check_model(model, terms)
    try:
        Ta = np.asarray(T, dtype=float).ravel()
        ya = np.asarray(cp, dtype=float).ravel()
        ua = None if u is None else np.asarray(u, dtype=float).ravel()
    except (TypeError, ValueError):
        raise InputError("T, cp and u must be numeric arrays", key="data") from None
    if Ta.shape != ya.shape or (ua is not None and ua.shape != Ta.shape):
        raise InputError("T, cp (and u) must have the same number of points", key="data")
    if not (np.all(np.isfinite(Ta)) and np.all(np.isfinite(ya))) or (ua is not None and not np.all(np.isfinite(ua))):
        raise InputError("the data contain non-finite values", key="data")
    if np.any(Ta <= 0):
        raise InputError("temperatures must be positive absolute temperatures (K)", key="data.T")
    if ua is not None and np.any(ua <= 0):
        raise InputError("standard uncertainties u must be positive", key="data.u")
    N, P = Ta.size, len(terms)
    need = P if ua is not None and absolute_sigma else P + 1
    if N < need:
        raise InputError(
            f"{N} points cannot determine {P} coefficients ({', '.join(terms)})"
            f"{' with an estimated scatter' if need > P else ''}; need at least {need}",
            key="data",
        )

    X = _basis(model, terms, Ta)
    w = np.ones(N) if ua is None else 1.0 / ua
    A = X * w[:, None]
    b = ya * w
    norms = np.linalg.norm(A, axis=0)
    if np.any(norms == 0):
        raise InputError("a basis function vanishes at every data point", key="terms")
    As = A / norms
    U, s, Vt = np.linalg.svd(As, full_matrices=False)
    cond = float(s[0] / s[-1]) if s[-1] > 0 else float("inf")
    if not np.isfinite(cond) or cond > 1e12:
        raise InputError(
            f"the data cannot separate the terms {', '.join(terms)} (design condition number "
            f"{cond:.2g}); use fewer terms or data over a wider temperature range",
            key="terms",
        )
    beta_s = Vt.T @ ((U.T @ b) / s)
    beta = beta_s / norms
    cov_s = (Vt.T / s**2) @ Vt
    cov = cov_s / np.outer(norms, norms)

    resid = ya - X @ beta
    chi2 = float(np.sum((resid * w) ** 2))
    dof = N - P
    red = chi2 / dof if dof > 0 else float("nan")
    scaled = ua is None or not absolute_sigma
    if scaled:
        cov = cov * red
    cov = 0.5 * (cov + cov.T)
    su = np.sqrt(np.diag(cov))
    corr = cov / np.outer(su, su)
    np.fill_diagonal(corr, 1.0)
    corr = np.clip(corr, -1.0, 1.0)
    return CpFit(
        model=model,
        terms=terms,
        coefficients=beta,
        covariance=cov,
        correlation=corr,
        standard_uncertainty=su,
        residuals=resid,
        normalized_residuals=None if ua is None else resid / ua,
        chi2=chi2,
        dof=dof,
        reduced_chi2=red,
        absolute_sigma=not scaled,
        T_min=float(Ta.min()),
        T_max=float(Ta.max()),
        T=Ta,
        cp=ya,
        u=ua,
        label=label,
        condition_number=cond,
    )


# --------------------------------------------------------------------------------------------
# Model selection
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class ModelScore:
    """Information criteria of one candidate fit (smaller is better).

    Attributes
    ----------
    terms : tuple of str
    aic, aicc, bic : float
    fit : CpFit
    """

    terms: tuple[str, ...]
    aic: float
    aicc: float
    bic: float
    fit: CpFit


def _scores(fit: CpFit) -> tuple[float, float, float]:
    N, P = fit.n_points, fit.n_parameters
    if fit.u is not None and fit.absolute_sigma:
        m2lnL = fit.chi2  # + constant (known sigma)
    else:
        ssr = max(fit.chi2, np.finfo(float).tiny)
        m2lnL = N * math.log(ssr / N)
        P = P + 1  # the scatter is estimated too
    aic = m2lnL + 2 * P
    aicc = aic + (2 * P * (P + 1) / (N - P - 1) if N - P - 1 > 0 else float("inf"))
    bic = m2lnL + P * math.log(N)
    return aic, aicc, bic


def compare_models(T, cp, u=None, model: str = "polynomial", candidates=None, *,
                   criterion: str = "aicc", absolute_sigma: bool = True, label: str = "") -> list[ModelScore]:
    r"""Fit every candidate term subset and rank them by an information criterion.

    .. math::

        \mathrm{AIC} = -2\ln L + 2P, \quad
        \mathrm{AIC_c} = \mathrm{AIC} + \frac{2P(P+1)}{N-P-1}, \quad
        \mathrm{BIC} = -2\ln L + P\ln N

    with :math:`-2\ln L = \chi^2` (+ const.) for known u, and :math:`N\ln(\mathrm{SSR}/N)`
    (+ const., one extra parameter for the scatter) otherwise. Sources: H. Akaike, IEEE Trans.
    Autom. Control 19 (1974) 716-723; K. P. Burnham and D. R. Anderson, *Model Selection and
    Multimodel Inference*, 2nd ed., Springer, 2002 (AICc); G. Schwarz, Ann. Stat. 6 (1978)
    461-464 (BIC).

    Parameters
    ----------
    T, cp, u : array_like
        Data as for :func:`fit_cp`.
    model : {"polynomial", "shomate"}
    candidates : iterable of term tuples, optional
        Default: every subset of the model's five terms that contains the constant term.
    criterion : {"aicc", "aic", "bic"}
        Ranking key.

    Returns
    -------
    list of ModelScore
        Sorted best first; candidates the data cannot identify are skipped.
    """
    if criterion not in ("aic", "aicc", "bic"):
        raise InputError(f"criterion must be 'aic', 'aicc' or 'bic', not {criterion!r}", key="criterion")
    names = SHOMATE_TERMS if model == "shomate" else POLYNOMIAL_TERMS
    if candidates is None:
        rest = names[1:]
        candidates = [(names[0],) + c for r in range(len(rest) + 1) for c in itertools.combinations(rest, r)]
    out = []
    for terms in candidates:
        try:
            f = fit_cp(T, cp, u, model, terms, absolute_sigma=absolute_sigma, label=label)
        except InputError:
            continue
        out.append(ModelScore(f.terms, *_scores(f), f))
    if not out:
        raise InputError("no candidate model can be fitted to these data (too few points?)", key="data")
    out.sort(key=lambda s: (getattr(s, criterion), s.fit.n_parameters))
    return out


def select_cp_model(T, cp, u=None, model: str = "polynomial", *, criterion: str = "aicc",
                    absolute_sigma: bool = True, label: str = "") -> CpFit:
    """Best fit by :func:`compare_models` (same arguments); returns its :class:`CpFit`."""
    return compare_models(T, cp, u, model, criterion=criterion, absolute_sigma=absolute_sigma, label=label)[0].fit
