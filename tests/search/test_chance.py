"""Monte Carlo chances of landing within limits, against exact probabilities from
scipy.stats (Student t and bivariate normal distribution functions)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tradeoff.search.chance import chance_in_limits, residual_correlation
from tradeoff.derive.load import study_from_dict


class FixedModel:
    """A model whose predictive distribution is given: mean + t_df * sqrt(se^2 + s^2)."""

    def __init__(self, mean, se, sigma, df, residuals, log=False):
        self.mean, self.se, self.sigma, self.df = mean, se, sigma, df
        self.residuals_ = residuals
        self.log = log

    def predictive(self, X):
        n = len(X)
        return np.full(n, self.mean), np.full(n, self.se), self.sigma, self.df

    def inverse_transform(self, y):
        return np.exp(y) if self.log else np.asarray(y, dtype=float)


def _study(responses):
    return study_from_dict({"study": {"name": "c"},
                            "factors": [{"name": "a", "low": 0, "high": 1}],
                            "responses": responses}, with_data=False)


def _se(p, n):
    return np.sqrt(p * (1 - p) / n)


def test_single_response_matches_student_t():
    study = _study([{"name": "y", "goal": "target", "lower": 8, "target": 10, "upper": 13}])
    model = FixedModel(10.5, 0.6, 1.2, 6, pd.Series([0.1, -0.1, 0.2, -0.2]))
    est = chance_in_limits(study, {"y": model}, np.zeros((2, 1)), draws=40000, seed=1)
    scale = np.hypot(0.6, 1.2)
    exact = stats.t.cdf((13 - 10.5) / scale, 6) - stats.t.cdf((8 - 10.5) / scale, 6)
    assert est.each[:, 0] == pytest.approx([exact, exact], abs=4 * _se(exact, 40000))
    assert est.all == pytest.approx(est.each[:, 0])


def test_log_scale_response_uses_the_back_transform():
    # P(exp(Y) <= 20) = P(Y <= log 20) for Y ~ mean + t * scale
    study = _study([{"name": "y", "goal": "minimize", "lower": 5, "upper": 20}])
    model = FixedModel(np.log(15), 0.1, 0.3, 8, pd.Series([0.1, -0.1]), log=True)
    est = chance_in_limits(study, {"y": model}, np.zeros((1, 1)), draws=40000, seed=2)
    exact = stats.t.cdf((np.log(20) - np.log(15)) / np.hypot(0.1, 0.3), 8)
    assert est.each[0, 0] == pytest.approx(exact, abs=4 * _se(exact, 40000))


def test_correlated_responses_match_bivariate_normal():
    rng = np.random.default_rng(5)
    ids = [f"R{i}" for i in range(40)]
    z = rng.standard_normal((40, 2))
    r1 = pd.Series(z[:, 0], index=ids)
    r2 = pd.Series(0.8 * z[:, 0] + 0.6 * z[:, 1], index=ids).iloc[::-1]  # other order
    study = _study([{"name": "y1", "goal": "maximize", "lower": 9, "upper": 12},
                    {"name": "y2", "goal": "maximize", "lower": 4, "upper": 6}])
    big = 10 ** 7  # a t with huge df is a normal
    models = {"y1": FixedModel(10, 0.0, 1.0, big, r1),
              "y2": FixedModel(5, 0.0, 2.0, big, r2)}
    rho = residual_correlation(models).loc["y1", "y2"]
    assert rho == pytest.approx(np.corrcoef(r1.sort_index(), r2.sort_index())[0, 1])
    est = chance_in_limits(study, models, np.zeros((1, 1)), draws=60000, seed=3)
    assert est.correlated
    # P(Y1 >= 9, Y2 >= 4) = P(-Z1 <= 1, -Z2 <= 0.5) with corr rho
    exact = stats.multivariate_normal(mean=[0, 0], cov=[[1, rho], [rho, 1]]).cdf([1.0, 0.5])
    assert est.all[0] == pytest.approx(exact, abs=4 * _se(exact, 60000))
    indep = chance_in_limits(study, models, np.zeros((1, 1)), draws=60000, seed=3,
                             correlated=False)
    assert not indep.correlated and "independent" in indep.assumption
    assert indep.all[0] == pytest.approx(stats.norm.cdf(1) * stats.norm.cdf(0.5),
                                         abs=4 * _se(0.58, 60000))


def test_same_seed_same_answer_and_too_few_runs():
    study = _study([{"name": "y1", "goal": "maximize", "lower": 9, "upper": 12},
                    {"name": "y2", "goal": "maximize", "lower": 4, "upper": 6}])
    few = pd.Series([0.1, -0.2, 0.1], index=["1", "2", "3"])
    models = {"y1": FixedModel(10, 0.2, 1.0, 5, few), "y2": FixedModel(5, 0.2, 2.0, 5, few)}
    a = chance_in_limits(study, models, np.zeros((1, 1)), draws=5000, seed=9)
    b = chance_in_limits(study, models, np.zeros((1, 1)), draws=5000, seed=9)
    assert a.all.tolist() == b.all.tolist()
    assert not a.correlated and "too few runs" in a.assumption


def test_no_error_estimate_gives_no_chance():
    study = _study([{"name": "y", "goal": "maximize", "lower": 9, "upper": 12}])
    model = FixedModel(10, 0.0, float("nan"), 0, pd.Series([0.0, 0.0]))
    est = chance_in_limits(study, {"y": model}, np.zeros((1, 1)), draws=100)
    assert np.isnan(est.each[0, 0]) and np.isnan(est.all[0])
    assert "no chance for 'y'" in est.assumption


def test_chance_of_a_fitted_model_uses_n_minus_p_degrees_of_freedom(write_study):
    # A quadratic in one factor fitted to 6 runs: p = 3 coefficients, so a new
    # measurement follows mean + t(n - p = 3) * sqrt(se_mean^2 + s^2) (the
    # prediction distribution of a linear model, common practice). The mean, its
    # standard error and s come from statsmodels OLS; the chance from scipy's t
    # with the degrees of freedom counted here. Limits 2.5 scales either side
    # make the chance depend strongly on the degrees of freedom.
    import statsmodels.api as sm

    x = np.array([-1.0, -1.0, 0.0, 0.0, 1.0, 1.0])
    y = 20 + 3 * x - 2 * x ** 2 + np.random.default_rng(8).normal(0, 0.5, 6)
    F = np.column_stack([np.ones(6), x, x ** 2])
    res = sm.OLS(y, F).fit()
    at = np.array([[1.0, 0.4, 0.16]])
    pred = res.get_prediction(at)
    mean, se = float(pred.predicted_mean[0]), float(pred.se_mean[0])
    scale = np.hypot(se, np.sqrt(res.scale))
    n, p = len(y), F.shape[1]
    lo, hi = float(mean - 2.5 * scale), float(mean + 2.5 * scale)
    study_text = f"""\
[study]
name = "one factor"
data = "runs.csv"
model = "quadratic"

[[factors]]
name = "temp"
low = 40
high = 60

[[responses]]
name = "y"
goal = "target"
lower = {lo!r}
target = {mean!r}
upper = {hi!r}
"""
    runs = "run,temp,y\n" + "".join(f"{i + 1},{float(50 + 10 * v)!r},{float(w)!r}\n"
                                    for i, (v, w) in enumerate(zip(x, y)))
    from tradeoff import load_study
    from tradeoff.model.study_fit import fit_study

    study = load_study(write_study(study_text, runs))
    models = fit_study(study).models
    draws = 60000
    est = chance_in_limits(study, models, np.array([[0.4]]), draws=draws, seed=4)
    exact = stats.t.cdf(2.5, n - p) - stats.t.cdf(-2.5, n - p)   # 0.912
    tol = 4 * _se(exact, draws)
    assert est.each[0, 0] == pytest.approx(exact, abs=tol)
    # the check tells neighbouring degrees of freedom (and the normal) apart
    for other in (stats.t.cdf(2.5, n - p - 1) - stats.t.cdf(-2.5, n - p - 1),
                  stats.t.cdf(2.5, n - p + 1) - stats.t.cdf(-2.5, n - p + 1),
                  stats.norm.cdf(2.5) - stats.norm.cdf(-2.5)):
        assert abs(other - exact) > 2 * tol
