"""``uqthermo fit`` and ``uqthermo data`` from the command line (in-process through cli.main).

Outside references: scipy.optimize.curve_fit (weighted linear least squares and its covariance),
the NIST WebBook Shomate coefficients of CO2 as shipped in chemicals
(chemicals.heat_capacity.WebBook_Shomate_coefficients / Shomate / Shomate_integral), and the
chemicals identifier tables for CAS numbers.
"""

from __future__ import annotations

import csv
import json
import math

import numpy as np
import pytest
from scipy.optimize import curve_fit

from uqthermo.cli import main

chem_hc = pytest.importorskip("chemicals.heat_capacity")

CO2 = "124-38-9"
_CO2_RANGE = chem_hc.WebBook_Shomate_coefficients[CO2][2][0]   # [298, 1200, A, B, C, D, E] (T in K form)
U_POINT = 0.2   # J/(mol K): INVENTED measurement noise for the synthetic data set


def _co2_cp(T):
    return chem_hc.Shomate(np.asarray(T, float), *_CO2_RANGE[2:7])


@pytest.fixture()
def co2_csv(tmp_path):
    """Synthetic 'measurements': WebBook CO2 Cp at 300-1200 K plus invented normal noise."""
    T = np.linspace(300.0, 1200.0, 19)
    rng = np.random.default_rng(7)
    y = _co2_cp(T) + rng.normal(0.0, U_POINT, T.size)
    p = tmp_path / "co2.csv"
    with p.open("w") as f:
        f.write("# synthetic data: NIST WebBook Shomate CO2 plus invented noise\n")
        f.write("T [K], Cp [J/(mol*K)], u [J/(mol*K)]\n")
        for t, v in zip(T, y):
            f.write(f"{t:.2f}, {v:.5f}, {U_POINT}\n")
    return p, T, y


def test_fit_cli_round_trip(tmp_path, co2_csv, capsys):
    path, T, y = co2_csv
    out = tmp_path / "fitout"
    rc = main(["fit", str(path), "--species", "CO2", "--phase", "g", "--range", "300", "1100", "--out", str(out)])
    cap = capsys.readouterr()
    assert rc == 0, cap.err
    text = cap.out
    assert "model ranking (bic" in text and "residual" in text and "[species.CO2.g.heat_capacity]" in text
    assert sorted(p.name for p in out.iterdir()) == [".uqthermo-manifest.json", "fit.json", "fit.toml", "fit.txt",
                                                     "residuals.csv"]
    doc = json.loads((out / "fit.json").read_text())
    assert doc["format"] == "uqthermo.fit/1" and doc["model"] == "polynomial"
    terms = doc["terms"]
    # Reference: scipy curve_fit with the same terms, absolute sigma
    powers = {"a": 0, "b": 1, "c": 2, "d": 3, "e": -2}

    def f(x, *p):
        return sum(c * x ** powers[t] for c, t in zip(p, terms))

    popt, pcov = curve_fit(f, T, np.round(y, 5), p0=np.ones(len(terms)), sigma=np.full(T.size, U_POINT),
                           absolute_sigma=True)
    np.testing.assert_allclose([doc["coefficients"][t] for t in terms], popt, rtol=1e-6)
    np.testing.assert_allclose(doc["covariance"], pcov, rtol=1e-5)
    with (out / "residuals.csv").open() as fh:
        rows = list(csv.reader(fh))
    assert len(rows) == 1 + T.size and rows[0][1] == "T [K]"
    assert (out / "fit.toml").read_text() in text

    # paste the printed table into a case: it loads and runs
    block = text[text.index("# Cp = "):]
    case = tmp_path / "case.toml"
    case.write_text('title = "fitted CO2 curve"\n[settings]\nmethod = "linear"\n[species.CO2]\n[species.CO2.g]\n'
                    + block + '\n[[output]]\nname = "heat"\nkind = "heating_enthalpy"\nspecies = "CO2(g)"\n'
                    'from = "300 K"\nto = "1000 K"\n', encoding="utf-8")
    assert main(["check", str(case)]) == 0, capsys.readouterr().err
    ro = tmp_path / "run"
    assert main(["run", str(case), "--out", str(ro), "--quiet", "--no-report"]) == 0, capsys.readouterr().err
    res = json.loads((ro / "results.json").read_text())
    pt = res["outputs"][0]["points"][0]["linear"]
    # u of ∫Cp dT from the fit covariance (g = ∫ basis dT, analytic) — GUM law of propagation
    g = np.array([(1000.0 ** (powers[t] + 1) - 300.0 ** (powers[t] + 1)) / (powers[t] + 1) for t in terms])
    u_ref = math.sqrt(g @ np.array(doc["covariance"]) @ g) / 1000.0
    assert pt["standard_uncertainty"] == pytest.approx(u_ref, rel=1e-4)
    # and the curve agrees with the WebBook integral (chemicals.heat_capacity.Shomate_integral) within 3 u
    ref = (chem_hc.Shomate_integral(1000.0, *_CO2_RANGE[2:7]) - chem_hc.Shomate_integral(300.0, *_CO2_RANGE[2:7])) / 1e3
    assert abs(pt["estimate"] - ref) < 3 * u_ref + 1e-3


def test_fit_cli_shomate_terms_and_coverage_warning(co2_csv, capsys):
    path, T, y = co2_csv
    rc = main(["fit", str(path), "--model", "shomate", "--terms", "A,B,C,D,E", "--range", "298.15 K", "1500 K"])
    text = capsys.readouterr().out
    assert rc == 0
    assert "model ranking" not in text
    assert "warning:" in text and "extrapolated" in text and "above" in text
    assert 'model = "shomate"' in text


def test_fit_cli_bad_input_exits_2(tmp_path, co2_csv, capsys):
    bad = tmp_path / "bad.csv"
    bad.write_text("T [K], Cp [J/(mol*K)]\n300, 37.1\n400, abc\n500\n", encoding="utf-8")
    assert main(["fit", str(bad)]) == 2
    err = capsys.readouterr().err.splitlines()
    assert f"{bad}: line 3, column 2: not a finite number: 'abc'" in err
    assert f"{bad}: line 4: 1 values, expected 2" in err
    assert main(["fit", str(tmp_path / "missing.csv")]) == 2
    assert "file not found" in capsys.readouterr().err
    path = co2_csv[0]
    assert main(["fit", str(path), "--terms", "a,x"]) == 2
    assert capsys.readouterr().err.startswith("--terms: ")
    assert main(["fit", str(path), "--species", "1bad", "--range", "500", "400"]) == 2
    err = capsys.readouterr().err
    assert "--species" in err and "--range" in err
    busy = tmp_path / "busy"
    busy.mkdir()
    (busy / "keep.txt").write_text("x")
    assert main(["fit", str(path), "--out", str(busy)]) == 2
    assert [p.name for p in busy.iterdir()] == ["keep.txt"]
    capsys.readouterr()
    assert main(["fit", "--help"]) == 0


def test_data_cli_lists_cas_numbers(capsys):
    assert main(["data", "CO2"]) == 0
    out = capsys.readouterr().out
    # chemicals' ATcT table lists three CO2 isomers; the WebBook/JANAF one is 124-38-9
    for cas in ("124-38-9", "138832-57-2", "791121-04-5"):
        assert cas in out
    assert "-393.474 kJ/mol" in out                       # ATcT 1.112 ΔfH°(CO2, g), chemicals Hfg_ATcT_data
    # the case-file hint takes the species from the library's selection rules (library = "auto")
    assert 'cas = "124-38-9"' in out and 'formation_enthalpy = { library = "auto" }' in out
    assert main(["data", "methane", "--limit", "2"]) == 0
    out = capsys.readouterr().out
    assert "74-82-8" in out and "raise --limit" in out


def test_data_cli_errors(capsys):
    assert main(["data", "qqzzxx"]) == 2
    assert "no species matches 'qqzzxx'" in capsys.readouterr().err
    assert main(["data", "water", "--limit", "0"]) == 2
    assert "--limit" in capsys.readouterr().err
    assert main(["data", "--help"]) == 0
