"""Tests of uqthermo.thermo.fitting against scipy's curve_fit, exact least-squares algebra and the
chemicals package's JANAF / WebBook tables."""

from __future__ import annotations

import tomllib

import numpy as np
import pytest
from scipy.optimize import curve_fit

from uqthermo.errors import InputError
from uqthermo.case.cp_csv import fit_csv, read_cp_csv
from uqthermo.thermo.fitting import compare_models, fit_cp

# NIST WebBook Shomate coefficients of H2O(g), 500-1700 K, as shipped by `chemicals`
# (chemicals.heat_capacity.WebBook_Shomate_coefficients["7732-18-5"], converted to t = T/1000).
H2O_G_SHOMATE = np.array([30.092, 6.832514, 6.793435, -2.53448, 0.082139])


def _shomate(T, A, B, C, D, E):
    t = T / 1000.0
    return A + B * t + C * t**2 + D * t**3 + E / t**2


def _shomate_jac(T, *p):
    t = T / 1000.0
    return np.column_stack([np.ones_like(t), t, t**2, t**3, 1 / t**2])


def _poly_abce(T, a, b, c, e):
    return a + b * T + c * T**2 + e / T**2


def _poly_abce_jac(T, *p):
    return np.column_stack([np.ones_like(T), T, T**2, 1 / T**2])


def _synthetic(rng, T, f, p, u):
    return f(T, *p) + rng.normal(0.0, u)


@pytest.mark.parametrize("absolute", [True, False])
def test_shomate_fit_matches_curve_fit(absolute):
    # Reference: scipy.optimize.curve_fit (same linear model, analytic Jacobian, sigma = u,
    # absolute_sigma as given); coefficients and covariance must agree to ~1e-8 relative.
    rng = np.random.default_rng(2024)
    T = np.linspace(400.0, 1600.0, 40)
    u = np.linspace(0.03, 0.12, T.size)
    y = _synthetic(rng, T, _shomate, H2O_G_SHOMATE, u)
    fit = fit_cp(T, y, u, model="shomate", absolute_sigma=absolute)
    p, cov = curve_fit(_shomate, T, y, p0=H2O_G_SHOMATE * 1.1, sigma=u, absolute_sigma=absolute,
                       jac=_shomate_jac, method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    np.testing.assert_allclose(fit.coefficients, p, rtol=1e-8)
    np.testing.assert_allclose(fit.covariance, cov, rtol=1e-8)
    assert fit.absolute_sigma is absolute


def test_polynomial_fit_matches_curve_fit():
    # Reference: scipy.optimize.curve_fit, absolute_sigma=True, terms a, b, c, e.
    rng = np.random.default_rng(99)
    true = (25.0, 0.012, -2.0e-6, 1.1e5)
    T = np.linspace(300.0, 900.0, 35)
    u = np.full(T.size, 0.05)
    y = _synthetic(rng, T, _poly_abce, true, u)
    fit = fit_cp(T, y, u, model="polynomial", terms=("a", "b", "c", "e"))
    p, cov = curve_fit(_poly_abce, T, y, p0=true, sigma=u, absolute_sigma=True, jac=_poly_abce_jac,
                       method="lm", xtol=1e-15, ftol=1e-15, gtol=1e-15)
    np.testing.assert_allclose(fit.coefficients, p, rtol=1e-8)
    np.testing.assert_allclose(fit.covariance, cov, rtol=1e-8)


def test_no_u_scales_covariance_like_curve_fit():
    # Reference: curve_fit without sigma (covariance scaled by the reduced chi-squared).
    rng = np.random.default_rng(5)
    T = np.linspace(300.0, 700.0, 25)
    y = 40.0 + 0.03 * T + rng.normal(0, 0.2, T.size)
    fit = fit_cp(T, y, model="polynomial", terms="ab")
    p, cov = curve_fit(lambda T, a, b: a + b * T, T, y, p0=(1.0, 0.0),
                       jac=lambda T, a, b: np.column_stack([np.ones_like(T), T]), method="lm",
                       xtol=1e-15, ftol=1e-15, gtol=1e-15)
    np.testing.assert_allclose(fit.coefficients, p, rtol=1e-8)
    np.testing.assert_allclose(fit.covariance, cov, rtol=1e-8)
    assert not fit.absolute_sigma and fit.u is None


def test_exact_data_recovered_and_covariance_is_the_least_squares_formula():
    # Noise-free synthetic data: the fit must return the generating coefficients, and with
    # stated u the covariance is (X^T W X)^-1 whatever the data (GUM H.3 / Bevington ch. 7).
    T = np.linspace(298.15, 1500.0, 25)
    u = np.full(T.size, 0.1)
    y = _shomate(T, *H2O_G_SHOMATE)
    fit = fit_cp(T, y, u, model="shomate")
    np.testing.assert_allclose(fit.coefficients, H2O_G_SHOMATE, rtol=1e-9)
    X = _shomate_jac(T)
    V = np.linalg.inv(X.T @ (X / u[:, None] ** 2))
    np.testing.assert_allclose(fit.covariance, V, rtol=1e-7)
    np.testing.assert_allclose(np.diag(fit.correlation), 1.0)
    assert np.all(np.linalg.eigvalsh(fit.correlation) > -1e-12)
    # curve standard uncertainty phi^T V phi
    T1 = np.array([500.0, 1000.0])
    X1 = _shomate_jac(T1)
    np.testing.assert_allclose(fit.predict_uncertainty(T1), np.sqrt(np.einsum("ij,jk,ik->i", X1, V, X1)),
                               rtol=1e-7)


def test_noisy_fit_consistent_with_truth():
    # (beta - beta_true)^T V^-1 (beta - beta_true) follows chi2 with P dof (exact result for a
    # linear Gaussian model); a fixed-seed draw must lie below the 99.9 % quantile.
    from scipy.stats import chi2

    rng = np.random.default_rng(17)
    T = np.linspace(350.0, 1700.0, 60)
    u = np.full(T.size, 0.08)
    y = _synthetic(rng, T, _shomate, H2O_G_SHOMATE, u)
    fit = fit_cp(T, y, u, model="shomate")
    d = fit.coefficients - H2O_G_SHOMATE
    assert d @ np.linalg.solve(fit.covariance, d) < chi2.ppf(0.999, 5)
    assert 0.5 < fit.reduced_chi2 < 1.6
    assert fit.consistency_warning() is None


def test_fit_to_janaf_points_reproduces_webbook_shomate():
    # Reference: chemicals' JANAF 1998 Cp table of H2O(g) and the NIST WebBook Shomate curve of
    # H2O(g) (500-1700 K) shipped with chemicals. The WebBook curve is itself a fit to JANAF, so
    # a Shomate fit to the JANAF points must reproduce it within a few 0.01 J/(mol K).
    from chemicals import heat_capacity as hc

    Ts, Cps = map(np.asarray, hc.Cp_dict_JANAF_gas["7732-18-5"])
    sel = (Ts >= 500) & (Ts <= 1700)
    fit = fit_cp(Ts[sel], Cps[sel], model="shomate")
    grid = np.linspace(500, 1700, 25)
    np.testing.assert_allclose(fit.predict(grid), _shomate(grid, *H2O_G_SHOMATE), atol=0.05)
    np.testing.assert_allclose(fit.predict(Ts[sel]), Cps[sel], atol=0.05)


def test_case_toml_round_trip():
    rng = np.random.default_rng(1)
    T = np.linspace(300.0, 800.0, 20)
    u = np.full(T.size, 0.05)
    y = _synthetic(rng, T, _poly_abce, (25.0, 0.012, -2.0e-6, 1.1e5), u)
    fit = fit_cp(T, y, u, terms=("a", "b", "c", "e"), label="data.csv")
    doc = tomllib.loads(fit.to_case_toml("C2H5OH", "g"))
    hc = doc["species"]["C2H5OH"]["g"]["heat_capacity"]
    assert hc["model"] == "polynomial"
    assert list(hc["coefficients"]) == ["a", "b", "c", "e"]
    np.testing.assert_array_equal(list(hc["coefficients"].values()), fit.coefficients)
    np.testing.assert_array_equal(hc["u"], fit.standard_uncertainty)
    R = np.array(hc["correlation"])
    np.testing.assert_array_equal(R, fit.correlation)
    assert np.all(np.linalg.eigvalsh(R) > 0)
    assert hc["T"] == ["300 K", "800 K"]
    assert "data.csv" in hc["source"]
    inline = tomllib.loads(fit.to_case_toml("X", "l", header=False))
    assert inline["heat_capacity"]["model"] == "polynomial"

    sh = fit_cp(T, _shomate(T, *H2O_G_SHOMATE), u, model="shomate", terms="ABCD")
    doc = tomllib.loads(sh.to_case_toml("H2O", "g"))["species"]["H2O"]["g"]["heat_capacity"]
    assert doc["ranges"][0]["T"] == ["300 K", "800 K"]
    assert len(doc["ranges"][0]["coefficients"]) == 5 and doc["ranges"][0]["coefficients"][4] == 0.0
    assert doc["u"][4] == 0.0 and len(doc["correlation"]) == 5


def test_to_cp_model_reproduces_fit():
    # The fitted curve handed to thermo.cp must evaluate identically (same basis functions).
    rng = np.random.default_rng(4)
    T = np.linspace(300.0, 900.0, 20)
    u = np.full(T.size, 0.05)
    for model, terms, f, p in [("shomate", None, _shomate, H2O_G_SHOMATE),
                               ("polynomial", "abce", _poly_abce, (25.0, 0.012, -2.0e-6, 1.1e5))]:
        fit = fit_cp(T, _synthetic(rng, T, f, p, u), u, model=model, terms=terms)
        m = fit.to_cp_model()
        grid = np.linspace(300.0, 900.0, 7)
        np.testing.assert_allclose(m.cp(grid), fit.predict(grid), rtol=1e-13)
        assert (m.t_min, m.t_max) == (300.0, 900.0)
        V = fit.full_covariance()
        assert V.shape == (5, 5) and np.allclose(V, V.T)


def test_coverage_warning():
    T = np.linspace(300.0, 800.0, 10)
    fit = fit_cp(T, 30 + 0.01 * T, terms="ab")
    assert fit.coverage_warning(320.0, 780.0) is None
    msg = fit.coverage_warning(298.15, 900.0)
    assert "1.85 K below" in msg and "100 K above" in msg


def test_model_selection_prefers_generating_terms():
    # Data generated from a, b, e (Maier-Kelley-like form): BIC must rank it first
    # (fixed seed); all 16 subsets with a constant term are scored.
    rng = np.random.default_rng(8)
    T = np.linspace(300.0, 1200.0, 40)
    u = np.full(T.size, 0.05)
    y = 28.0 + 0.004 * T + 1.5e5 / T**2 + rng.normal(0, u)
    ranking = compare_models(T, y, u, criterion="bic")
    assert ranking[0].terms == ("a", "b", "e")
    assert len(ranking) == 16


def test_bad_fit_inputs():
    with pytest.raises(InputError, match="cannot determine"):
        fit_cp([300.0, 400.0], [30.0, 31.0], model="shomate")
    with pytest.raises(InputError, match="cannot separate"):
        fit_cp(np.full(10, 300.0), np.linspace(30, 31, 10), terms="abc")
    with pytest.raises(InputError, match="not allowed"):
        fit_cp([300.0, 400.0, 500.0], [30.0, 31.0, 32.0], terms=("a", "z"))
    with pytest.raises(InputError):
        fit_cp([300.0, -1.0, 500.0], [30.0, 31.0, 32.0], terms="ab")
    with pytest.raises(InputError):
        fit_cp([300.0, 400.0, 500.0], [30.0, 31.0, 32.0], [0.1, 0.0, 0.1], terms="ab")


# ---------------------------------------------------------------- CSV reading


def test_read_csv_units(tmp_path):
    f = tmp_path / "cp.csv"
    f.write_text("# measured by DSC (invented numbers)\nT [degC], Cp [cal/(mol*K)], u [%]\n"
                 "25, 18.0, 1\n\n75, 18.1, 1\n")
    d = read_cp_csv(f)
    np.testing.assert_allclose(d.T, [298.15, 348.15])
    np.testing.assert_allclose(d.cp, [18.0 * 4.184, 18.1 * 4.184])  # thermochemical calorie
    np.testing.assert_allclose(d.u, 0.01 * d.cp)
    assert d.lines == (3, 5)
    g = tmp_path / "cp2.csv"
    g.write_text("Cp [J/(mol*K)];T [K]\n75.3;300\n75.4;320\n")
    d = read_cp_csv(g)
    np.testing.assert_allclose(d.T, [300, 320])
    assert d.u is None


@pytest.mark.parametrize(
    "text, fragment",
    [
        ("T [K], Cp [J/(mol*K)]\n300, abc\n", "line 2, column 2: not a finite number: 'abc'"),
        ("T [K], Cp [J/(mol*K)]\n300, 30\n310\n", "line 3: 1 values, expected 2"),
        ("T, Cp [J/(mol*K)]\n300, 30\n", "line 1, column 1: column 'T' has no unit"),
        ("T [K], Cp [J/(kg*K)]\n300, 30\n", "molar ones"),
        ("T [K], Cp [blorps]\n300, 30\n", "unknown unit 'blorps'"),
        ("T [K], Cp [J/(mol*K)], u [J/(mol*K)]\n300, 30, -1\n", "line 2, column 3: standard uncertainty must be positive"),
        ("T [degC], Cp [J/(mol*K)]\n-300, 30\n", "not above absolute zero"),
        ("Temp [K], heat [J/(mol*K)]\n", "unknown column 'heat'"),
        ("T [K], Cp [J/(mol*K)]\n", "no data rows"),
    ],
)
def test_read_csv_errors(tmp_path, text, fragment):
    f = tmp_path / "bad.csv"
    f.write_text(text)
    with pytest.raises(InputError) as e:
        read_cp_csv(f)
    assert fragment in str(e.value)
    assert all(p.file == str(f) for p in e.value.problems)
    assert "\n" not in str(e.value.problems[0])


def test_read_csv_missing_file(tmp_path):
    with pytest.raises(InputError, match="file not found"):
        read_cp_csv(tmp_path / "nope.csv")


def test_fit_csv_report(tmp_path):
    from chemicals import heat_capacity as hc

    Ts, Cps = map(np.asarray, hc.Cp_dict_JANAF_gas["124-38-9"])  # CO2(g), JANAF 1998 via chemicals
    sel = (Ts >= 300) & (Ts <= 1200)
    f = tmp_path / "co2.csv"
    f.write_text("T [K], Cp [J/(mol*K)], u [J/(mol*K)]\n"
                 + "".join(f"{t}, {c}, 0.05\n" for t, c in zip(Ts[sel], Cps[sel])))
    fit, text = fit_csv(f, model="polynomial", terms="auto", species="CO2", phase="g", T_range=(298.15, 1500.0))
    assert "[species.CO2.g.heat_capacity]" in text
    assert "model ranking" in text and "extrapolated" in text
    assert fit.label == "co2.csv"
    start = text.index("# Cp =")
    tomllib.loads(text[start:])
