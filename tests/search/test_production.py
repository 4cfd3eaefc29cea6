"""The chance that one production batch meets every limit, against closed forms.

For a linear model y = c + b'x with independent normal factor deviations
e ~ N(0, diag(s^2)) and normal run-to-run noise (sigma, many degrees of
freedom, no coefficient uncertainty), one production batch is normal with mean
c + b'x and variance sigma^2 + sum (b_i s_i)^2, so its chance of lying in
[lo, hi] is Phi((hi - mu)/sd) - Phi((lo - mu)/sd) (sum of independent normal
variables; common practice), computed here with scipy.stats.norm.
"""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tradeoff.derive.load import study_from_dict
from tradeoff.search.chance import chance_in_limits
from tradeoff.search.production import chance_all_production, production_chance


class LinearModel:
    """y = c + b'x on the natural scale; se of the mean 0; sigma with huge df."""

    transform = "none"

    def __init__(self, c, b, sigma, df=10 ** 9, residuals=None):
        self.c, self.b, self.sigma, self.df = c, np.asarray(b, float), sigma, df
        self.residuals_ = residuals if residuals is not None else pd.Series([0.1, -0.1, 0.2])

    def predictive(self, X):
        X = np.atleast_2d(X)
        return self.c + X @ self.b, np.zeros(len(X)), self.sigma, self.df

    def inverse_transform(self, y):
        return np.asarray(y, dtype=float)


def _study(sds, responses):
    factors = [{"name": f"x{i}", "low": 0, "high": 10, "production_sd": sd}
               for i, sd in enumerate(sds)]
    return study_from_dict({"study": {"name": "p"}, "factors": factors,
                            "responses": responses}, with_data=False)


def _se(p, n):
    return np.sqrt(p * (1 - p) / n)


def test_linear_production_chance_matches_the_normal_closed_form():
    # natural SDs 0.5 and 1.0 on factors 0..10 -> coded SDs 0.1 and 0.2 (half range 5)
    study = _study([0.5, 1.0], [{"name": "y", "goal": "target", "lower": 8, "target": 10,
                                 "upper": 12}])
    model = LinearModel(10.0, [1.5, -2.0], 0.6)
    X = np.array([[0.0, 0.0], [0.4, -0.3]])
    draws = 200_000
    est = production_chance(study, {"y": model}, X, draws=draws, seed=3)
    for i, x in enumerate(X):
        mu = 10.0 + x @ model.b
        sd = np.sqrt(0.6 ** 2 + (1.5 * 0.1) ** 2 + (2.0 * 0.2) ** 2)
        exact = stats.norm.cdf((12 - mu) / sd) - stats.norm.cdf((8 - mu) / sd)
        assert est.all[i] == pytest.approx(exact, abs=4 * _se(exact, draws))
    # the short form gives the same numbers
    assert chance_all_production(study, {"y": model}, X, draws=draws, seed=3) == \
        pytest.approx(est.all)


def test_without_spread_the_production_chance_is_the_ordinary_chance():
    # same seed, same noise draws: the factors' spread is the only difference
    study = _study([0.0, 0.0], [{"name": "y", "goal": "maximize", "lower": 8, "upper": 12}])
    model = LinearModel(9.0, [1.0, 0.5], 1.0, df=7)
    X = np.array([[0.2, 0.1], [-0.5, 0.9]])
    a = production_chance(study, {"y": model}, X, draws=5000, seed=4)
    b = chance_in_limits(study, {"y": model}, X, draws=5000, seed=4)
    np.testing.assert_array_equal(a.all, b.all)


def test_spread_lowers_the_chance_on_a_slope():
    study = _study([1.0, 0.0], [{"name": "y", "goal": "maximize", "lower": 8, "upper": 12}])
    flat = _study([0.0, 0.0], [{"name": "y", "goal": "maximize", "lower": 8, "upper": 12}])
    model = LinearModel(9.0, [3.0, 0.0], 0.5)
    X = np.array([[0.1, 0.0]])
    with_spread = production_chance(study, {"y": model}, X, draws=40000, seed=5).all[0]
    without = production_chance(flat, {"y": model}, X, draws=40000, seed=5).all[0]
    # normal closed forms: P(y >= 8), y ~ N(9.3, 0.5^2 + (3 * 0.2)^2) and N(9.3, 0.5^2)
    spread_exact = stats.norm.sf((8 - 9.3) / np.hypot(0.5, 0.6))
    still_exact = stats.norm.sf((8 - 9.3) / 0.5)
    assert with_spread == pytest.approx(spread_exact, abs=4 * _se(spread_exact, 40000))
    assert without == pytest.approx(still_exact, abs=4 * _se(still_exact, 40000))
    assert with_spread < without


def test_factor_goal_rows_explain_the_chance_in_production():
    # factor x0 (0..10, production SD 1.0 = 0.2 coded) has its own goal: at least 6.
    # Set at 6.5, it lands below 6 with P = Phi((6 - 6.5) / 1.0) (normal; common
    # practice). The response does not depend on x0, so the chance of all at once
    # is the product of the two rows (independent draws).
    from tradeoff.search.production import factor_goal_chances

    study = _study([1.0, 0.0], [{"name": "y", "goal": "maximize", "lower": 8,
                                 "upper": 12}])
    from tradeoff.study.spec import Goal

    study = study.with_goal("x0", Goal("maximize", lower=6, upper=10))
    model = LinearModel(9.0, [0.0, 1.0], 0.5)
    X = np.array([[0.3, 0.0]])                     # x0 = 5 + 5 * 0.3 = 6.5
    draws = 200_000
    rows = factor_goal_chances(study, X, draws=draws, seed=2)
    exact = stats.norm.sf((6 - 6.5) / 1.0)
    assert rows["x0"][0] == pytest.approx(exact, abs=4 * _se(exact, draws))
    y_row = stats.norm.sf((8 - 9.0) / 0.5)
    together = production_chance(study, {"y": model}, X, draws=draws, seed=2).all[0]
    assert together == pytest.approx(exact * y_row, abs=4 * _se(exact * y_row, draws))
    # the rows use the very draws of the joint chance: it never exceeds a row
    assert together <= rows["x0"][0] + 1e-12
