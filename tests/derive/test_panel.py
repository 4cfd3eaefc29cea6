"""Panel run means and assessor-adjusted means against statsmodels OLS."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest
from scipy import stats

from tradeoff.errors import DataError
from tradeoff.study.intake import read_table
from tradeoff.derive.panel import (adjusted_means, assessor_agreement, read_panel,
                            run_means)


def _incomplete_panel(seed=3):
    """Eight runs, six assessors, each assessor tasting five runs (incomplete blocks)."""
    rng = np.random.default_rng(seed)
    runs = [f"R{i}" for i in range(1, 9)]
    assessors = [f"A{j}" for j in range(1, 7)]
    run_level = dict(zip(runs, rng.normal(6, 1, 8)))
    generosity = dict(zip(assessors, [1.5, 0, -0.7, 0.3, -1.0, 0.2]))
    rows = []
    for j, a in enumerate(assessors):
        for i, r in enumerate(runs):
            if (i + j) % 8 in (5, 6, 7):  # each assessor skips three runs
                continue
            rows.append({"run": r, "assessor": a,
                         "score": float(np.clip(np.rint(run_level[r] + generosity[a]
                                                        + rng.normal(0, 0.7)), 1, 9))})
    return pd.DataFrame(rows)


def _statsmodels_lsmeans(frame):
    """LS-means and SEs via statsmodels OLS with C(run) + C(assessor) and t_test."""
    import patsy
    import statsmodels.formula.api as smf

    res = smf.ols("score ~ C(run) + C(assessor)", data=frame).fit()
    info = res.model.data.orig_exog.design_info
    assessors = sorted(frame["assessor"].unique())
    est, se = {}, {}
    for run in frame["run"].unique():
        grid = pd.DataFrame({"run": run, "assessor": assessors, "score": 0.0})
        lvec = np.asarray(patsy.build_design_matrices([info], grid)[0]).mean(axis=0)
        test = res.t_test(lvec)
        est[run] = float(np.squeeze(test.effect))
        se[run] = float(np.squeeze(test.sd))
    return est, se, int(res.df_resid)


def test_adjusted_means_match_statsmodels_ols_incomplete_blocks():
    # Reference library: statsmodels OLS, score ~ C(run) + C(assessor); the
    # least-squares mean of a run is the fitted score averaged over assessors.
    frame = _incomplete_panel()
    ours = adjusted_means(frame["run"], frame["assessor"], frame["score"]).set_index("run")
    est, se, df = _statsmodels_lsmeans(frame)
    for run in est:
        assert ours.loc[run, "adjusted_mean"] == pytest.approx(est[run], abs=1e-8)
        assert ours.loc[run, "se"] == pytest.approx(se[run], abs=1e-8)
    assert (ours["df"] == df).all()


def test_adjusted_means_match_statsmodels_with_blank_scores():
    frame = _incomplete_panel(seed=11)
    frame.loc[[2, 9], "score"] = np.nan  # blank cells are ignored
    ours = adjusted_means(frame["run"], frame["assessor"], frame["score"]).set_index("run")
    est, se, _ = _statsmodels_lsmeans(frame.dropna())
    for run in est:
        assert ours.loc[run, "adjusted_mean"] == pytest.approx(est[run], abs=1e-8)
        assert ours.loc[run, "se"] == pytest.approx(se[run], abs=1e-8)


def test_generous_assessor_does_not_bias_runs_they_tasted():
    # Noise-free additive scores: the adjusted means recover each run's level
    # plus the average generosity exactly, while plain means are pulled by who
    # tasted what (common practice: adjust for assessor level).
    levels = {"R1": 5.0, "R2": 6.0, "R3": 7.0, "R4": 6.5}
    gen = {"A1": 2.0, "A2": 0.0, "A3": -1.0}
    tasted = {"A1": ["R1", "R2"], "A2": ["R1", "R2", "R3", "R4"], "A3": ["R3", "R4", "R1"]}
    rows = [(r, a, levels[r] + gen[a]) for a, rs in tasted.items() for r in rs]
    run, assessor, score = map(list, zip(*rows))
    ours = adjusted_means(run, assessor, score).set_index("run")
    mean_gen = np.mean(list(gen.values()))
    for r, v in levels.items():
        assert ours.loc[r, "adjusted_mean"] == pytest.approx(v + mean_gen, abs=1e-10)
    plain = run_means(run, score).set_index("run")
    assert plain.loc["R2", "mean"] - plain.loc["R3", "mean"] > 0  # biased order
    assert ours.loc["R2", "adjusted_mean"] < ours.loc["R3", "adjusted_mean"]
    assert ours["se"].isna().all() or (ours["se"] < 1e-6).all()


def test_run_means_and_standard_errors_match_scipy():
    frame = _incomplete_panel()
    ours = run_means(frame["run"], frame["score"]).set_index("run")
    for run, g in frame.groupby("run"):
        assert ours.loc[run, "mean"] == pytest.approx(g["score"].mean(), abs=1e-12)
        # scipy.stats.sem: sample standard deviation / sqrt(n)
        assert ours.loc[run, "se"] == pytest.approx(stats.sem(g["score"]), abs=1e-12)
        assert ours.loc[run, "n_scores"] == len(g)


def test_disconnected_panel_is_refused():
    run = ["R1", "R2", "R1", "R2", "R3", "R4", "R3", "R4"]
    assessor = ["A1", "A1", "A2", "A2", "A3", "A3", "A4", "A4"]
    with pytest.raises(DataError, match="splits into groups of assessors who tasted "
                                        "no run in common"):
        adjusted_means(run, assessor, [5, 6, 5, 7, 4, 6, 5, 6])


def test_assessor_agreement_flags_a_random_assessor():
    rng = np.random.default_rng(5)
    runs = [f"R{i}" for i in range(12)]
    level = np.linspace(3, 8, 12)
    rows = []
    for a in ["A1", "A2", "A3", "A4", "A5"]:
        for r, v in zip(runs, level):
            score = v + rng.normal(0, 0.5) if a != "A5" else rng.uniform(1, 9)
            rows.append((r, a, score + (1.0 if a == "A2" else 0.0)))
    frame = pd.DataFrame(rows, columns=["run", "assessor", "score"])
    agree = assessor_agreement(frame["run"], frame["assessor"],
                               frame["score"]).set_index("assessor")
    # Independent check: Pearson correlation (scipy) with leave-one-out run means.
    for a in ["A1", "A5"]:
        own = frame[frame.assessor == a].set_index("run")["score"]
        rest = frame[frame.assessor != a].groupby("run")["score"].mean()
        ref = stats.pearsonr(own.loc[runs], rest.loc[runs])[0]
        assert agree.loc[a, "correlation"] == pytest.approx(ref, abs=1e-10)
    assert agree.loc["A1", "correlation"] > 0.75
    assert agree.loc["A5", "correlation"] < 0.5
    # complete panel: offset = own mean - the others' mean; A2 scores 1 point high
    assert agree.loc["A2", "offset"] == pytest.approx(
        frame[frame.assessor == "A2"]["score"].mean()
        - frame[frame.assessor != "A2"]["score"].mean(), abs=1e-10)
    assert agree.loc["A2", "offset"] > 0.5


GOOD = "run,assessor,attribute,score\nR1,A1,liking,7\nR2,A1,liking,5\nR1,A2,liking,6\n"


def _table(tmp_path, text):
    path = tmp_path / "panel.csv"
    path.write_text(text)
    return read_table(path)


def test_read_panel_tidy(tmp_path):
    frame = read_panel(_table(tmp_path, GOOD), scale=(1, 9), run_ids=["R1", "R2"])
    assert list(frame.columns) == ["row", "run", "assessor", "attribute", "session",
                                   "score"]
    assert list(frame["score"]) == [7, 5, 6]


def test_read_panel_session_column_allows_repeat_tastings(tmp_path):
    text = "run,assessor,attribute,score,session\nR1,A1,liking,7,1\nR1,A1,liking,6,2\n"
    frame = read_panel(_table(tmp_path, text), scale=(1, 9))
    assert len(frame) == 2


@pytest.mark.parametrize("text, pattern", [
    (GOOD + "R2,A2,liking,10\n",
     r"panel\.csv, row 5, column 'score': score 10 is outside the scale 1 to 9"),
    (GOOD + "R2,A2,liking,0\n",
     r"panel\.csv, row 5, column 'score': score 0 is outside the scale 1 to 9"),
    (GOOD + "R2,A2,liking,good\n",
     r"panel\.csv, row 5, column 'score': expected a number, found 'good'"),
    (GOOD + "R7,A2,liking,5\n",
     r"panel\.csv, row 5, column 'run': run 'R7' is not in the runs table"),
    (GOOD + "R1,A1,liking,8\n",
     r"panel\.csv, row 5, column 'assessor': assessor 'A1' scored 'liking' of run "
     r"'R1' again \(first at row 2\)"),
    (GOOD + "R2,,liking,5\n", r"panel\.csv, row 5, column 'assessor': blank assessor"),
    ("run,judge,attribute,score\nR1,A1,liking,5\n",
     r"panel\.csv: no column 'assessor' in the panel table"),
])
def test_read_panel_bad_input(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern):
        read_panel(_table(tmp_path, text), scale=(1, 9), run_ids=["R1", "R2"])
