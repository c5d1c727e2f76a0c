"""ΔfG and log10 Kf of H2O(g) at 1000 K through the whole case pipeline, against outside references.

References
----------
* Cantera's GRI-Mech 3.0 data (``gri30.yaml``): standard Gibbs functions of H2, O2 and H2O
  (``Solution.standard_gibbs_RT``) — the species' NASA-7 coefficients are copied into the case.
* JANAF Thermochemical Tables (4th ed., 1998), H2O(g) at 1000 K: ΔfG° ≈ −192.59 kJ/mol and
  log10 Kf ≈ 10.062 — values recalled from memory, checked to the precision they are recalled.
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest

ct = pytest.importorskip("cantera")

from uqthermo.cli import main  # noqa: E402


def _nasa_block(gas, name: str) -> str:
    sp = gas.species(name)
    c = sp.thermo.coeffs
    t_mid, high, low = c[0], c[1:8], c[8:15]
    t_lo, t_hi = sp.thermo.min_temp, sp.thermo.max_temp
    fmt = lambda a: ", ".join(repr(float(x)) for x in a)  # noqa: E731
    return (f'[species.{name}]\nformula = "{name}"\n[species.{name}.g]\n'
            f'heat_capacity = {{ model = "nasa7", relative_u = "0.5 %", source = "GRI-Mech 3.0 (Cantera gri30.yaml)", ranges = [\n'
            f'  {{ T = ["{t_lo} K", "{t_mid} K"], coefficients = [{fmt(low)}] }},\n'
            f'  {{ T = ["{t_mid} K", "{t_hi} K"], coefficients = [{fmt(high)}] }} ] }}\n')


@pytest.fixture(scope="module")
def gibbs_run(tmp_path_factory):
    gas = ct.Solution("gri30.yaml")
    case = ['title = "Formation of steam at 1000 K from NASA-7 data (reference check)"',
            '[settings]\nsamples = 20000\nseed = 7\n']
    case += [_nasa_block(gas, n) for n in ("H2", "O2", "H2O")]
    case.append('[reaction.formation]\nequation = "H2(g) + 1/2 O2(g) -> H2O(g)"\n')
    case.append('[[output]]\nname = "logK"\nkind = "equilibrium_constant"\nreaction = "formation"\n'
                'temperatures = ["500 K", "1000 K", "2000 K"]\n')
    case.append('[[output]]\nname = "dG"\nkind = "reaction_gibbs_energy"\nreaction = "formation"\n'
                'temperatures = ["500 K", "1000 K", "2000 K"]\n')
    d = tmp_path_factory.mktemp("gibbs")
    path = d / "steam.toml"
    path.write_text("\n".join(case), encoding="utf-8")
    out = d / "out"
    assert main(["run", str(path), "--out", str(out), "--quiet", "--no-report"]) == 0
    return gas, json.loads((out / "results.json").read_text())


def _points(results, name):
    o = next(o for o in results["outputs"] if o["name"] == name)
    return {round(p["temperature_K"]): p for p in o["points"]}


def test_gibbs_energy_matches_cantera(gibbs_run):
    # Cantera gri30.yaml: ΔrG° = RT Σ ν_i (g°/RT)_i at 1 bar
    gas, res = gibbs_run
    pts = _points(res, "dG")
    nu = {"H2": -1.0, "O2": -0.5, "H2O": 1.0}
    for T in (500, 1000, 2000):
        gas.TP = T, ct.one_atm
        g = dict(zip(gas.species_names, gas.standard_gibbs_RT))
        dG = ct.gas_constant / 1e3 * T * sum(v * g[k] for k, v in nu.items()) / 1e3   # kJ/mol
        assert pts[T]["linear"]["estimate"] == pytest.approx(dG, abs=1e-3)


def test_log10_kf_of_steam_at_1000_k(gibbs_run):
    # JANAF 1998, H2O(g), 1000 K: log10 Kf ≈ 10.062 and ΔfG° ≈ −192.59 kJ/mol (recalled from memory)
    _, res = gibbs_run
    logk = _points(res, "logK")[1000]
    dG = _points(res, "dG")[1000]
    assert logk["linear"]["estimate"] == pytest.approx(10.06, abs=0.01)
    assert dG["linear"]["estimate"] == pytest.approx(-192.59, abs=0.05)
    # consistency: log10 K = −ΔG/(RT ln 10)
    R = 8.314462618e-3
    assert logk["linear"]["estimate"] == pytest.approx(-dG["linear"]["estimate"] / (R * 1000 * math.log(10)), rel=1e-9)
    # Monte Carlo agrees with the linear estimate for this linear output (within 3 standard errors)
    mc = logk["monte_carlo"]
    assert abs(mc["mean"] - logk["linear"]["estimate"]) <= 3 * mc["standard_uncertainty"] / math.sqrt(mc["samples"]) + 1e-12
    assert logk["linear"]["standard_uncertainty"] > 0
    assert np.isfinite(logk["monte_carlo"]["coverage_interval"]).all()
