"""Energy balances for design and safety outputs: final temperature, adiabatic rise, MTSR,
criticality classes, exceedance probabilities and heat release.

Everything here is pure and vectorised over samples (first axis): no I/O, no per-sample Python
loops. Units are SI-molar: temperatures in K, enthalpies in J or J/mol, heat release in W.

The adiabatic energy balance follows Hess's law along the path "react at the start temperature
T0, then heat the final contents from T0 to Tf"::

    H_charge(Tf) - H_charge(T0) = -xi * Delta_r H(T0)

where ``H_charge`` is the enthalpy of the contents that absorb the heat (the final mixture,
latent heats of its phase changes included). This is the standard first-law balance used for
runaway assessment (F. Stoessel, *Thermal Safety of Chemical Processes*, Wiley-VCH, 2008,
ch. 2-3).
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import Callable

import numpy as np

from uqthermo.errors import PhysicsError, StatisticsError

__all__ = [
    "FinalTemperatureInfo",
    "solve_final_temperature",
    "adiabatic_temperature_rise",
    "constant_cp_temperature_rise",
    "mtsr",
    "CRITICALITY_CLASSES",
    "criticality_class",
    "criticality_class_probabilities",
    "exceedance_probability",
    "wilson_interval",
    "heat_release",
]


# --------------------------------------------------------------------------------------------
# Final temperature of an energy balance
# --------------------------------------------------------------------------------------------


@dataclass(frozen=True)
class FinalTemperatureInfo:
    """Diagnostics of :func:`solve_final_temperature` (arrays of shape (N,)).

    Attributes
    ----------
    on_plateau : ndarray of bool
        True where the target enthalpy falls inside a jump of ``h_of_T`` (a latent heat): the
        final temperature is then the transition temperature and the charge is only partly
        transformed (e.g. the solvent partly vaporised).
    absorbed_fraction : ndarray of float
        On a plateau, the fraction of the jump (latent heat) that the target absorbs, in (0, 1);
        for a solvent boiling at Tf this is the vaporised fraction of the boiling component.
        NaN where not on a plateau.
    unreachable : ndarray of bool
        True where the target is not reached inside [T_lo_min, T_hi_max].
    converged : ndarray of bool
        True where the bracket shrank below ``tol``.
    iterations : int
        Iterations used (the same for the whole vectorised solve).
    """

    on_plateau: np.ndarray
    absorbed_fraction: np.ndarray
    unreachable: np.ndarray
    converged: np.ndarray
    iterations: int


def _as_float_array(x, name: str) -> np.ndarray:
    try:
        arr = np.asarray(x, dtype=float)
    except (TypeError, ValueError):
        raise PhysicsError(f"{name} must be numeric", key=name) from None
    return arr


def solve_final_temperature(
    h_of_T: Callable[[np.ndarray], np.ndarray],
    target,
    T0,
    T_hi_max,
    tol: float = 1e-6,
    max_iter: int = 200,
    *,
    T_lo_min=1.0,
    on_unreachable: str = "raise",
    full_output: bool = False,
):
    r"""Solve the energy balance :math:`h(T_f) - h(T_0) = q` for the final temperature, per sample.

    .. math::

        \Delta H_\mathrm{charge}(T_0 \to T_f) = \int_{T_0}^{T_f} \sum_i n_i C_{p,i}(T)\,dT
            + \sum_{\text{transitions } T_0 < T_{tr} < T_f} n\,\Delta_{tr}H = q

    where ``h_of_T`` gives the left-hand side (J) and ``q`` is ``target`` (J; for an adiabatic
    reactor ``q = -xi * Delta_r H(T0)``). ``h_of_T`` must be non-decreasing in T (heat
    capacities are positive, latent heats on heating are positive) but may jump at transition
    temperatures. A target that falls inside a jump gives Tf = the transition temperature (the
    charge is partly transformed; see ``full_output``). Targets of both signs are handled:
    an endothermic balance (q < 0) gives a temperature drop.

    Method: a vectorised safeguarded bracketing solver over the whole sample array at once —
    the ITP method (interpolate, truncate, project; I. F. D. Oliveira and R. H. C. Takahashi,
    ACM Trans. Math. Softw. 47 (2020) article 5): regula-falsi steps, perturbed and projected
    so that the iteration count never exceeds bisection's plus one. Smooth balances converge
    superlinearly (typically < 10 iterations); a target inside a jump converges at bisection
    speed onto the jump temperature.

    Parameters
    ----------
    h_of_T : callable
        ``h_of_T(T) -> ndarray`` with ``T`` of shape (N,), returning the charge's enthalpy change
        from T0 (J) per sample, shape (N,). Only ever called with arrays of shape (N,).
    target : array_like, shape (N,) or scalar
        Heat absorbed by the charge q, J (positive heats it, negative cools it).
    T0 : array_like, shape (N,) or scalar
        Start temperature, K.
    T_hi_max : array_like or float
        Upper end of the search for q > 0 (e.g. the top of the Cp data's validity), K; finite.
    tol : float
        Absolute tolerance on Tf, K (bracket width at convergence).
    max_iter : int
        Maximum number of iterations.
    T_lo_min : array_like or float, keyword-only
        Lower end of the search for q < 0, K (default 1 K; pass the bottom of the Cp validity).
    on_unreachable : {"raise", "nan", "bound"}
        What to do where the target is not reached inside the search interval: raise
        :class:`~uqthermo.errors.PhysicsError`, return NaN, or return the interval end.
    full_output : bool
        If True return ``(Tf, FinalTemperatureInfo)``.

    Returns
    -------
    Tf : ndarray, shape (N,)
        Final temperature, K.
    info : FinalTemperatureInfo
        Only when ``full_output`` is True.

    Raises
    ------
    PhysicsError
        Bad arguments, non-finite enthalpies, or (``on_unreachable="raise"``) a target outside
        the search interval.
    """
    if on_unreachable not in ("raise", "nan", "bound"):
        raise PhysicsError(f"on_unreachable must be 'raise', 'nan' or 'bound', not {on_unreachable!r}")
    if not (tol > 0):
        raise PhysicsError("tol must be positive")
    q = _as_float_array(target, "target")
    T0a = _as_float_array(T0, "T0")
    q, T0a = np.broadcast_arrays(np.atleast_1d(q), np.atleast_1d(T0a))
    if q.ndim != 1:
        raise PhysicsError("target and T0 must be scalars or 1-D arrays over samples")
    n = q.shape[0]
    q = q.astype(float, copy=True)
    T0a = T0a.astype(float, copy=True)
    T_hi = np.broadcast_to(_as_float_array(T_hi_max, "T_hi_max"), (n,)).astype(float)
    T_lo = np.broadcast_to(_as_float_array(T_lo_min, "T_lo_min"), (n,)).astype(float)
    if not (np.all(np.isfinite(q)) and np.all(np.isfinite(T0a))):
        raise PhysicsError("target and T0 must be finite")
    if np.any(T0a <= 0):
        raise PhysicsError("T0 must be a positive absolute temperature (K)")
    if np.any(T_hi < T0a) or np.any(T_lo > T0a):
        raise PhysicsError("the search interval [T_lo_min, T_hi_max] must contain T0")

    def h(T):
        val = np.asarray(h_of_T(T), dtype=float)
        try:
            val = np.broadcast_to(val, (n,))
        except ValueError:
            raise PhysicsError(
                f"h_of_T must return one enthalpy per sample, shape ({n},); got shape {val.shape}"
            ) from None
        if not np.all(np.isfinite(val)):
            raise PhysicsError("the charge enthalpy h_of_T returned non-finite values")
        return val

    h0 = h(T0a)
    heating = q >= 0
    far = np.where(heating, T_hi, T_lo)
    g_far = h(far) - h0 - q
    # Bracket [a, b] with g(a) <= 0 <= g(b), g(T) = h(T) - h(T0) - q non-decreasing.
    a = np.where(heating, T0a, far)
    b = np.where(heating, far, T0a)
    ga = np.where(heating, -q, g_far)          # true residuals at the bracket ends
    gb = np.where(heating, g_far, -q)
    unreachable = np.where(heating, gb < 0, ga > 0)
    trivial = q == 0
    a = np.where(trivial, T0a, a)
    b = np.where(trivial, T0a, b)
    ga = np.where(trivial, 0.0, ga)
    gb = np.where(trivial, 0.0, gb)

    # Average slope over the search interval (J/K), latent heats included: the scale against
    # which a residual left at a converged bracket reveals a jump (plateau).
    with np.errstate(divide="ignore", invalid="ignore"):
        s_avg = np.abs(g_far + q) / np.abs(far - T0a)
    s_avg = np.where(np.isfinite(s_avg), s_avg, 0.0)
    scale = np.maximum(np.abs(q), np.abs(g_far + q))
    ftol = 1e-14 * scale  # an exact hit

    # ITP iteration (interpolate, truncate, project): I. F. D. Oliveira and R. H. C. Takahashi,
    # ACM Trans. Math. Softw. 47 (2020) 5:1-5:24. Worst case: bisection's iteration count plus
    # n0; superlinear on smooth h. eps = tol/2 so the final bracket is at most tol wide.
    eps = 0.5 * tol
    width0 = b - a
    with np.errstate(divide="ignore"):
        n_half = np.ceil(np.log2(np.maximum(width0, tol) / (2.0 * eps)))
    n0 = 1.0
    n_max = n_half + n0
    kappa1 = np.where(width0 > 0, 0.2 / np.where(width0 > 0, width0, 1.0), 0.0)
    kappa2 = 2.0
    done = unreachable | trivial | ((b - a) <= tol)
    it = 0
    while not np.all(done) and it < max_iter:
        k = np.flatnonzero(~done)
        ak, bk, gak, gbk = a[k], b[k], ga[k], gb[k]
        width = bk - ak
        x_half = 0.5 * (ak + bk)
        r = np.maximum(eps * np.exp2(n_max[k] - it) - 0.5 * width, 0.0)
        delta = kappa1[k] * width**kappa2
        denom = gbk - gak
        with np.errstate(divide="ignore", invalid="ignore"):
            x_f = (gbk * ak - gak * bk) / denom
        x_f = np.where(np.isfinite(x_f) & (denom > 0), x_f, x_half)
        sigma = np.sign(x_half - x_f)
        x_t = np.where(delta <= np.abs(x_half - x_f), x_f + sigma * delta, x_half)
        x = np.where(np.abs(x_t - x_half) <= r, x_t, x_half - sigma * r)
        it += 1

        T_eval = a.copy()  # h_of_T is always called with the full (N,) array
        T_eval[k] = x
        gx = (h(T_eval) - h0 - q)[k]

        left = gx < 0  # root in (x, b]
        right = gx > 0
        a[k] = np.where(left, x, ak)
        ga[k] = np.where(left, gx, gak)
        b[k] = np.where(right, x, bk)
        gb[k] = np.where(right, gx, gbk)
        hit = (np.abs(gx) <= ftol[k])
        a[k] = np.where(hit, x, a[k])
        b[k] = np.where(hit, x, b[k])
        ga[k] = np.where(hit, gx, ga[k])
        gb[k] = np.where(hit, gx, gb[k])
        done[k] = hit | ((b[k] - a[k]) <= tol)

    converged = done & ~unreachable
    w = b - a
    jump = gb - ga
    # A continuous h leaves end residuals of order slope * width; a latent heat leaves a finite
    # residual on both sides of the transition temperature.
    threshold = 10.0 * s_avg * np.maximum(w, tol) + 1e-12 * scale
    on_plateau = converged & ~trivial & (np.minimum(-ga, gb) > threshold)
    with np.errstate(divide="ignore", invalid="ignore"):
        frac = np.where(on_plateau, -ga / jump, np.nan)
        t_interp = np.where(jump > 0, a - ga * w / jump, 0.5 * (a + b))
    Tf = np.where(on_plateau, 0.5 * (a + b), np.clip(t_interp, a, b))
    Tf = np.where(trivial, T0a, Tf)

    if np.any(unreachable):
        count = int(np.count_nonzero(unreachable))
        if on_unreachable == "raise":
            hot = int(np.count_nonzero(unreachable & heating))
            cold = count - hot
            parts = []
            if hot:
                parts.append(f"above T_hi_max = {float(np.max(T_hi[unreachable & heating])):g} K")
            if cold:
                parts.append(f"below T_lo_min = {float(np.min(T_lo[unreachable & ~heating])):g} K")
            raise PhysicsError(
                f"energy balance not closed: final temperature {' and '.join(parts)} "
                f"for {count} of {n} samples (widen the temperature range of the heat-capacity data)"
            )
        Tf = np.where(unreachable, np.nan if on_unreachable == "nan" else far, Tf)
    if not full_output:
        return Tf
    info = FinalTemperatureInfo(
        on_plateau=on_plateau,
        absorbed_fraction=frac,
        unreachable=unreachable,
        converged=converged,
        iterations=it,
    )
    return Tf, info


def adiabatic_temperature_rise(h_of_T, heat_released, T0, T_hi_max, **kwargs):
    r"""Adiabatic temperature rise :math:`\Delta T_{ad} = T_f - T_0` per sample.

    .. math::

        \int_{T_0}^{T_0 + \Delta T_{ad}} \sum_i n_i C_{p,i}(T)\,dT
            + \sum_{tr} n\,\Delta_{tr}H = q = -\xi\,\Delta_r H(T_0)

    (first-law balance of a closed adiabatic batch, Hess path "react at T0, heat the final
    contents"; F. Stoessel, *Thermal Safety of Chemical Processes*, Wiley-VCH, 2008,
    generalised to temperature-dependent Cp and phase changes).

    Parameters
    ----------
    h_of_T : callable
        Charge enthalpy change from T0, J, at per-sample temperatures (see
        :func:`solve_final_temperature`).
    heat_released : array_like, shape (N,)
        :math:`q = -\xi\,\Delta_r H(T_0)`, J (positive for an exothermic reaction).
    T0 : array_like
        Start temperature, K.
    T_hi_max : array_like or float
        Upper end of the search, K.
    **kwargs
        Passed to :func:`solve_final_temperature` (``tol``, ``T_lo_min``, ``on_unreachable``,
        ``full_output`` ...).

    Returns
    -------
    ndarray, shape (N,)
        Temperature rise, K (negative for an endothermic reaction); with ``full_output=True`` a
        tuple ``(delta_T, FinalTemperatureInfo)``.
    """
    out = solve_final_temperature(h_of_T, heat_released, T0, T_hi_max, **kwargs)
    T0a = np.asarray(T0, dtype=float)
    if isinstance(out, tuple):
        return out[0] - T0a, out[1]
    return out - T0a


def constant_cp_temperature_rise(extent, delta_r_H, heat_capacity):
    r"""Closed-form adiabatic temperature rise for a temperature-independent heat capacity.

    .. math::

        \Delta T_{ad} = \frac{-\xi\,\Delta_r H}{\sum_i n_i C_{p,i}}

    (F. Stoessel, *Thermal Safety of Chemical Processes*, Wiley-VCH, 2008, written per mole of
    extent instead of per mass of reaction mass).

    Parameters
    ----------
    extent : array_like
        Extent of reaction :math:`\xi`, mol.
    delta_r_H : array_like
        Reaction enthalpy, J/mol.
    heat_capacity : array_like
        Total heat capacity of the charge :math:`\sum_i n_i C_{p,i}`, J/K (> 0).

    Returns
    -------
    ndarray
        :math:`\Delta T_{ad}`, K.
    """
    C = np.asarray(heat_capacity, dtype=float)
    if np.any(~(C > 0)):
        raise PhysicsError("the charge heat capacity must be positive")
    return -np.asarray(extent, dtype=float) * np.asarray(delta_r_H, dtype=float) / C


# --------------------------------------------------------------------------------------------
# MTSR and Stoessel criticality classes
# --------------------------------------------------------------------------------------------


def mtsr(T_process, delta_T_ad, accumulation=1.0):
    r"""Maximum temperature of the synthesis reaction (MTSR).

    .. math::

        \mathrm{MTSR} = T_p + X_{ac}\,\Delta T_{ad}

    with :math:`T_p` the process temperature (K), :math:`\Delta T_{ad}` the adiabatic
    temperature rise of the complete reaction (K) and :math:`X_{ac}` the maximum fraction of
    unconverted (accumulated) reactant at the moment the cooling fails (0 for an instantaneous
    semi-batch feed-controlled reaction, 1 for a batch reaction). Source: F. Stoessel, "What is
    your thermal risk?", Chem. Eng. Prog. 89 (10) (1993) 68-75; F. Stoessel, *Thermal Safety of
    Chemical Processes*, Wiley-VCH, 2008.

    Parameters
    ----------
    T_process : array_like
        Process temperature, K.
    delta_T_ad : array_like
        Adiabatic temperature rise, K.
    accumulation : array_like
        Accumulation :math:`X_{ac}` in [0, 1] (default 1: batch).

    Returns
    -------
    ndarray
        MTSR, K (broadcast shape).
    """
    X = np.asarray(accumulation, dtype=float)
    if np.any(~((X >= 0) & (X <= 1))):
        raise PhysicsError("accumulation must lie in [0, 1]", key="accumulation")
    return np.asarray(T_process, dtype=float) + X * np.asarray(delta_T_ad, dtype=float)


CRITICALITY_CLASSES = {
    1: "MTSR < MTT < TD24: the synthesis cannot reach the technical limit nor trigger the "
       "decomposition; evaporative cooling (MTT) is a further barrier",
    2: "MTSR < TD24 <= MTT: the synthesis cannot trigger the decomposition, but the technical "
       "limit lies above TD24 and is no barrier if the mass stays long at MTSR",
    3: "MTT <= MTSR < TD24: the technical limit (e.g. boiling) is reached, the decomposition is "
       "not; the safety rests on the technical limit (reflux/evaporative cooling capacity)",
    4: "MTT < TD24 <= MTSR: the decomposition can be triggered, but the technical limit is "
       "reached first and can act as a barrier if designed for it",
    5: "TD24 <= MTSR and TD24 <= MTT: the decomposition is triggered before the technical limit "
       "is reached; no barrier — the most critical class",
}
"""Stoessel's criticality classes (F. Stoessel, Chem. Eng. Prog. 89 (10) (1993) 68-75;
*Thermal Safety of Chemical Processes*, Wiley-VCH, 2008); wording is ours."""


def criticality_class(T_p, MTSR, MTT, TD24):
    r"""Stoessel criticality class (1..5) of a runaway scenario, vectorised over samples.

    The class follows from the order of three temperature levels above the process temperature
    :math:`T_p` (F. Stoessel, "What is your thermal risk?", Chem. Eng. Prog. 89 (10) (1993)
    68-75; F. Stoessel, *Thermal Safety of Chemical Processes*, Wiley-VCH, 2008):

    - MTSR — maximum temperature of the synthesis reaction (:func:`mtsr`);
    - MTT — maximum temperature for technical reasons (boiling point of the mass in an open
      system, temperature at the maximum allowed pressure in a closed one);
    - TD24 — temperature at which the decomposition's time to maximum rate under adiabatic
      conditions is 24 h.

    ======  ===========================  =================================================
    class   order                        meaning
    ======  ===========================  =================================================
    1       MTSR < MTT < TD24            technical limit not reached, decomposition not
                                         triggered; evaporative cooling is a further barrier
    2       MTSR < TD24 <= MTT           decomposition not triggered; technical limit above
                                         TD24, so no barrier if the mass stays at MTSR
    3       MTT <= MTSR < TD24           technical limit reached, decomposition not; safety
                                         rests on the technical limit (e.g. reflux)
    4       MTT < TD24 <= MTSR           decomposition can be triggered but the technical
                                         limit is reached first and may act as a barrier
    5       TD24 <= MTSR, TD24 <= MTT    decomposition triggered before the technical limit;
                                         no barrier (most critical)
    ======  ===========================  =================================================

    The six possible orders of (MTSR, MTT, TD24) map onto these five classes (both orders with
    TD24 below MTSR and MTT give class 5). The class definitions are transcribed from the cited
    publications as recalled from memory of them; ties are resolved towards the more critical
    class (reaching a level counts as exceeding it).

    Parameters
    ----------
    T_p : array_like
        Process temperature, K (only checked for consistency: finite, positive).
    MTSR, MTT, TD24 : array_like
        The three levels, K; all broadcast together.

    Returns
    -------
    ndarray of int
        Class 1..5, broadcast shape of the inputs.
    """
    Tp, S, M, D = np.broadcast_arrays(*(np.asarray(v, dtype=float) for v in (T_p, MTSR, MTT, TD24)))
    if not all(np.all(np.isfinite(v)) for v in (Tp, S, M, D)):
        raise PhysicsError("criticality class needs finite temperatures (T_p, MTSR, MTT, TD24)")
    if np.any(Tp <= 0):
        raise PhysicsError("T_p must be a positive absolute temperature (K)")
    reach_mtt = S >= M
    reach_td = S >= D
    td_below_mtt = D <= M
    cls = np.where(
        reach_td,
        np.where(reach_mtt & ~td_below_mtt, 4, 5),
        np.where(reach_mtt, 3, np.where(td_below_mtt, 2, 1)),
    )
    return cls.astype(int)


def criticality_class_probabilities(classes):
    r"""Share of samples in each Stoessel class and its binomial standard error.

    .. math::

        p_c = \frac{\#\{i: c_i = c\}}{N}, \qquad u(p_c) = \sqrt{p_c (1 - p_c) / N}

    Parameters
    ----------
    classes : array_like of int, shape (N,)
        Classes 1..5 from :func:`criticality_class`.

    Returns
    -------
    p : ndarray, shape (5,)
        Probabilities of classes 1..5.
    standard_error : ndarray, shape (5,)
        Binomial standard errors (for independent random samples; conservative for
        low-discrepancy samples).
    """
    c = np.asarray(classes).ravel()
    if c.size == 0:
        raise StatisticsError("no samples to count criticality classes in")
    if np.any((c < 1) | (c > 5)):
        raise StatisticsError("criticality classes must be integers 1..5")
    counts = np.bincount(c.astype(int), minlength=6)[1:6]
    p = counts / c.size
    return p, np.sqrt(p * (1.0 - p) / c.size)


# --------------------------------------------------------------------------------------------
# Exceedance probabilities
# --------------------------------------------------------------------------------------------


def exceedance_probability(samples, limit):
    r"""Probability that an output exceeds a limit, with its Monte Carlo standard error.

    .. math::

        \hat p = \frac{1}{N}\sum_{i=1}^{N} [y_i > y_\mathrm{lim}], \qquad
        u(\hat p) = \sqrt{\hat p (1 - \hat p) / N}

    (estimate of a binomial proportion and its standard error). The standard error assumes
    independent random draws; for Sobol (quasi-random) samples it is usually conservative. See
    :func:`wilson_interval` for an interval that stays inside [0, 1] when p is near 0 or 1.

    Parameters
    ----------
    samples : array_like, shape (N,) or (N, M)
        Monte Carlo values of the output (samples on the first axis).
    limit : float or array_like broadcasting against ``samples[0]``
        The limit (same unit as the samples).

    Returns
    -------
    p : float or ndarray, shape (M,)
        Estimated exceedance probability.
    standard_error : float or ndarray
        Binomial standard error of ``p``.
    """
    y = np.asarray(samples, dtype=float)
    if y.ndim == 0 or y.shape[0] == 0:
        raise StatisticsError("no samples to estimate an exceedance probability from")
    if np.any(np.isnan(y)):
        raise StatisticsError("samples contain NaN; the exceedance probability is undefined")
    lim = np.asarray(limit, dtype=float)
    n = y.shape[0]
    p = np.mean(y > lim, axis=0)
    se = np.sqrt(p * (1.0 - p) / n)
    if np.ndim(p) == 0:
        return float(p), float(se)
    return p, se


def wilson_interval(successes, n, confidence=0.95):
    r"""Wilson score interval for a binomial proportion.

    .. math::

        \frac{\hat p + \frac{z^2}{2n} \pm z\sqrt{\frac{\hat p(1-\hat p)}{n} + \frac{z^2}{4n^2}}}
             {1 + \frac{z^2}{n}}, \qquad z = \Phi^{-1}\!\left(\tfrac{1+\gamma}{2}\right)

    (E. B. Wilson, J. Am. Stat. Assoc. 22 (1927) 209-212).

    Parameters
    ----------
    successes : array_like of int
        Number of samples beyond the limit, k.
    n : int or array_like
        Number of samples, N > 0.
    confidence : float
        Confidence level :math:`\gamma` in (0, 1).

    Returns
    -------
    (low, high) : tuple of float or ndarray
    """
    from scipy.stats import norm

    k = np.asarray(successes, dtype=float)
    N = np.asarray(n, dtype=float)
    if np.any(N <= 0) or np.any(k < 0) or np.any(k > N):
        raise StatisticsError("Wilson interval needs 0 <= successes <= n and n > 0")
    if not (0.0 < confidence < 1.0):
        raise StatisticsError("confidence must lie in (0, 1)")
    z = norm.ppf(0.5 * (1.0 + confidence))
    p = k / N
    den = 1.0 + z * z / N
    centre = (p + z * z / (2 * N)) / den
    half = z * np.sqrt(p * (1 - p) / N + z * z / (4 * N * N)) / den
    lo, hi = np.clip(centre - half, 0.0, 1.0), np.clip(centre + half, 0.0, 1.0)
    if np.ndim(lo) == 0:
        return float(lo), float(hi)
    return lo, hi


# --------------------------------------------------------------------------------------------
# Heat release
# --------------------------------------------------------------------------------------------


def heat_release(extent_rates, delta_r_H):
    r"""Heat release rate of simultaneous reactions.

    .. math::

        \dot Q = \sum_j \dot\xi_j \,(-\Delta_r H_j(T))

    (first law for a reactor at steady temperature; positive = heat released to the
    surroundings). Units: extent rates mol/s, reaction enthalpies J/mol, result W.

    Parameters
    ----------
    extent_rates : array_like, shape (..., R)
        Extent rates :math:`\dot\xi_j`, mol/s.
    delta_r_H : array_like, shape (..., R)
        Reaction enthalpies at the operating temperature, J/mol. Both arrays broadcast; the
        last axis runs over reactions.

    Returns
    -------
    ndarray, shape (...)
        Heat release rate, W.
    """
    xi = np.asarray(extent_rates, dtype=float)
    dH = np.asarray(delta_r_H, dtype=float)
    if xi.ndim == 0 or dH.ndim == 0:
        raise PhysicsError("extent_rates and delta_r_H need a last axis over reactions")
    if xi.shape[-1] != dH.shape[-1] and 1 not in (xi.shape[-1], dH.shape[-1]):
        raise PhysicsError(
            f"extent_rates has {xi.shape[-1]} reactions but delta_r_H has {dH.shape[-1]}"
        )
    return -np.sum(xi * dH, axis=-1)
