"""Design evaluation: estimable terms, aliases, VIFs and power, each checked
against an independent computation (statsmodels, scipy, simulation)."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from tradeoff import PlanError, load_study
from tradeoff.plan.designs import fractional_design, plan_runs
from tradeoff.plan.evaluation import effect_power, evaluate_design, evaluate_plan

from conftest import DEMO


class _F:
    def __init__(self, name):
        self.name = name


def _factors(names):
    return [_F(n) for n in names]


def test_power_matches_statsmodels_two_sample_t():
    """One factor at two levels, r runs at each: the effect's t test is the
    two-sample t test, so the power must equal statsmodels' TTestIndPower."""
    from statsmodels.stats.power import TTestIndPower

    for r, effect, sd in [(3, 2.0, 1.0), (5, 1.0, 0.8), (8, 0.5, 1.0)]:
        X = np.repeat([[-1.0], [1.0]], r, axis=0)
        ev = evaluate_design(_factors(["a"]), X, "main", effect=effect, sd=sd)
        expected = TTestIndPower().power(effect_size=effect / sd, nobs1=r, alpha=0.05,
                                         ratio=1.0, alternative="two-sided")
        assert ev.table.loc[0, "power"] == pytest.approx(expected, rel=1e-9)


def test_power_direct_noncentral_t_for_orthogonal_design():
    """2^3 factorial + 4 centre runs, main-effects model: SE of a coded
    coefficient is sd / sqrt(8); power from scipy.stats.nct directly."""
    X = np.vstack([fractional_design(3, 8).coded, np.zeros((4, 3))])
    ev = evaluate_design(_factors("abc"), X, "main", effect=3.0, sd=2.0)
    df = 12 - 4
    delta = (3.0 / 2) / (2.0 / np.sqrt(8))
    tc = stats.t.ppf(0.975, df)
    expected = stats.nct.sf(tc, df, delta) + stats.nct.cdf(-tc, df, delta)
    assert ev.error_df == df
    assert np.allclose(ev.table["power"], expected, rtol=1e-12)


def test_power_agrees_with_simulation():
    """Monte Carlo: simulate the 2^(4-1) + 4 centre plan many times, fit by least
    squares, count how often the t test finds the effect of 'a'."""
    X = np.vstack([fractional_design(4, 8).coded, np.zeros((4, 4))])
    ev = evaluate_design(_factors("abcd"), X, "main", effect=2.0, sd=1.0)
    rng = np.random.default_rng(20240501)
    n_sim = 6000
    M = np.column_stack([np.ones(len(X)), X])
    beta = np.array([10.0, 1.0, 0.0, 0.0, 0.0])  # effect of a = 2 * 1.0
    Y = M @ beta + rng.normal(0, 1.0, size=(n_sim, len(X)))
    coef, *_ = np.linalg.lstsq(M, Y.T, rcond=None)
    resid = Y.T - M @ coef
    df = len(X) - M.shape[1]
    s2 = (resid ** 2).sum(axis=0) / df
    se = np.sqrt(s2 * np.linalg.inv(M.T @ M)[1, 1])
    rejected = np.abs(coef[1] / se) > stats.t.ppf(0.975, df)
    simulated = rejected.mean()
    assert ev.table.loc[0, "power"] == pytest.approx(simulated, abs=0.02)


def test_vif_matches_statsmodels_for_central_composite():
    """Face-centred composite in 3 factors, quadratic model: VIFs equal
    statsmodels.stats.outliers_influence.variance_inflation_factor."""
    from statsmodels.stats.outliers_influence import variance_inflation_factor

    F = fractional_design(3, 8).coded
    axial = np.vstack([s * np.eye(3)[j] for j in range(3) for s in (-1, 1)])
    X = np.vstack([F, axial, np.zeros((3, 3))])
    ev = evaluate_design(_factors("abc"), X, "quadratic")
    from tradeoff.model.terms import model_matrix, model_terms

    terms, _ = model_terms("quadratic", list("abc"), n_settings=[3, 3, 3])
    M = model_matrix(X, terms)
    expected = [variance_inflation_factor(M, j) for j in range(1, M.shape[1])]
    assert np.allclose(ev.table["vif"], expected, rtol=1e-8)
    assert ev.table.loc[ev.table["term"] == "a", "vif"].item() == pytest.approx(1.0)
    assert ev.table.loc[ev.table["term"] == "a^2", "vif"].item() > 1.0


def test_resolution_three_interactions_not_estimable(tmp_path):
    """2^(3-1) with C = AB: the interaction a:b is the same column as c."""
    X = fractional_design(3, 4).coded
    ev = evaluate_design(_factors("abc"), X, "interactions")
    assert ev.estimable == ["a", "b", "c"]
    assert ev.aliased == {"a:b": ["c"], "a:c": ["b"], "b:c": ["a"]}
    assert ev.error_df == 0


def test_saturated_design_has_no_power():
    X = fractional_design(3, 4).coded
    ev = evaluate_design(_factors("abc"), X, "main", effect=1.0, sd=1.0)
    assert ev.table["power"].isna().all()
    assert any("no runs are left over" in n for n in ev.notes)
    assert np.all(np.isnan(effect_power(np.array([0.5]), 0, effect=1, sd=1)))


def test_blocks_take_a_degree_of_freedom():
    study = load_study(DEMO, with_data=False)
    one = evaluate_plan(plan_runs(study, center=4), "interactions")
    two = evaluate_plan(plan_runs(study, center=2, blocks=2), "interactions")
    assert one.error_df == 20 - 11
    assert two.error_df == 20 - 12
    assert two.table["estimable"].all()  # the block is on the 4-factor interaction


def test_power_input_errors():
    X = fractional_design(3, 8).coded
    with pytest.raises(PlanError, match=r"power needs both the effect size.*and the "
                                        r"run-to-run standard deviation"):
        evaluate_design(_factors("abc"), X, "main", effect=1.0)
    with pytest.raises(PlanError, match=r"standard deviation must be above 0"):
        evaluate_design(_factors("abc"), X, "main", effect=1.0, sd=0.0)
    with pytest.raises(PlanError, match=r"one coded column per factor \(2\)"):
        evaluate_design(_factors("ab"), X, "main")


def test_evaluate_loaded_demo_study():
    """The demo's 2^4 + 4 centre runs: every interaction estimable, orthogonal,
    11 terms leave 20 - 11 = 9 degrees of freedom; the quadratic model can
    square no factor independently (one curvature direction from centre runs)."""
    from tradeoff.plan.evaluation import evaluate_study

    study = load_study(DEMO)
    ev = evaluate_study(study)
    assert ev.error_df == 9 and ev.table["estimable"].all()
    assert np.allclose(ev.table["vif"], 1.0)
    quad = evaluate_study(study, "quadratic")
    squares = quad.table[quad.table["term"].str.endswith("^2")]
    assert squares["estimable"].sum() == 1
