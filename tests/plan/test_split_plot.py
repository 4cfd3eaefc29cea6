"""Plans with hard-to-change factors: split-plot factorials, optimal split-plot
designs, run sheets grouped by whole plot, and the judging under a variance ratio."""
from __future__ import annotations

import itertools
import json

import numpy as np
import pandas as pd
import pytest

from tradeoff.cli import main
from tradeoff.derive.load import load_study
from tradeoff.errors import PlanError
from tradeoff.model.study_fit import fit_response
from tradeoff.model.terms import model_matrix, model_terms
from tradeoff.model.wholeplot import WholePlotModel
from tradeoff.plan.region import Region
from tradeoff.plan.split_optimal import split_plot_exchange
from tradeoff.plan.split_plot import split_plot_evaluation, split_plot_factorial

STUDY = """\
[study]
name = "oven loads"
data = "runs.csv"
whole_plot = "load"
model = "{model}"

[[factors]]
name = "oven"
low = 180
high = 220
hard_to_change = true

[[factors]]
name = "steam"
levels = ["off", "on"]
hard_to_change = {steam_hard}

[[factors]]
name = "sugar"
low = 5
high = 15

[[factors]]
name = "fat"
low = 2
high = 8

[[factors]]
name = "salt"
low = 0.5
high = 1.5

[[responses]]
name = "volume"
goal = "maximize"
lower = 400
upper = 600
"""


@pytest.fixture
def study_file(tmp_path):
    def write(model="interactions", steam_hard="true", extra=""):
        path = tmp_path / "study.toml"
        path.write_text(STUDY.format(model=model, steam_hard=steam_hard) + extra)
        return path
    return write


def _grouped(table: pd.DataFrame, column: str) -> bool:
    """Each whole plot's runs are one contiguous stretch of the sheet."""
    labels = table[column].tolist()
    seen, last = set(), None
    for lab in labels:
        if lab != last and lab in seen:
            return False
        seen.add(lab)
        last = lab
    return True


def test_factorial_whole_plots_are_a_factorial_of_the_hard_factors(study_file):
    study = load_study(study_file(), with_data=False)
    plan, wp = split_plot_factorial(study, replicates=2, seed=4)
    runs = plan.runs
    # 2 x 2 whole-plot settings, twice; the 3 easy factors: resolution V -> full 2^3
    assert wp["whole_plots"] == 8 and runs["load"].nunique() == 8
    assert len(runs) == 8 * 8
    assert _grouped(runs, "load")
    for _, part in runs.groupby("load"):
        assert part["oven"].nunique() == 1 and part["steam"].nunique() == 1
        # the easy factors' full factorial inside every whole plot
        assert len(part[["sugar", "fat", "salt"]].drop_duplicates()) == 8
    settings = runs.groupby("load")[["oven", "steam"]].first().value_counts()
    assert settings.tolist() == [2, 2, 2, 2]
    again, _ = split_plot_factorial(study, replicates=2, seed=4)
    assert again.runs.equals(runs)  # same seed, same sheet
    other, _ = split_plot_factorial(study, replicates=2, seed=5)
    assert not other.runs["load"].equals(runs["load"]) or not other.runs.equals(runs)


def test_fractions_keep_generators_within_their_kind(study_file):
    # 3 hard factors, 4 whole plots per replicate: C = AB among the hard factors;
    # the easy factors in 4 runs: their own generator
    text = STUDY.format(model="main", steam_hard="true").replace(
        'name = "sugar"\nlow = 5\nhigh = 15\n', 'name = "sugar"\nlow = 5\nhigh = 15\n'
        'hard_to_change = true\n')
    path = study_file()
    path.write_text(text)
    study = load_study(path, with_data=False)
    plan, wp = split_plot_factorial(study, whole_plots=4, replicates=2, seed=1)
    hard = {"oven", "steam", "sugar"}
    assert wp["generators"] and all(set(g.replace("=", ":").replace(" ", "").split(":"))
                                    <= hard for g in wp["generators"])
    assert plan.runs["load"].nunique() == 8 and len(plan.runs) == 8 * 4
    for _, part in plan.runs.groupby("load"):
        assert part[["oven", "steam", "sugar"]].drop_duplicates().shape[0] == 1
    # two hard factors, the three easy ones in 4 runs: a generator among them only
    study = load_study(study_file(), with_data=False)
    plan, _ = split_plot_factorial(study, runs=4, replicates=2, seed=1)
    names = plan.design_names
    assert set(names) == {"sugar", "fat", "salt"}
    gens = plan.design.generator_names(list(names))
    assert gens and all(set(g.replace("=", ":").replace(" ", "").split(":"))
                        <= {"sugar", "fat", "salt"} for g in gens)
    assert plan.runs["load"].nunique() == 8 and len(plan.runs) == 32


def test_standard_errors_under_the_ratio_equal_the_split_plot_formulas(study_file):
    # balanced split plot (common practice; Goos 2002, The Optimal Design of Blocked
    # and Split-Plot Experiments, from memory): a +-1 whole-plot factor over G whole
    # plots of k runs has Var(b) = s^2 (1/k + r) / G; a +-1 factor balanced within
    # every whole plot has Var(b) = s^2 / N
    study = load_study(study_file(model="main"), with_data=False)
    plan, _ = split_plot_factorial(study, replicates=3, seed=2)
    G, N = 12, 96
    k = N // G
    for r in (0.5, 1.0, 4.0):
        ev = split_plot_evaluation(study, plan.coded.to_numpy(float),
                                   plan.runs["load"].to_numpy(), "main", ratio=r)
        assert ev["terms"]["oven"]["stratum"] == "whole plot"
        assert ev["terms"]["oven"]["std_error"] == pytest.approx(
            np.sqrt((1 / k + r) / G), abs=1e-6)
        assert ev["terms"]["sugar"]["stratum"] == "within"
        assert ev["terms"]["sugar"]["std_error"] == pytest.approx(np.sqrt(1 / N), abs=1e-6)
        # whole-plot error: 12 plots - intercept - oven - steam; within: 96 - 12 - 3
        assert ev["error_df"] == {"whole plot": 9, "within": 81}


def _main_matrix(k):
    terms, _ = model_terms("main", [f"x{i}" for i in range(k)])
    return lambda X: model_matrix(X, terms)


def _dense_logdet(F, plots, ratio):
    """log det(X'V^-1 X) with V = I + r Z Z' written out densely."""
    Z = (np.asarray(plots)[:, None] == np.unique(plots)[None, :]).astype(float)
    V = np.eye(len(F)) + ratio * Z @ Z.T
    return np.linalg.slogdet(F.T @ np.linalg.solve(V, F))[1]


def test_optimal_reaches_the_orthogonal_split_plot_for_main_effects():
    # one hard and one easy factor, 4 whole plots of 2 runs, main effects: the
    # orthogonal split plot (whole-plot factor +-1 in two plots each, the easy
    # factor -1 and +1 in every plot) is D-optimal (Goos & Vandebroek 2003, from
    # memory); its log det is written out here
    region = Region(lower=-np.ones(2), upper=np.ones(2), levels=(None, None))
    f = _main_matrix(2)
    X, plots, value, _ = split_plot_exchange(f, region, [0], 4, 8, ratio=1.0, seed=3)
    best = np.array([[a, b] for a in (-1, -1, 1, 1) for b in (-1, 1)], dtype=float)
    want = _dense_logdet(f(best), np.repeat(np.arange(4), 2), 1.0)
    assert value == pytest.approx(_dense_logdet(f(X), plots, 1.0), rel=1e-9)
    assert value == pytest.approx(want, abs=1e-6)
    for p in range(4):  # the hard factor is one setting per whole plot
        assert np.ptp(X[plots == p, 0]) == 0


def test_optimal_respects_rules_and_beats_random_split_plots():
    # rule x0 + x1 <= 1 (coded); quadratic in 3 factors, 2 hard
    region = Region(lower=-np.ones(3), upper=np.ones(3), levels=(None,) * 3,
                    A=np.array([[1.0, 1.0, 0.0]]), b=np.array([1.0]))
    terms, _ = model_terms("interactions", ["a", "b", "c"])
    f = lambda X: model_matrix(X, terms)  # noqa: E731
    X, plots, value, _ = split_plot_exchange(f, region, [0, 1], 6, 18, ratio=2.0, seed=0)
    assert region.feasible(X).all()
    for p in range(6):
        assert np.ptp(X[plots == p][:, [0, 1]], axis=0).max() == 0
    rng = np.random.default_rng(0)
    for _ in range(20):
        R = region.sample(18, rng)
        for p in range(6):
            idx = np.flatnonzero(plots == p)
            R[idx[:, None], [0, 1]] = R[idx[0], [0, 1]]
        R = R[region.feasible(R)] if region.feasible(R).all() else None
        if R is not None:
            assert _dense_logdet(f(R), plots, 2.0) < value


def test_cli_plans_round_trip_through_a_whole_plot_fit(study_file, tmp_path, capsys):
    path = study_file(model="main", steam_hard="false")
    out = tmp_path / "runs.csv"
    assert main(["plan", str(path), "--design", "optimal", "--whole-plots", "6",
                 "--runs", "24", "--ratio", "1.5", "--out", str(out), "--json"]) == 0
    report = json.loads(capsys.readouterr().out)
    split = report["split_plot"]
    assert split["whole_plots"] == 6 and split["ratio"] == 1.5
    assert split["terms"]["oven"]["stratum"] == "whole plot"
    assert split["terms"]["sugar"]["stratum"] == "within"
    sheet = pd.read_csv(out)
    assert _grouped(sheet, "load")
    # fill in simulated measurements (a batch shift per load) and fit them back
    rng = np.random.default_rng(7)
    shift = {p: rng.normal(0, 3) for p in sheet["load"].unique()}
    sheet["volume"] = (500 + 0.5 * (sheet["oven"] - 200) + 2 * sheet["sugar"]
                       + sheet["load"].map(shift) + rng.normal(0, 1, len(sheet)))
    sheet.to_csv(out, index=False)
    model = fit_response(load_study(path), "volume")
    assert isinstance(model, WholePlotModel)
    assert model.whole_plots_["count"] == 6
    # the text says how to make the groups
    assert main(["plan", str(path), "--replicates", "2", "--out",
                 str(tmp_path / "plan2.csv")]) == 0
    text = capsys.readouterr().out
    assert "set oven once per group" in text


@pytest.mark.parametrize("args,message", [
    (["--ratio", "0"], "--ratio: expected a number above 0"),
    (["--ratio", "x"], "--ratio: expected a number above 0"),
    (["--design", "optimal", "--runs", "12"], "needs the number of whole plots"),
    (["--design", "optimal", "--whole-plots", "6", "--runs", "8"],
     "at least 2 runs per whole plot"),
    (["--design", "box-behnken"], "does not group runs into whole plots"),
    (["--blocks", "2"], "--blocks cannot be used with hard-to-change factors"),
])
def test_cli_refuses_bad_options_in_one_line(study_file, tmp_path, capsys, args, message):
    path = study_file()
    out = tmp_path / "plan.csv"
    assert main(["plan", str(path), "--out", str(out)] + args) == 2
    err = capsys.readouterr().err.strip()
    assert message in err and len(err.splitlines()) == 1 and "Traceback" not in err
    assert not out.exists()


def test_whole_plot_options_need_hard_to_change_factors(study_file, tmp_path, capsys):
    path = study_file(steam_hard="false")
    text = path.read_text().replace("hard_to_change = true\n", "")
    path.write_text(text)
    assert main(["plan", str(path), "--ratio", "2", "--out", str(tmp_path / "p.csv")]) == 2
    assert "no factor is marked hard_to_change" in capsys.readouterr().err
    with pytest.raises(PlanError, match="every factor is hard to change"):
        study = load_study(study_file(), with_data=False)
        from dataclasses import replace
        split_plot_factorial(replace(study, factors=tuple(
            replace(f, hard_to_change=True) for f in study.factors)))
