"""Heat-capacity models: analytic integrals, piecewise ranges, validity, vectorisation.

Integrals are checked against scipy.integrate.quad (independent adaptive quadrature of the
Cp expression); coefficient sets are the NIST WebBook Shomate values for CO2(g) and the
GRI-Mech 3.0 NASA-7 values for H2O (as shipped in Cantera's gri30.yaml), copied here.
"""

import numpy as np
import pytest
from hypothesis import given, settings, strategies as st
from scipy.integrate import quad

from uqthermo.errors import PhysicsError, ValidityError
from uqthermo.thermo import ConstantCp, Nasa7Cp, PolynomialCp, R, ShomateCp

# NIST Chemistry WebBook, CO2 gas Shomate coefficients (298-1200 K, 1200-6000 K)
CO2_SHOMATE = [
    (298.0, 1200.0, [24.99735, 55.18696, -33.69137, 7.948387, -0.136638]),
    (1200.0, 6000.0, [58.16639, 2.720074, -0.492289, 0.038844, -6.447293]),
]
# GRI-Mech 3.0 (Cantera gri30.yaml) H2O NASA-7: 200-1000 K and 1000-3500 K
H2O_LOW = [4.19864056, -2.0364341e-03, 6.52040211e-06, -5.48797062e-09, 1.77197817e-12, -3.02937267e04, -0.849032208]
H2O_HIGH = [3.03399249, 2.17691804e-03, -1.64072518e-07, -9.7041987e-11, 1.68200992e-14, -3.00042971e04, 4.9667701]


def models():
    return {
        "constant": ConstantCp(75.3, t_min=273.15, t_max=373.15),
        "polynomial": PolynomialCp(a=28.0, b=4.0e-3, c=-1.0e-6, d=2.0e-10, e=-1.5e5, t_min=250, t_max=2500),
        "shomate": ShomateCp(CO2_SHOMATE),
        "nasa7": Nasa7Cp.from_two_ranges(200.0, 1000.0, 3500.0, H2O_LOW, H2O_HIGH),
    }


def quad_h(m, a, b):
    pts = [x for x in getattr(m, "_bounds", []) if min(a, b) < x < max(a, b)]
    return quad(lambda T: float(m.cp(T)), a, b, points=pts or None, epsabs=1e-10, epsrel=1e-12, limit=200)[0]


def quad_s(m, a, b):
    pts = [x for x in getattr(m, "_bounds", []) if min(a, b) < x < max(a, b)]
    return quad(lambda T: float(m.cp(T)) / T, a, b, points=pts or None, epsabs=1e-12, epsrel=1e-12, limit=200)[0]


@pytest.mark.parametrize("kind", ["constant", "polynomial", "shomate", "nasa7"])
def test_integrals_match_quadrature(kind):
    # reference: scipy.integrate.quad of the same Cp(T)
    m = models()[kind]
    lo, hi = max(m.t_min, 280.0), min(m.t_max, 3000.0)
    for a, b in [(lo, hi), (hi, lo), (lo, 0.5 * (lo + hi)), (0.3 * lo + 0.7 * hi, hi)]:
        assert float(m.enthalpy_change(a, b)) == pytest.approx(quad_h(m, a, b), rel=1e-10, abs=1e-7)
        assert float(m.entropy_change(a, b)) == pytest.approx(quad_s(m, a, b), rel=1e-10, abs=1e-10)


def test_constant_closed_form():
    m = ConstantCp(75.3)
    assert m.t_min == 0 and np.isinf(m.t_max)
    assert float(m.enthalpy_change(300, 350)) == pytest.approx(75.3 * 50)
    assert float(m.entropy_change(300, 350)) == pytest.approx(75.3 * np.log(350 / 300))
    assert m.coefficient_names == ["Cp"] and m.kind == "constant" and m.n_parameters == 1


def test_polynomial_subset_and_names():
    m = PolynomialCp.from_terms({"a": 30.0, "e": 1.0e5})
    np.testing.assert_array_equal(m.coefficients, [30.0, 0, 0, 0, 1.0e5])
    assert m.coefficient_names == ["a", "b", "c", "d", "e"]
    assert float(m.cp(500.0)) == pytest.approx(30.0 + 1.0e5 / 500.0 ** 2)
    with pytest.raises(PhysicsError, match="unknown term"):
        PolynomialCp.from_terms({"f": 1.0})


def test_shomate_native_units_and_names():
    # NIST WebBook form: t = T/1000; Cp(CO2, 1000 K) = A + B + C + D + E (t = 1)
    m = ShomateCp(CO2_SHOMATE)
    assert float(m.cp(1000.0)) == pytest.approx(sum(CO2_SHOMATE[0][2]))
    assert m.n_parameters == 10 and m.coefficient_names[0] == "A[298-1200 K]"
    assert m.coefficient_names[5] == "A[1200-6000 K]"


def test_nasa7_shape_names_and_absolute_values():
    m = Nasa7Cp.from_two_ranges(200.0, 1000.0, 3500.0, H2O_LOW, H2O_HIGH)
    assert m.n_parameters == 14 and m.coefficient_names[6] == "a7[200-1000 K]"
    T = 500.0
    a = np.array(H2O_LOW)
    h = R * T * (a[0] + a[1] * T / 2 + a[2] * T ** 2 / 3 + a[3] * T ** 3 / 4 + a[4] * T ** 4 / 5 + a[5] / T)
    s = R * (a[0] * np.log(T) + a[1] * T + a[2] * T ** 2 / 2 + a[3] * T ** 3 / 3 + a[4] * T ** 4 / 4 + a[6])
    assert float(m.absolute_enthalpy(T)) == pytest.approx(h, rel=1e-13)
    assert float(m.absolute_entropy(T)) == pytest.approx(s, rel=1e-13)
    # a6/a7 do not enter Cp or its integrals
    c = m.coefficients.copy()
    c[[5, 6, 12, 13]] += 1000.0
    assert float(m.enthalpy_change(300, 2000, c)) == pytest.approx(float(m.enthalpy_change(300, 2000)))


def test_range_boundary_belongs_to_lower_range():
    # deliberately discontinuous Cp at 1000 K: T == 1000 K uses the low range (Cantera's NasaPoly2 rule)
    low = [3.0, 0, 0, 0, 0, 0, 0]
    high = [4.0, 0, 0, 0, 0, 0, 0]
    m = Nasa7Cp.from_two_ranges(200, 1000, 3000, low, high)
    assert float(m.cp(1000.0)) == pytest.approx(3.0 * R)
    assert float(m.cp(1000.0 + 1e-9)) == pytest.approx(4.0 * R)
    # the integral across the boundary sums the pieces
    assert float(m.enthalpy_change(900, 1100)) == pytest.approx(R * (3.0 * 100 + 4.0 * 100))
    assert int(m.range_index(1000.0)) == 0


def test_path_split_and_reversal():
    for m in models().values():
        lo, hi = max(m.t_min, 280.0), min(m.t_max, 3000.0)
        mid = 0.37 * lo + 0.63 * hi
        whole = m.enthalpy_change(lo, hi)
        assert float(m.enthalpy_change(lo, mid) + m.enthalpy_change(mid, hi)) == pytest.approx(float(whole), rel=1e-12)
        assert float(m.enthalpy_change(hi, lo)) == pytest.approx(-float(whole), rel=1e-12)
        assert float(m.entropy_change(lo, mid) + m.entropy_change(mid, hi)) == pytest.approx(float(m.entropy_change(lo, hi)), rel=1e-12)


@settings(max_examples=40, deadline=None)
@given(st.floats(300, 5900), st.floats(300, 5900), st.floats(300, 5900))
def test_shomate_additivity_property(a, b, c):
    m = ShomateCp(CO2_SHOMATE)
    lhs = float(m.enthalpy_change(a, b) + m.enthalpy_change(b, c))
    assert lhs == pytest.approx(float(m.enthalpy_change(a, c)), rel=1e-9, abs=1e-6)


def test_basis_matches_evaluation():
    rng = np.random.default_rng(1)
    for m in models().values():
        T1 = max(m.t_min, 280.0)
        T2 = np.linspace(T1, min(m.t_max, 3000.0), 7)
        c = m.coefficients * (1 + 0.01 * rng.standard_normal(m.n_parameters))
        np.testing.assert_allclose(m.enthalpy_basis(T1, T2) @ c, m.enthalpy_change(T1, T2, c), rtol=1e-12, atol=1e-8)
        np.testing.assert_allclose(m.entropy_basis(T1, T2) @ c, m.entropy_change(T1, T2, c), rtol=1e-12, atol=1e-8)
        np.testing.assert_allclose(m.cp_basis(T2) @ c, m.cp(T2, c), rtol=1e-12, atol=1e-8)


def test_vectorised_samples_by_temperatures():
    rng = np.random.default_rng(7)
    for m in models().values():
        N, T1 = 5, max(m.t_min, 280.0)
        T = np.linspace(T1, min(m.t_max, 3000.0), 4)
        C = m.coefficients * (1 + 0.02 * rng.standard_normal((N, 1, m.n_parameters)))
        H = m.enthalpy_change(T1, T, C)
        S = m.entropy_change(T1, T, C)
        Cp = m.cp(T, C)
        assert H.shape == S.shape == Cp.shape == (N, 4)
        for i in range(N):
            np.testing.assert_allclose(H[i], m.enthalpy_change(T1, T, C[i, 0]), rtol=1e-12, atol=1e-8)
            np.testing.assert_allclose(Cp[i], m.cp(T, C[i, 0]), rtol=1e-12, atol=1e-8)
        # per-sample start temperatures (N, 1) against (M,) end temperatures
        T1s = T1 + rng.uniform(0, 5, (N, 1))
        H2 = m.enthalpy_change(T1s, T, C)
        assert H2.shape == (N, 4)
        np.testing.assert_allclose(H2[2], m.enthalpy_change(T1s[2, 0], T, C[2, 0]), rtol=1e-12, atol=1e-8)


def test_validity_error_and_extrapolation_flag():
    m = ShomateCp(CO2_SHOMATE)
    with pytest.raises(ValidityError, match=r"T = 250 K outside the validity range 298-6000 K"):
        m.enthalpy_change(250.0, 500.0)
    with pytest.raises(ValidityError, match="6500"):
        m.cp(6500.0)
    assert m.out_of_range(300, 5000) is None
    assert "250" in m.out_of_range(250, 500)
    x = ShomateCp(CO2_SHOMATE, allow_extrapolation=True)
    # extrapolation uses the nearest range's polynomial and is still reported
    lo = np.array(CO2_SHOMATE[0][2])
    t = 0.25
    assert float(x.cp(250.0)) == pytest.approx(lo[0] + lo[1] * t + lo[2] * t ** 2 + lo[3] * t ** 3 + lo[4] / t ** 2)
    assert x.out_of_range(250, 500) is not None
    # the message names the curve's form; a curve held in Shomate form names its source's own form
    assert x.out_of_range(250, 500).endswith("of the Shomate heat capacity")
    x.form = "Zabransky cubic spline (isobaric)"
    assert x.out_of_range(250, 500).endswith("of the Zabransky cubic spline (isobaric) heat capacity")
    assert ShomateCp(CO2_SHOMATE).form == "Shomate"     # the class default is untouched
    assert float(x.enthalpy_change(250, 500)) == pytest.approx(quad(lambda T: float(x.cp(T)), 250, 500)[0], rel=1e-10)
    # check=False skips the range check (used internally for sampled end points)
    assert np.isfinite(m.enthalpy_change(290.0, 500.0, check=False))


def test_bad_input_raises_project_errors():
    with pytest.raises(ValidityError, match="positive"):
        ConstantCp(30.0).enthalpy_change(0.0, 300.0)
    with pytest.raises(ValidityError, match="finite"):
        ConstantCp(30.0).cp(np.nan)
    with pytest.raises(PhysicsError, match="contiguous"):
        ShomateCp([(298, 1000, [1, 2, 3, 4, 5]), (1100, 2000, [1, 2, 3, 4, 5])])
    with pytest.raises(PhysicsError, match="5 coefficients"):
        ShomateCp([(298, 1000, [1, 2, 3, 4])])
    with pytest.raises(PhysicsError, match="7 coefficients"):
        Nasa7Cp([(200, 1000, [1, 2, 3, 4, 5, 6])])
    with pytest.raises(PhysicsError, match="invalid temperature range"):
        ConstantCp(30.0, t_min=500, t_max=300)
    with pytest.raises(PhysicsError, match="finite"):
        PolynomialCp(a=np.inf)
    with pytest.raises(PhysicsError, match="axis of length"):
        ConstantCp(30.0).cp(300.0, coeffs=np.ones(3))
