"""One-sided bounds on Monte Carlo probabilities (uqthermo.uq.exceedance).

References: the Clopper–Pearson bound is the beta quantile (Clopper & Pearson, Biometrika 26
(1934) 404-413), checked against scipy.stats.beta and the exact binomial tail
(scipy.stats.binom); for zero hits it has the closed form 1 - (1 - γ)^(1/N) ("rule of three",
Hanley & Lippman-Hand, JAMA 249 (1983) 1743).
"""

from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from uqthermo.errors import StatisticsError
from uqthermo.uq.exceedance import (
    bound_method,
    clopper_pearson_lower,
    clopper_pearson_upper,
    hits,
    margin_shares,
    probability_estimate,
)


def test_zero_hits_closed_form():
    # closed form 1 - 0.05**(1/N); 50 000 trials -> 5.99e-5, the "< 6e-5" of the report
    for n in (10, 1000, 20000, 50000, 200000):
        assert clopper_pearson_upper(0, n) == pytest.approx(1 - 0.05 ** (1 / n), rel=1e-12)
    assert clopper_pearson_upper(0, 50000) == pytest.approx(5.9914e-5, rel=1e-4)
    assert clopper_pearson_upper(0, 50000) < 6e-5


@pytest.mark.parametrize("k,n", [(1, 100), (17, 1000), (392, 20000), (999, 1000)])
def test_upper_bound_is_the_beta_quantile_and_the_binomial_tail(k, n):
    up = clopper_pearson_upper(k, n)
    assert up == pytest.approx(stats.beta.ppf(0.95, k + 1, n - k), rel=1e-12)   # scipy.stats.beta
    assert stats.binom.cdf(k, n, up) == pytest.approx(0.05, rel=1e-8)            # P(X <= k | p_up) = 1 - γ
    lo = clopper_pearson_lower(k, n)
    assert stats.binom.sf(k - 1, n, lo) == pytest.approx(0.05, rel=1e-8)         # P(X >= k | p_lo) = 1 - γ
    assert lo < k / n < up


def test_all_hits_and_vector_form():
    assert clopper_pearson_upper(50, 50) == 1.0
    assert clopper_pearson_lower(0, 50) == 0.0
    assert clopper_pearson_lower(50, 50) == pytest.approx(0.05 ** (1 / 50), rel=1e-12)
    np.testing.assert_allclose(clopper_pearson_upper([0, 5], [100, 100]),
                               [1 - 0.05 ** 0.01, stats.beta.ppf(0.95, 6, 95)], rtol=1e-12)


def test_probability_estimate_from_a_proportion():
    e = probability_estimate(0.019, 20000)
    assert e.hits == 380 and e.trials == 20000
    assert e.standard_error == pytest.approx(np.sqrt(0.019 * 0.981 / 20000))
    assert e.upper_bound == pytest.approx(stats.beta.ppf(0.95, 381, 19620))
    z = probability_estimate(0.0, 50000)
    assert z.probability == 0 and z.standard_error == 0 and z.upper_bound == pytest.approx(1 - 0.05 ** (1 / 50000))
    assert hits(0.31365, 20000) == 6273
    with pytest.raises(StatisticsError):
        probability_estimate(0.5, 0)
    with pytest.raises(StatisticsError):
        clopper_pearson_upper(3, 2)


def test_bound_method_names_the_sampling():
    assert "exact" in bound_method("random")
    s = bound_method("sobol")
    assert "Clopper-Pearson" in s and "Sobol'" in s and "approximation" in s
    assert "Latin-hypercube" in bound_method("latin-hypercube")


def test_margin_shares_against_the_gum_law():
    # g = L - y with y = 2 x1 + x2, L = x3: u²(g) = 4 u1² + u2² + u3² (GUM eq. 10, independent inputs)
    cov = np.diag([0.5**2, 1.0, 2.0**2])
    shares, corr = margin_shares([2.0, 1.0, 0.0], [0.0, 0.0, 1.0], cov, {"a": [0], "b": [1], "L": [2]})
    tot = 4 * 0.25 + 1 + 4
    assert shares == pytest.approx({"a": 1 / tot, "b": 1 / tot, "L": 4 / tot})
    assert corr == pytest.approx(0.0, abs=1e-15)


# ---------------------------------------------------------------- presentation (report.style)

def test_probability_text_zero_hits_shows_the_bound():
    from uqthermo.report.style import probability_text

    # 1 - 0.05**(1/50000) = 5.99e-5, shown rounded up (closed form above)
    assert probability_text(0.0, clopper_pearson_upper(0, 50000), 50000) == "< 6×10⁻⁵ (95 % upper bound, 50 000 trials)"
    assert probability_text(0.0, clopper_pearson_upper(0, 20000), 20000) == "< 1.5×10⁻⁴ (95 % upper bound, 20 000 trials)"


def test_probability_text_other_cases():
    from uqthermo.report.style import probability_text

    ub = clopper_pearson_upper(380, 20000)      # 0.0206 (scipy.stats.beta)
    assert probability_text(0.019, ub, 20000) == "1.9 % (95 % upper bound 2.1 %, 20 000 trials)"
    assert probability_text(0.032) == "3.2 % (normal approximation)"
    assert probability_text(None) == "—"
    lb = clopper_pearson_lower(20000, 20000)     # 0.05**(1/20000) = 0.99985
    assert probability_text(1.0, 1.0, 20000, lower_bound=lb) == "100 % (all 20 000 trials; 95 % lower bound 99.985 %)"
    assert probability_text(3.2e-4, 4.0e-4, 200000) == "3.2×10⁻⁴ (95 % upper bound 4×10⁻⁴, 200 000 trials)"
