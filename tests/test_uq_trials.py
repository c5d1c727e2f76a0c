"""How Monte Carlo trials are drawn and evaluated (uq/trials.py, uq/sampling.ScoreStream, case/model/dependence.py).

References: scipy.stats.norm / uniform (Kolmogorov-Smirnov tests of the drawn variates); the
exact normal distribution of an additive model of normal inputs (JCGM 101 §9.2-style, mean
Σ c_i x_i, variance Σ c_i² u_i², scipy.stats.norm); the model itself row by row (kept input
rows must reproduce the kept model values).
"""

from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from uqthermo.errors import StatisticsError
from uqthermo.uq import InputSet, InputVariable, Normal, Rectangular, propagate_monte_carlo
from uqthermo.uq.montecarlo import score_rotation, trial_design
from uqthermo.uq.sampling import SCORE_BLOCK, ScoreStream
from uqthermo.uq.trials import TrialDesign, fit_affine

ROOT = Path(__file__).resolve().parents[1]


def _additive(n_inputs=6, extra_unused=0):
    """Y = X @ c over independent normal inputs (plus inputs Y does not use): exactly normal."""
    rng = np.random.default_rng(42)
    c = np.concatenate([rng.uniform(-2.0, 2.0, n_inputs) * np.logspace(0, -1.5, n_inputs), np.zeros(extra_unused)])
    d = n_inputs + extra_unused
    xs = rng.normal(0.0, 3.0, d)
    us = rng.uniform(0.2, 1.0, d)
    s = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(xs[i], us[i])) for i in range(d)])
    return (lambda X: X @ c), s, float(c @ xs), float(np.sqrt(np.sum((c * us) ** 2)))


def test_score_stream_chunks_and_skips_equal_one_draw():
    whole_z, whole_v = ScoreStream([0, 1, 2], [3, 4], 5).draw(3 * SCORE_BLOCK + 11)
    s = ScoreStream([0, 1, 2], [3, 4], 5)
    parts = [s.draw(n) for n in (1, SCORE_BLOCK - 1, 7, SCORE_BLOCK, SCORE_BLOCK + 4)]
    np.testing.assert_array_equal(np.concatenate([p[0] for p in parts]), whole_z)
    np.testing.assert_array_equal(np.concatenate([p[1] for p in parts]), whole_v)
    start = SCORE_BLOCK + 123
    z, v = ScoreStream([0, 1, 2], [3, 4], 5, skip=start).draw(500)
    np.testing.assert_array_equal(z, whole_z[start:start + 500])
    np.testing.assert_array_equal(v, whole_v[start:start + 500])
    assert not np.array_equal(ScoreStream([0, 1, 2], [3, 4], 6).draw(10)[0], whole_z[:10])
    # a column's numbers do not depend on the other columns (common random numbers)
    z, v = ScoreStream([2], [4], 5).draw(SCORE_BLOCK + 11)
    np.testing.assert_array_equal(z[:, 0], whole_z[:SCORE_BLOCK + 11, 2])
    np.testing.assert_array_equal(v[:, 0], whole_v[:SCORE_BLOCK + 11, 1])


def test_score_stream_draws_standard_normals_and_uniforms():
    """Kolmogorov-Smirnov against scipy.stats.norm and uniform; the columns are uncorrelated."""
    z, v = ScoreStream([0, 1], [2], 11).draw(100_000)
    assert stats.kstest(z[:, 0], "norm").pvalue > 1e-3 and stats.kstest(z[:, 1], "norm").pvalue > 1e-3
    assert stats.kstest(v[:, 0], "uniform").pvalue > 1e-3
    assert abs(np.corrcoef(z.T)[0, 1]) < 0.02 and abs(np.corrcoef(z[:, 0], v[:, 0])[0, 1]) < 0.02


def test_fit_affine_is_exact_for_a_linear_model_and_refuses_a_curved_one():
    f, s, _, _ = _additive(5, extra_unused=2)
    y0, J = fit_affine(f, s)
    np.testing.assert_allclose(J[0], f(np.eye(7)) - f(np.zeros((1, 7))), rtol=1e-12, atol=1e-15)
    assert np.all(J[0, 5:] == 0.0)              # an input f does not read: exactly zero
    assert fit_affine(lambda X: np.exp(0.01 * X[:, 0]), s) is None
    assert fit_affine(lambda X: X[:, :2] * X[:, 2:4], s) is None


@pytest.mark.parametrize("sampling", ["random", "latin-hypercube", "sobol"])
def test_affine_map_gives_the_model_values(sampling):
    """The folded map (normal scores times diag(u) Jᵀ, rotation included) gives the same results
    as evaluating the model, to rounding; kept rows (every row here) reproduce the kept values;
    the output equals the exact normal distribution (scipy.stats.norm) within Monte Carlo error.
    Under Sobol' the folded map draws only the one coordinate the output moves with (the
    model's rotated gradient), so the run through f, which draws all six, has other trials:
    the two agree within their (quasi-)Monte Carlo error there."""
    f, s, mean, sd = _additive(6, extra_unused=3)
    kw = dict(samples=50_000, sampling=sampling, seed=9)
    fast = propagate_monte_carlo(f, s, affine=True, **kw)
    assert fast.samples_used == 50_000 and fast.Y_kept.shape[0] == 50_000
    np.testing.assert_allclose(fast.Y_kept[:, 0], f(fast.X_kept), rtol=0, atol=1e-12 * sd)
    slow = propagate_monte_carlo(f, s, depends_on=range(6), **kw)     # the same trials, through f
    se = sd / np.sqrt(50_000)
    if sampling == "sobol":
        design = trial_design(f, s, "sobol", 9, True, True, None)
        assert (design.dimension, design.stream_dimension) == (6, 1)
        assert abs(fast.mean[0] - slow.mean[0]) < 2 * se
        np.testing.assert_allclose(fast.coverage_interval, slow.coverage_interval, rtol=0, atol=0.01 * sd)
        np.testing.assert_allclose(fast.standard_uncertainty, slow.standard_uncertainty, rtol=0.01)
    else:
        np.testing.assert_allclose(fast.Y_kept, slow.Y_kept, rtol=0, atol=1e-12 * sd)
        np.testing.assert_allclose(fast.coverage_interval, slow.coverage_interval, rtol=0, atol=1e-12 * sd)
        np.testing.assert_allclose(fast.standard_uncertainty, slow.standard_uncertainty, rtol=1e-12)
    assert abs(fast.mean[0] - mean) < 5 * se
    assert np.all(np.abs(fast.coverage_interval[0] - stats.norm.ppf([0.025, 0.975], mean, sd)) < 0.03 * sd)


def test_sobol_trials_of_an_affine_model_need_only_the_rank_of_its_gradients():
    """Four outputs of six normal inputs whose score gradients span three directions (one of
    them 10⁻⁶ of the first, as a Cp term over a narrow temperature window is): the rotation
    from the exact map leads with that span, the trials use three Sobol' coordinates, and the
    results equal the model's own values row by row and the exact normal distributions
    (scipy.stats.norm, variance Σ_j (u_j ∂y/∂x_j)²) within Monte Carlo error."""
    rng = np.random.default_rng(8)
    us = rng.uniform(0.2, 1.0, 6)
    xs = rng.normal(0.0, 3.0, 6)
    # score-space directions: g1 (all inputs), g2, g3 = 1e-6 (inputs 4 and 5 only); c = G / u
    G = np.column_stack([rng.uniform(0.5, 1.0, 6), rng.normal(0.0, 0.3, 6), 1e-6 * np.r_[0, 0, 0, 0, 1.0, -0.5]])
    C = (G @ rng.normal(0.0, 1.0, (3, 4))) / us[:, None]        # (6 inputs, 4 outputs), rank 3
    s = InputSet([InputVariable(f"x{i}", f"x{i}", Normal(xs[i], us[i])) for i in range(6)])
    f = lambda X: X @ C
    design = TrialDesign(f, s, "sobol", 5, affine=True,
                         rotation=lambda cols, grads=None, values=None: score_rotation(f, s, cols, grads, values))
    assert design.affine and len(design._fold[0]) == 3 and design.stream_dimension == 3
    assert design.stream().draw(8).shape == (8, 3)          # the stream draws those three alone
    W = design.rotation
    np.testing.assert_allclose(W.T @ W, np.eye(6), atol=1e-12)
    res = propagate_monte_carlo(f, s, samples=2**14, sampling="sobol", seed=5, affine=True)
    sd = np.sqrt(((us[:, None] * C) ** 2).sum(axis=0))
    np.testing.assert_allclose(res.Y_kept, f(res.X_kept), rtol=0, atol=1e-12 * sd.max())
    # the kept rows hold all six inputs (the three completion coordinates from the companion
    # stream): their covariance is diag(u²) within sampling error, not the rank-3 span
    assert res.X_kept.shape[0] >= 4096
    np.testing.assert_allclose(np.cov(res.X_kept.T), np.diag(us**2), rtol=0, atol=0.08 * us.max() ** 2)
    assert np.all(np.abs(res.mean - xs @ C) < 0.01 * sd)
    np.testing.assert_allclose(res.standard_uncertainty, sd, rtol=0.02)
    exact = stats.norm.ppf([0.025, 0.975], (xs @ C)[:, None], sd[:, None])     # (4, 2)
    np.testing.assert_allclose(res.coverage_interval, exact, rtol=0, atol=0.02 * sd.max())


def test_affine_rows_do_not_depend_on_the_chunking():
    f, s, _, _ = _additive(4)
    for sampling in ("random", "sobol"):
        a = propagate_monte_carlo(f, s, samples=5001, sampling=sampling, seed=2, affine=True, chunk_size=5001)
        b = propagate_monte_carlo(f, s, samples=5001, sampling=sampling, seed=2, affine=True, chunk_size=1000)
        assert a.coverage_interval.tobytes() == b.coverage_interval.tobytes()
        assert a.Y_kept.tobytes() == b.Y_kept.tobytes() and a.X_kept.tobytes() == b.X_kept.tobytes()


def test_inactive_inputs_are_drawn_for_the_kept_rows_only():
    """depends_on: the model sees only the active inputs sampled; the kept rows still hold a draw
    of every input (mean and u of each column as stated), and reproduce the kept values."""
    v = [InputVariable("a", "a", Normal(1.0, 0.5)), InputVariable("b", "b", Rectangular(2.0, 1.0)),
         InputVariable("c", "c", Normal(-3.0, 2.0)), InputVariable("d", "d", Normal(4.0, 0.1))]
    s = InputSet(v)
    seen = []

    def f(X):
        seen.append(X[:, [1, 3]].copy())
        return X[:, 0] * X[:, 2]

    mc = propagate_monte_carlo(f, s, samples=40_000, sampling="random", seed=3, depends_on=[0, 2])
    big = [x for x in seen if len(x) > 100]
    assert all(np.all(x == [2.0, 4.0]) for x in big)            # inactive at their estimates in the model rows
    X = mc.X_kept
    assert X.shape == (40_000, 4)
    np.testing.assert_allclose(X.mean(axis=0), s.estimates, atol=0.03)
    np.testing.assert_allclose(X.std(axis=0), s.stds, rtol=0.02)
    np.testing.assert_array_equal(mc.Y_kept[:, 0], X[:, 0] * X[:, 2])


def test_a_wrong_dependence_declaration_is_not_relied_on():
    f, s, _, _ = _additive(3)
    d = TrialDesign(f, s, "random", 1, depends_on=[0, 1])       # f also reads column 2
    assert list(d.active) == [0, 1, 2]
    assert list(TrialDesign(lambda X: X[:, 0] + X[:, 1], s, "random", 1, depends_on=[0, 1]).active) == [0, 1]
    with pytest.raises(StatisticsError):
        TrialDesign(f, s, "random", 1, depends_on=[7])


def test_copula_linked_inputs_are_active_together():
    v = [InputVariable(n, n, Normal(0.0, 1.0)) for n in "abcd"]
    R = np.eye(4)
    R[0, 3] = R[3, 0] = 0.5
    s = InputSet(v, R)
    d = TrialDesign(lambda X: X[:, 0] + X[:, 1], s, "sobol", 1, depends_on=[0, 1])
    assert list(d.active) == [0, 1, 3]
    mc = propagate_monte_carlo(lambda X: X[:, 0] + X[:, 1], s, samples=50_000, sampling="random", seed=4,
                               depends_on=[0, 1])
    assert np.corrcoef(mc.X_kept[:, 0], mc.X_kept[:, 3])[0, 1] == pytest.approx(0.5, abs=0.02)


def test_dependence_rule_of_the_demo_cases():
    """case.model.dependence: moving every datum outside an output's set leaves that output's columns
    unchanged, bit for bit, on rows of the joint input distribution (the demo cases and the
    documented worked example)."""
    from uqthermo.case.model.builder import build_model
    from uqthermo.case.model.dependence import output_data
    from uqthermo.case.loader import load_case

    for path in sorted((ROOT / "inputs").glob("*.toml")) + [ROOT / "docs" / "worked-example.toml"]:
        name = path.name
        case = load_case(path)
        m = build_model(case)
        X = m.inputs.from_uniform(np.random.default_rng(1).random((64, len(m.inputs))))
        for i, o in enumerate(case.outputs):
            keep = [j for did in output_data(case, o) for j in m.inputs.groups.get(did, [])]
            X0 = np.tile(m.inputs.estimates, (64, 1))
            X0[:, keep] = X[:, keep]
            cols = m.output_columns(i) + [a.column for a in m.aux if a.output == i]
            np.testing.assert_array_equal(m.f(X)[:, cols], m.f(X0)[:, cols])
        if name.startswith("methanation"):
            d = output_data(case, case.outputs[0])      # ΔrH at the sampled bed temperature
            assert "output.dH_operating.temperature" in d and "CO.g.formation_enthalpy" not in d
            assert "CH4.g.standard_entropy" not in d and "output.cooling_duty.extent_rate.methanation.feed" not in d


def test_dependence_rule_with_feed_streams_limits_and_mass_basis(tmp_path):
    """The same bit-for-bit probe on the demo's outputs with the newer keys: a continuous
    reactor's feed streams (uncertain feed temperature and flows, one more stream with CO), an
    uncertain limit, and a reaction enthalpy on a mass basis."""
    from uqthermo.case.model.builder import build_model
    from uqthermo.case.model.dependence import output_data
    from uqthermo.case.loader import load_case

    text = (ROOT / "inputs" / "methanation_reactor.toml").read_text(encoding="utf-8")
    text = text.split("# ---------------------------------------------------------------- data purchases")[0]
    head, tail = text.split('[[output]]\nname = "log10K_window"')
    text = head + '''[[output.feed]]
temperature = { value = "250 degC", u = "5 K" }
flows = { "CO2(g)" = { value = "25 kmol/h", u = "0.25 kmol/h" }, "H2(g)" = "100 kmol/h", "CO(g)" = { value = "1 kmol/h", u = "0.1 kmol/h" } }

[[output]]
name = "log10K_window"''' + tail + '''
[[output]]
name = "dH_mass"
kind = "reaction_enthalpy"
reaction = "methanation"
temperature = "350 degC"
basis = "mass"
mass_of = "CH4"
limit = { value = "-10000 kJ/kg", u = "100 kJ/kg" }
'''
    path = tmp_path / "case.toml"
    path.write_text(text, encoding="utf-8")
    case = load_case(path)
    m = build_model(case)
    X = m.inputs.from_uniform(np.random.default_rng(2).random((64, len(m.inputs))))
    for i, o in enumerate(case.outputs):
        keep = [j for did in output_data(case, o) for j in m.inputs.groups.get(did, [])]
        X0 = np.tile(m.inputs.estimates, (64, 1))
        X0[:, keep] = X[:, keep]
        cols = m.output_columns(i) + [a.column for a in m.aux if a.output == i]
        np.testing.assert_array_equal(m.f(X)[:, cols], m.f(X0)[:, cols])
    fed = [o for o in case.outputs if o.feeds]
    assert fed
    for o in fed:
        d = output_data(case, o)
        assert all(f.temperature_datum in d for f in o.feeds if f.temperature_datum)
        assert all(did in d for f in o.feeds for did in f.flows.values())
        assert all(f"{sp}.{ph}.heat_capacity" in d for f in o.feeds for sp, ph in f.flows
                   if f"{sp}.{ph}.heat_capacity" in case.data)


def test_an_inert_feed_species_keeps_its_heat_capacity_uncertainty(tmp_path):
    """A species fed to a continuous reactor but in no reaction (N2 here) is heated by the
    feed balance, so its Cp datum stays an input and moves the heat to remove (it was dropped
    from the inputs when only reactions, species, mixtures and charges counted)."""
    from uqthermo.case.model.builder import build_model
    from uqthermo.case.loader import load_case

    text = (ROOT / "inputs" / "methanation_reactor.toml").read_text(encoding="utf-8")
    text = text.split("# ---------------------------------------------------------------- data purchases")[0]
    n2 = '''
[species.N2]
formula = "N2"
[species.N2.g]
formation_enthalpy = { value = "0 kJ/mol" }
heat_capacity = { model = "shomate", relative_u = "5 %", source = "NIST WebBook Shomate (recalled from memory); 5 % assumed", ranges = [
  { T = ["100 K", "500 K"], coefficients = [28.98641, 1.853978, -9.647459, 16.63537, 0.000117] },
  { T = ["500 K", "2000 K"], coefficients = [19.50583, 19.88705, -8.598535, 1.369784, 0.527601] } ] }
'''
    text = text.replace("# ---------------------------------------------------------------- reactions",
                        n2 + "\n# ---------------------------------------------------------------- reactions")
    assert 'flows = { "CO2(g)"' in text
    text = text.replace('flows = { "CO2(g)"', 'flows = { "N2(g)" = "50 kmol/h", "CO2(g)"', 1)
    path = tmp_path / "inert.toml"
    path.write_text(text, encoding="utf-8")
    case = load_case(path)
    m = build_model(case)
    assert "N2.g.heat_capacity" in m.inputs.groups
    j = m.inputs.groups["N2.g.heat_capacity"][0]
    i = next(k for k, o in enumerate(case.outputs) if o.feeds)
    x = np.tile(m.inputs.estimates, (2, 1))
    x[1, j] *= 1.05
    y = m.f(x)[:, m.output_columns(i)]
    assert np.all(y[1] != y[0])
