"""The panel ANOVA, least-squares means and Tukey-Kramer pairs against
statsmodels OLS (type II sums of squares) and scipy's studentized range."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tradeoff.model.panel_anova import assessor_performance, attribute_anova, run_groups


def _incomplete(seed=5):
    """Seven runs, nine assessors, each tasting five runs (a generated test panel)."""
    rng = np.random.default_rng(seed)
    runs = [f"P{i}" for i in range(1, 8)]
    level = dict(zip(runs, [40, 55, 47, 62, 50, 41, 58]))
    rows = []
    for j in range(9):
        gen = rng.normal(0, 6)
        for i, r in enumerate(runs):
            if (i + j) % 7 in (5, 6):
                continue
            rows.append({"run": r, "assessor": f"J{j}",
                         "score": float(np.clip(level[r] + gen + rng.normal(0, 5), 0, 100))})
    return pd.DataFrame(rows)


def _replicated(seed=8):
    rng = np.random.default_rng(seed)
    rows = []
    for j in range(6):
        gen = rng.normal(0, 1)
        inter = rng.normal(0, 0.6, 4)
        for s in ("1", "2"):
            for i in range(4):
                rows.append({"run": f"R{i}", "assessor": f"A{j}", "session": s,
                             "score": 5 + 0.8 * i + gen + inter[i] + rng.normal(0, 0.5)})
    return pd.DataFrame(rows)


def test_incomplete_panel_matches_statsmodels_type_ii_and_tukey_kramer():
    # Reference: statsmodels OLS score ~ C(run) + C(assessor), anova_lm(typ=2);
    # Tukey-Kramer with scipy.stats.studentized_range on each pair's own SE of the
    # LS-mean difference from the OLS covariance (Kramer 1956).
    import patsy
    import statsmodels.api as sm
    import statsmodels.formula.api as smf

    frame = _incomplete()
    ours = attribute_anova(frame)
    fit = smf.ols("score ~ C(run) + C(assessor)", data=frame).fit()
    table = sm.stats.anova_lm(fit, typ=2)
    run = ours["anova"]["run"]
    assert run["f"] == pytest.approx(table.loc["C(run)", "F"], rel=1e-9)
    assert run["df"] == table.loc["C(run)", "df"]
    assert run["df_denominator"] == fit.df_resid
    assert run["p"] == pytest.approx(table.loc["C(run)", "PR(>F)"], rel=1e-7)
    assert ours["anova"]["assessor"]["f"] == pytest.approx(
        table.loc["C(assessor)", "F"], rel=1e-9)
    info = fit.model.data.orig_exog.design_info
    assessors = sorted(frame["assessor"].unique())
    runs = list(dict.fromkeys(frame["run"]))
    lvec = {r: np.asarray(patsy.build_design_matrices(
        [info], pd.DataFrame({"run": r, "assessor": assessors, "score": 0.0}))[0]).mean(0)
        for r in runs}
    means = {m["run"]: m for m in ours["means"]}
    for r in runs:
        t = fit.t_test(lvec[r])
        assert means[r]["mean"] == pytest.approx(float(np.squeeze(t.effect)), abs=1e-9)
        assert means[r]["se"] == pytest.approx(float(np.squeeze(t.sd)), abs=1e-9)
    ses = set()
    for p in ours["pairs"]:
        t = fit.t_test(lvec[p["a"]] - lvec[p["b"]])
        diff, se = float(np.squeeze(t.effect)), float(np.squeeze(t.sd))
        ses.add(round(se, 9))
        assert p["diff"] == pytest.approx(diff, abs=1e-9)
        assert p["se"] == pytest.approx(se, abs=1e-9)
        expect = stats.studentized_range.sf(abs(diff) / se * np.sqrt(2), len(runs),
                                            fit.df_resid)
        assert p["p"] == pytest.approx(expect, rel=1e-6)
    assert len(ses) > 1  # incomplete: pairs have their own standard errors (Kramer)


def test_replicated_sessions_test_runs_against_the_interaction():
    # Balanced replicated panel: with assessors random, runs are tested against
    # the run x assessor mean square (Naes, Brockhoff & Tomic 2010, ch. 5);
    # sums of squares from statsmodels OLS score ~ C(run) * C(assessor), type II.
    import statsmodels.api as sm
    import statsmodels.formula.api as smf

    frame = _replicated()
    ours = attribute_anova(frame)
    assert ours["replicated"]
    table = sm.stats.anova_lm(smf.ols("score ~ C(run) * C(assessor)", data=frame).fit(),
                              typ=2)
    ms = table["sum_sq"] / table["df"]
    f_run = ms["C(run)"] / ms["C(run):C(assessor)"]
    assert ours["anova"]["run"]["f"] == pytest.approx(f_run, rel=1e-9)
    assert ours["anova"]["run"]["df_denominator"] == 15
    assert ours["anova"]["run x assessor"]["f"] == pytest.approx(
        table.loc["C(run):C(assessor)", "F"], rel=1e-9)
    # Balanced: SE of a run mean is sqrt(MS_interaction / (assessors x sessions))
    # (common practice for a balanced mixed two-way layout).
    assert ours["means"][0]["se"] == pytest.approx(
        np.sqrt(ms["C(run):C(assessor)"] / 12), rel=1e-9)


def test_groups_never_hold_two_runs_that_differ():
    frame = _incomplete(seed=12)
    res = attribute_anova(frame)
    differ = {frozenset((p["a"], p["b"])) for p in res["pairs"] if p["differ"]}
    covered = set()
    for g in res["groups"]:
        covered |= set(g)
        assert not any(frozenset((a, b)) in differ for a in g for b in g if a != b)
    assert covered == {m["run"] for m in res["means"]}


def test_run_groups_overlap_when_a_middle_run_is_like_both_ends():
    means = [{"run": "A", "mean": 3}, {"run": "B", "mean": 2}, {"run": "C", "mean": 1}]
    pairs = [{"a": "A", "b": "B", "differ": False}, {"a": "A", "b": "C", "differ": True},
             {"a": "B", "b": "C", "differ": False}]
    assert run_groups(means, pairs) == [["A", "B"], ["B", "C"]]


def test_assessor_performance_flags_a_random_scorer():
    frame = _replicated()
    rng = np.random.default_rng(1)
    noisy = frame["assessor"] == "A5"
    frame.loc[noisy, "score"] = rng.uniform(3, 9, noisy.sum())
    perf = {a["assessor"]: a for a in assessor_performance(frame)}
    assert perf["A5"]["retrain"]
    # own F for runs: scipy's one-way ANOVA on that assessor's scores
    g = frame[frame["assessor"] == "A0"]
    f, p = stats.f_oneway(*[s["score"] for _, s in g.groupby("run")])
    assert perf["A0"]["f_runs"] == pytest.approx(f, rel=1e-9)
    assert perf["A0"]["p_runs"] == pytest.approx(p, rel=1e-9)
