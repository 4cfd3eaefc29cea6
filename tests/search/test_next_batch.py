"""The next batch: expected improvement against its closed form, and the batch's rules."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import integrate, stats

from conftest import DEMO, PEAKED_STUDY, peaked_runs
from reference_desirability import study_D
from tradeoff.errors import SearchError
from tradeoff.search.next_batch import _Goals, expected_improvement, next_batch, normal_ei


def test_normal_ei_matches_its_closed_form_and_a_numerical_integral():
    # Jones, Schonlau & Welch (1998), eq. 15: at mu = best, EI = sd * phi(0).
    assert normal_ei(1.0, 2.0, 1.0) == pytest.approx(2.0 / math.sqrt(2 * math.pi))
    for mu, sd, best in [(0.3, 0.2, 0.5), (0.9, 0.1, 0.5), (0.5, 1.5, -1.0)]:
        # E[max(Y - best, 0)] for Y ~ N(mu, sd^2), by quadrature
        value, _ = integrate.quad(lambda y: (y - best) * stats.norm.pdf(y, mu, sd),
                                  best, mu + 12 * sd)
        assert normal_ei(mu, sd, best) == pytest.approx(value, rel=1e-7)
    assert normal_ei(0.7, 0.0, 0.5) == pytest.approx(0.2)
    assert normal_ei(0.3, 0.0, 0.5) == 0.0


def test_monte_carlo_ei_of_d_matches_the_closed_form_where_d_is_linear(write_study):
    # One response, maximize with limits far outside the predictive: D = (y - L) / (U - L)
    # is linear, so EI of D is the normal closed form with mean and SD scaled.
    from tradeoff import load_study

    spec = PEAKED_STUDY.format(model="interactions").replace(
        "lower = 4\nupper = 8", "lower = -100\nupper = 100")
    study = load_study(write_study(spec, peaked_runs()))
    from tradeoff.model.study_fit import fit_study

    fit = fit_study(study)
    goals = _Goals(study, fit.models)
    X = np.array([[0.0, 0.0], [0.3, -0.2], [1.0, 1.0]])
    mu, sd = goals.moments(X)
    E = np.random.default_rng(0).standard_normal((200_000, 1))
    best = 0.52
    ei = expected_improvement(goals, X, mu, sd, best, E)
    closed = normal_ei((mu[:, 0] + 100) / 200, sd[:, 0] / 200, best)
    # Monte Carlo error: sd/200 * 0.6 / sqrt(200000), a few parts in 1e5 of sd/200
    np.testing.assert_allclose(ei, closed, atol=5 * sd[:, 0].max() / 200 / math.sqrt(2e5))


def batch_fit(study):
    from tradeoff.model.study_fit import fit_study

    return fit_study(study)


def _peaked(write_study, model="smooth", extra=""):
    from tradeoff import load_study

    return load_study(write_study(PEAKED_STUDY.format(model=model) + extra, peaked_runs()))


RULE = """
[[constraints]]
rule = "sugar + 4*acid <= 6"
"""


def test_batch_lies_in_the_region_obeys_the_rules_and_keeps_its_distances(write_study):
    from tradeoff.study.constraints import rules_satisfied

    study = _peaked(write_study, "quadratic", RULE)
    batch = next_batch(study, runs=4, seed=2, draws=128, min_distance=0.3)
    X = np.array([[s.coded["sugar"], s.coded["acid"]] for s in batch.runs])
    assert len(X) == 4
    assert (np.abs(X) <= 1 + 1e-12).all()
    assert rules_satisfied(study, X).all()
    made = study.coded().to_numpy()
    everything = np.vstack([made, X])
    for i in range(len(made), len(everything)):
        gaps = np.linalg.norm(everything[:i] - everything[i], axis=1)
        assert gaps.min() >= 0.3 - 1e-3  # settings are rounded to 1/1000 of the range
    again = next_batch(study, runs=4, seed=2, draws=128, min_distance=0.3)
    assert again.to_dict() == batch.to_dict()


def test_smooth_batch_starts_at_the_peak_and_spreads(write_study):
    study = _peaked(write_study)
    batch = next_batch(study, runs=3, seed=0, draws=128)
    first = batch.runs[0]
    assert first.expected_improvement > 0
    assert abs(first.coded["sugar"] - 0.3) < 0.35 and abs(first.coded["acid"] + 0.2) < 0.35
    d = batch.to_dict()
    assert set(d) >= {"runs", "best_so_far"}
    assert set(d["runs"][0]) >= {"settings", "coded", "expected_improvement", "predicted",
                                 "why"}
    # the best run made so far, by D written out from the published formulas
    # (Derringer & Suich 1980, Derringer 1994: tests/reference_desirability.py)
    D_made = study_D(study, batch_fit(study), study.coded().to_numpy())
    assert d["best_so_far"]["desirability"] == pytest.approx(D_made.max(), rel=1e-5)
    assert d["best_so_far"]["run"] == str(study.runs["run"].iloc[int(D_made.argmax())])


def test_run_sheet_has_the_data_columns_blank_responses_and_suggested(write_study):
    study = _peaked(write_study, "interactions")
    batch = next_batch(study, runs=2, seed=0, draws=64)
    sheet = batch.sheet
    assert list(sheet.columns) == ["run", "sugar", "acid", "liking", "point"]
    assert sheet["liking"].isna().all()
    assert (sheet["point"] == "suggested").all()
    assert list(sheet["run"]) == ["26", "27"]


def test_bad_requests_are_one_line_errors(write_study):
    study = _peaked(write_study, "interactions")
    with pytest.raises(SearchError, match="whole number, 1 or more, found 0"):
        next_batch(study, runs=0)
    no_goal = _peaked(write_study, "interactions").with_goal(
        "liking", type(study.response("liking").goal)())
    with pytest.raises(SearchError, match="no response or factor has a goal"):
        next_batch(no_goal, runs=2)


def test_demo_batch_of_four_is_seeded():
    from tradeoff import load_study

    study = load_study(DEMO)
    a = next_batch(study, runs=4, seed=5, draws=64)
    b = next_batch(study, runs=4, seed=5, draws=64)
    assert len(a.runs) == 4
    assert a.to_dict() == b.to_dict()
    assert all(s.settings["binder"] in ("rice syrup", "date paste") for s in a.runs)



FACTOR_GOAL_ONLY = """\
[study]
name = "a goal on a factor only"
data = "runs.csv"
model = "main"

[[factors]]
name = "sugar"
low = 155.1
high = 255.1
search = [180.1, 255.1]

[[factors]]
name = "fat"
low = 6000.0
high = 7000.0
goal = "target"
lower = 6104.106964
target = 6452.381606
upper = 6796.875181

[[responses]]
name = "hardness"
"""
# settings of a generated study (tests/oracle, kind 'blocks', seed 7), invented
FACTOR_GOAL_RUNS = [(211.6549293, 6833.136866), (223.2036203, 6606.362132),
                    (233.7203874, 6613.330685), (218.2054509, 6129.973742),
                    (208.9300232, 6854.873056), (156.5809241, 6025.543965),
                    (163.1541782, 6699.369176), (213.171257, 6193.875496),
                    (211.2378639, 6823.343556)]


def test_goals_on_factors_only_give_a_batch(write_study):
    # Found by the whole-pipeline oracle: with goals on factors only, a pick whose
    # gain shrank when its settings were rounded looked for the most uncertain goal
    # response to name, among none (a traceback).
    from tradeoff import load_study

    runs = "run,sugar,fat,hardness\n" + "".join(
        f"{i},{s},{f},{5 + 0.01 * s + 0.001 * i}\n"
        for i, (s, f) in enumerate(FACTOR_GOAL_RUNS, start=1))
    study = load_study(write_study(FACTOR_GOAL_ONLY, runs))
    batch = next_batch(study, runs=2, seed=7)
    assert len(batch.runs) == 2
    for s in batch.runs:
        # D is the factor's own target desirability (Derringer & Suich 1980, shapes 1)
        fat = s.settings["fat"]
        d = ((fat - 6104.106964) / (6452.381606 - 6104.106964) if fat <= 6452.381606
             else (6796.875181 - fat) / (6796.875181 - 6452.381606))
        assert s.desirability == pytest.approx(max(d, 0.0), abs=1e-9)
        assert "uncertain" not in s.why


def test_negligible_improvement_says_so_and_goes_where_the_mean_is_least_sure(write_study):
    # Every run made already has D = 1 (liking far above the goal's upper end), so no
    # setting can improve D (EI = 0): each run goes where the variance of the fitted
    # mean is largest. Checked against statsmodels' own standard error of the mean
    # of the same quadratic least-squares fit, over a fine grid of allowed settings.
    import statsmodels.api as sm
    from tradeoff import load_study

    spec = PEAKED_STUDY.format(model="quadratic").replace(
        "lower = 4\nupper = 8", "lower = -100\nupper = -50")
    study = load_study(write_study(spec, peaked_runs()))
    batch = next_batch(study, runs=2, seed=3, draws=64)
    assert [s.purpose for s in batch.runs] == ["learn", "learn"]
    assert batch.summary.startswith("No setting is expected to raise D by 0.001")
    assert "Confirmation runs at the recommended settings" in batch.summary
    assert batch.to_dict()["runs"][0]["purpose"] == "learn"

    def design(X):
        a, b = X[:, 0], X[:, 1]
        return np.column_stack([np.ones(len(X)), a, b, a * b, a * a, b * b])

    made = study.coded().to_numpy()
    ols = sm.OLS(study.runs["liking"].to_numpy(float), design(made)).fit()
    g = np.linspace(-1, 1, 81)
    grid = np.array([(a, b) for a in g for b in g])
    far = np.linalg.norm(grid[:, None, :] - made[None, :, :], axis=2).min(axis=1) >= 0.3
    se_grid = ols.get_prediction(design(grid[far])).se_mean
    first = np.array([[batch.runs[0].coded["sugar"], batch.runs[0].coded["acid"]]])
    se_first = ols.get_prediction(design(first)).se_mean[0]
    # the candidates are 2048 Sobol points, not the grid: within 3 % of the grid's max
    assert se_first >= 0.97 * se_grid.max()


def test_a_batch_holding_a_factor_nearly_alike_says_why():
    from types import SimpleNamespace

    from tradeoff import load_study
    from tradeoff.search.next_batch import _batch_notes

    study = load_study(DEMO)

    def run(protein, glycerol):
        return SimpleNamespace(settings={"protein": protein, "glycerol": glycerol,
                                         "binder": "rice syrup",
                                         "mix_temp": 40.0 + 2.5 * glycerol},
                               purpose="improve")

    out = [run(21.0, 4.0), run(21.4, 7.0), run(21.8, 10.0)]   # protein within 0.8 of 10
    notes = _batch_notes(study, out, 0.3)
    assert len(notes) == 1 and "'protein' (21 to 21.8 %)" in notes[0]
    assert "'glycerol'" not in notes[0] and "'mix_temp'" not in notes[0]
    assert "at least 0.3 coded units" in notes[0]
    assert _batch_notes(study, [run(20, 4), run(25, 7), run(30, 10)], 0.3) == []


def test_a_run_already_made_is_recognised():
    from tradeoff import load_study
    from tradeoff.search.next_batch import made_run_at

    study = load_study(DEMO)
    coded = study.coded()
    row = coded.iloc[6]
    assert made_run_at(study, row.to_dict()) == str(study.runs["run"].iloc[6])
    moved = row.to_dict() | {"protein": row["protein"] + 0.1}
    assert made_run_at(study, moved) is None


def test_demo_batch_sits_on_each_factors_step_and_its_figures_are_its_own():
    # a suggested run is a recipe a lab can make (on each factor's step, as the
    # recommendation is rounded), and its predicted D is D at that recipe,
    # written out from the published formulas (Derringer & Suich 1980,
    # Derringer 1994: tests/reference_desirability.py)
    from tradeoff import load_study

    study = load_study(DEMO)
    batch = next_batch(study, runs=4, seed=5, draws=64)
    fit = batch_fit(study)
    for s in batch.runs:
        x = np.array([[s.coded[f.name] for f in study.factors]])
        for f in study.factors:
            if f.is_categorical:
                continue
            value = s.settings[f.name]
            on_step = abs(value / f.lab_step - round(value / f.lab_step)) < 1e-6
            at_end = min(abs(value - f.low), abs(value - f.high)) < 1e-9
            assert on_step or at_end, (f.name, value, f.lab_step)
            assert value == pytest.approx(f.centre + f.half_range * s.coded[f.name])
        assert s.desirability == pytest.approx(float(study_D(study, fit, x)[0]), abs=1e-9)
        for name, predicted in s.predicted.items():
            assert predicted == pytest.approx(float(fit.models[name].predict(x)[0]), rel=1e-9)
