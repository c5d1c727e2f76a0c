"""Tests of uqthermo.thermo.energy against closed forms, Cantera and scipy.

Numbers marked "invented" are illustrative inputs only (the check is the algorithm against an
independent closed form, not the data).
"""

from __future__ import annotations

import numpy as np
import pytest

from uqthermo.errors import PhysicsError, StatisticsError
from uqthermo.thermo.energy import (
    CRITICALITY_CLASSES,
    adiabatic_temperature_rise,
    constant_cp_temperature_rise,
    criticality_class,
    criticality_class_probabilities,
    exceedance_probability,
    heat_release,
    mtsr,
    solve_final_temperature,
    wilson_interval,
)


# ---------------------------------------------------------------- constant and linear Cp


def test_constant_cp_rise_matches_closed_form():
    # Reference: closed form of the first-law balance with constant Cp,
    # dT_ad = -xi * dRH / sum(n_i Cp_i) (Stoessel 2008). Inputs invented.
    rng = np.random.default_rng(7)
    N = 2000
    xi = rng.uniform(0.5, 2.0, N)              # mol
    dRH = rng.uniform(-250e3, 40e3, N)         # J/mol (mostly exothermic, some endothermic)
    n = np.array([8.0, 1.5, 0.7])              # mol
    cp = np.column_stack([rng.uniform(120, 180, N), rng.uniform(60, 90, N), rng.uniform(25, 35, N)])
    C = cp @ n                                  # J/K
    T0 = rng.uniform(290, 330, N)
    q = -xi * dRH

    dT = adiabatic_temperature_rise(lambda T: C * (T - T0), q, T0, 3000.0, T_lo_min=50.0)
    expected = constant_cp_temperature_rise(xi, dRH, C)
    np.testing.assert_allclose(dT, expected, rtol=0, atol=1e-6)
    assert np.any(dT < 0)  # endothermic samples cool down


def test_linear_cp_matches_quadratic_formula():
    # Reference: for Cp = a + b T the balance a(Tf-T0) + b/2 (Tf^2 - T0^2) = q has the
    # closed-form root Tf = (-a + sqrt(a^2 + b (a 2 T0 + b T0^2 + 2 q))) / b. Inputs invented.
    a, b = 900.0, 1.2  # J/K, J/K^2 (whole charge)
    T0 = 310.0
    q = np.linspace(-1e5, 8e5, 101)
    Tf = solve_final_temperature(lambda T: a * (T - T0) + 0.5 * b * (T**2 - T0**2), q, T0, 2500.0,
                                 T_lo_min=20.0)
    exact = (-a + np.sqrt(a * a + b * (2 * a * T0 + b * T0 * T0 + 2 * q))) / b
    np.testing.assert_allclose(Tf, exact, rtol=0, atol=1e-6)


def test_zero_target_returns_start_temperature():
    T0 = np.array([300.0, 350.0])
    Tf = solve_final_temperature(lambda T: 50.0 * (T - T0), 0.0, T0, 1000.0)
    np.testing.assert_array_equal(Tf, T0)


# ---------------------------------------------------------------- phase change of the charge


def _boiling_charge(T0, n_s, cp_l, cp_g, Tb, L, C_inert):
    """Charge enthalpy from T0 (J): solvent heats as liquid, boils at Tb, heats as vapour."""

    def h(T):
        below = (n_s * cp_l + C_inert) * (np.minimum(T, Tb) - T0)
        above = (n_s * cp_g + C_inert) * np.maximum(T - Tb, 0.0)
        return below + above + n_s * L * (T > Tb)

    return h


def test_boiling_solvent_piecewise_closed_form():
    # Reference: hand-computed piecewise closed form of the first-law balance of a charge whose
    # solvent boils at Tb (sensible heat of the liquid, latent heat, sensible heat of the
    # vapour). Inputs invented: 6 mol solvent, Cp(l) 140, Cp(g) 95 J/(mol K), Tb 383.8 K,
    # latent heat 33.2 kJ/mol, inert heat capacity 400 J/K.
    T0, n_s, cp_l, cp_g, Tb, L, Ci = 300.0, 6.0, 140.0, 95.0, 383.8, 33.2e3, 400.0
    h = _boiling_charge(T0, n_s, cp_l, cp_g, Tb, L, Ci)
    q1 = (n_s * cp_l + Ci) * (Tb - T0)         # heat to reach the boiling point
    q2 = q1 + n_s * L                          # ... and to boil all of the solvent
    q = np.concatenate([np.linspace(0.1 * q1, 0.999 * q1, 7), np.linspace(1.001 * q1, 0.999 * q2, 9),
                        np.linspace(1.001 * q2, 3 * q2, 7)])
    Tf, info = solve_final_temperature(h, q, T0, 1500.0, full_output=True)

    exact = np.where(q < q1, T0 + q / (n_s * cp_l + Ci),
                     np.where(q <= q2, Tb, Tb + (q - q2) / (n_s * cp_g + Ci)))
    np.testing.assert_allclose(Tf, exact, rtol=0, atol=1e-5)
    plateau = (q > q1) & (q < q2)
    np.testing.assert_array_equal(info.on_plateau, plateau)
    # vaporised fraction of the solvent = (q - q1) / (n_s L)
    np.testing.assert_allclose(info.absorbed_fraction[plateau], (q[plateau] - q1) / (n_s * L), atol=1e-9)
    assert np.all(np.isnan(info.absorbed_fraction[~plateau]))
    assert info.converged.all()
    assert info.iterations <= 45  # ITP bound: bisection count (~31 here) + 1, plus slack


def test_cooling_through_a_transition_endothermic():
    # Endothermic balance crossing the same transition downwards (condensation on cooling):
    # closed form mirrors the heating case. Inputs invented.
    T0, n_s, cp_l, cp_g, Tb, L, Ci = 420.0, 2.0, 150.0, 100.0, 383.8, 30e3, 300.0
    base = _boiling_charge(250.0, n_s, cp_l, cp_g, Tb, L, Ci)
    h = lambda T: base(T) - base(np.full_like(T, T0))  # noqa: E731
    q_to_Tb = -(n_s * cp_g + Ci) * (T0 - Tb)
    q = np.array([0.5 * q_to_Tb, q_to_Tb - 0.5 * n_s * L, q_to_Tb - n_s * L - 5000.0])
    Tf, info = solve_final_temperature(h, q, T0, 1000.0, T_lo_min=200.0, full_output=True)
    exact = [T0 + q[0] / (n_s * cp_g + Ci), Tb, Tb + (q[2] - q_to_Tb + n_s * L) / (n_s * cp_l + Ci)]
    np.testing.assert_allclose(Tf, exact, atol=1e-5)
    assert info.on_plateau.tolist() == [False, True, False]
    np.testing.assert_allclose(info.absorbed_fraction[1], 0.5, atol=1e-9)


def test_unreachable_target():
    h = lambda T: 100.0 * (T - 300.0)  # noqa: E731
    with pytest.raises(PhysicsError, match="above T_hi_max"):
        solve_final_temperature(h, np.array([1e4, 1e6]), 300.0, 1000.0)
    Tf, info = solve_final_temperature(h, np.array([1e4, 1e6]), 300.0, 1000.0,
                                       on_unreachable="nan", full_output=True)
    assert Tf[0] == pytest.approx(400.0, abs=1e-6) and np.isnan(Tf[1])
    assert info.unreachable.tolist() == [False, True]
    Tf = solve_final_temperature(h, np.array([1e6]), 300.0, 1000.0, on_unreachable="bound")
    assert Tf[0] == 1000.0


def test_bad_arguments():
    h = lambda T: T  # noqa: E731
    with pytest.raises(PhysicsError):
        solve_final_temperature(h, 1.0, 300.0, 200.0)  # interval does not contain T0
    with pytest.raises(PhysicsError):
        solve_final_temperature(h, np.nan, 300.0, 400.0)
    with pytest.raises(PhysicsError):
        solve_final_temperature(lambda T: T * np.nan, 1.0, 300.0, 400.0)
    with pytest.raises(PhysicsError, match="one enthalpy per sample"):
        solve_final_temperature(lambda T: np.ones((3, 2)), np.ones(3), 300.0, 400.0)


def test_methane_combustion_against_cantera():
    # Reference: Cantera 3 (gri30.yaml NASA-7 polynomials) — setting HP at fixed composition
    # gives the adiabatic temperature of complete, frozen-composition combustion of CH4 in air,
    # CH4 + 2 O2 + 7.52 N2 -> CO2 + 2 H2O + 7.52 N2, at partial conversions xi.
    ct = pytest.importorskip("cantera")
    gas = ct.Solution("gri30.yaml")
    T0, P = 298.15, ct.one_atm
    names = ["CH4", "O2", "CO2", "H2O", "N2"]
    xi = np.array([0.25, 0.5, 0.8, 1.0])
    n = np.column_stack([1 - xi, 2 * (1 - xi), xi, 2 * xi, np.full_like(xi, 7.52)])  # mol
    n0 = np.array([1.0, 2.0, 0.0, 0.0, 7.52])
    sp = [gas.species(s) for s in names]

    def H(nvec, T):  # J, from Cantera's species enthalpies (J/kmol)
        return sum(nvec[..., i] * np.array([sp[i].thermo.h(t) for t in np.atleast_1d(T)]) / 1000.0
                   for i in range(len(names)))

    q = H(n0, T0) - H(n, np.full(len(xi), T0))  # = -xi * dRH(T0), J
    Tf = solve_final_temperature(lambda T: H(n, T) - H(n, np.full(len(xi), T0)), q, T0, 3500.0)

    for k in range(len(xi)):
        gas.TPX = T0, P, dict(zip(names, n0))
        h_mass = gas.enthalpy_mass
        gas.TPX = T0, P, dict(zip(names, n[k]))
        gas.HP = h_mass, P  # composition frozen
        assert Tf[k] == pytest.approx(gas.T, abs=1e-3)


# ---------------------------------------------------------------- MTSR and criticality


def test_mtsr():
    # MTSR = T_p + X_ac * dT_ad (Stoessel 1993 / 2008).
    np.testing.assert_allclose(mtsr(350.0, [100.0, 40.0], [0.3, 1.0]), [380.0, 390.0])
    with pytest.raises(PhysicsError):
        mtsr(350.0, 10.0, 1.5)


@pytest.mark.parametrize(
    "MTSR, MTT, TD24, expected",
    [
        # Examples built from the published class definitions (Stoessel, Chem. Eng. Prog. 1993;
        # Thermal Safety of Chemical Processes, 2008); temperatures invented, T_p = 330 K.
        (350.0, 370.0, 420.0, 1),  # MTSR < MTT < TD24
        (350.0, 420.0, 370.0, 2),  # MTSR < TD24 < MTT
        (390.0, 370.0, 420.0, 3),  # MTT < MTSR < TD24
        (450.0, 370.0, 420.0, 4),  # MTT < TD24 < MTSR
        (400.0, 420.0, 370.0, 5),  # TD24 < MTSR < MTT
        (450.0, 420.0, 370.0, 5),  # TD24 < MTT < MTSR
        # ties count as reaching the level (more critical class)
        (370.0, 370.0, 420.0, 3),
        (420.0, 370.0, 420.0, 4),
        (350.0, 400.0, 400.0, 2),
    ],
)
def test_criticality_classes(MTSR, MTT, TD24, expected):
    assert int(criticality_class(330.0, MTSR, MTT, TD24)) == expected
    assert expected in CRITICALITY_CLASSES


def test_criticality_vectorised_probabilities():
    MTSR = np.array([350.0, 390.0, 390.0, 450.0])
    cls = criticality_class(330.0, MTSR, 370.0, 420.0)
    assert cls.tolist() == [1, 3, 3, 4]
    p, se = criticality_class_probabilities(cls)
    np.testing.assert_allclose(p, [0.25, 0.0, 0.5, 0.25, 0.0])
    np.testing.assert_allclose(se, np.sqrt(p * (1 - p) / 4))
    with pytest.raises(StatisticsError):
        criticality_class_probabilities([0, 1])


# ---------------------------------------------------------------- exceedance probability


def test_exceedance_probability_against_exact_normal_tail():
    # Reference: exact tail of the normal distribution (scipy.stats.norm.sf); the Monte Carlo
    # estimate must lie within 4 binomial standard errors.
    from scipy.stats import norm

    rng = np.random.default_rng(11)
    y = rng.normal(400.0, 12.0, 200_000)
    p, se = exceedance_probability(y, 420.0)
    exact = norm.sf(420.0, 400.0, 12.0)
    assert se == pytest.approx(np.sqrt(exact * (1 - exact) / y.size), rel=0.02)
    assert abs(p - exact) < 4 * se
    # vectorised over outputs
    P, SE = exceedance_probability(np.column_stack([y, y + 10]), [420.0, 420.0])
    assert P.shape == (2,) and P[1] > P[0]
    with pytest.raises(StatisticsError):
        exceedance_probability(np.array([1.0, np.nan]), 0.0)


def test_wilson_interval_against_scipy():
    # Reference: scipy.stats.binomtest(...).proportion_ci(method="wilson").
    from scipy.stats import binomtest

    for k, n in [(0, 50), (3, 200), (57, 100), (1000, 1000)]:
        ref = binomtest(k, n).proportion_ci(confidence_level=0.95, method="wilson")
        lo, hi = wilson_interval(k, n, 0.95)
        assert lo == pytest.approx(ref.low, abs=1e-12)
        assert hi == pytest.approx(ref.high, abs=1e-12)


# ---------------------------------------------------------------- heat release


def test_heat_release():
    # Q = sum_j xi_dot_j * (-dRH_j): hand-computed (2 mol/s * 100 kJ/mol - 0.5 mol/s * 20 kJ/mol).
    assert heat_release([2.0, 0.5], [-100e3, 20e3]) == pytest.approx(190e3)
    rates = np.array([[2.0, 0.5], [1.0, 1.0]])
    dH = np.array([[-100e3, 20e3]])
    np.testing.assert_allclose(heat_release(rates, dH), [190e3, 80e3])
    with pytest.raises(PhysicsError):
        heat_release([1.0, 2.0, 3.0], [1.0, 2.0])
