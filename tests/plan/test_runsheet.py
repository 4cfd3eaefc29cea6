"""Run sheets and the plan command: write, fill in, load back, fit."""
from __future__ import annotations

import json
import shutil

import numpy as np
import pandas as pd
import pytest

from tradeoff import PlanError, load_study
from tradeoff.cli import main
from tradeoff.plan.designs import plan_runs
from tradeoff.plan.runsheet import run_sheet, write_run_sheet

from conftest import DEMO


@pytest.fixture
def demo_copy(tmp_path):
    """The demo study file alone (its data file not there yet)."""
    path = tmp_path / "snack_bar.toml"
    shutil.copy(DEMO, path)
    return path


def _six(tmp_path):
    text = '[study]\nname = "six"\ndata = "runs.csv"\n' + "".join(
        f'[[factors]]\nname = "{c}"\nlow = 0\nhigh = 10\n' for c in "abcdef") + \
        '[[responses]]\nname = "y"\n'
    path = tmp_path / "six.toml"
    path.write_text(text, encoding="utf-8")
    return path


@pytest.mark.parametrize("suffix", [".csv", ".xlsx"])
def test_round_trip_plan_fill_load_fit(demo_copy, suffix):
    """Plan, fill in responses from a known model, load the sheet unchanged as
    the study's data file, fit: the coefficients come back (numpy least
    squares on the plan's coded matrix as the independent check)."""
    from tradeoff.model.study_fit import fit_study

    study = load_study(demo_copy, with_data=False)
    plan = plan_runs(study, center=4, seed=7)
    sheet = run_sheet(plan, study)
    assert list(sheet.columns[:5]) == ["run", "std_order", "run_order", "block", "point"]
    assert sheet["hardness_fresh"].isna().all()
    out = demo_copy.parent / f"snack_bar_runs{suffix}"
    write_run_sheet(sheet, out, study=study)
    assert [p.name for p in demo_copy.parent.iterdir() if p.name.startswith(".")] == []

    filled = pd.read_csv(out) if suffix == ".csv" else pd.read_excel(out)
    X = plan.coded.to_numpy()
    rng = np.random.default_rng(3)
    truth = {}
    for name in study.response_names:
        beta = rng.normal(size=5)
        truth[name] = beta
        # intercept, protein, glycerol, binder, protein:glycerol; no noise
        filled[name] = (beta[0] + X[:, 0] * beta[1] + X[:, 1] * beta[2]
                        + X[:, 2] * beta[3] + X[:, 0] * X[:, 1] * beta[4])
    if suffix == ".csv":
        filled.to_csv(out, index=False)
    else:
        filled.to_excel(out, index=False)
    text = demo_copy.read_text().replace('data = "snack_bar_runs.csv"',
                                         f'data = "snack_bar_runs{suffix}"')
    demo_copy.write_text(text)
    loaded = load_study(demo_copy)
    assert len(loaded.runs) == 20
    assert loaded.runs["run"].tolist() == [str(i) for i in range(1, 21)]
    fit = fit_study(loaded)
    assert not fit.skipped
    for name, beta in truth.items():
        coef = fit.models[name].report()["coefficients"]
        assert coef["protein"] == pytest.approx(beta[1], abs=1e-9)
        assert coef["protein:glycerol"] == pytest.approx(beta[4], abs=1e-9)
        assert coef["mix_temp"] == pytest.approx(0.0, abs=1e-9)
        # independent check: numpy least squares on the plan's own coded runs
        y = loaded.runs[name].to_numpy()
        M = np.column_stack([np.ones(20), X, X[:, 0] * X[:, 1]])
        ls = np.linalg.lstsq(M, y, rcond=None)[0]
        assert coef["binder"] == pytest.approx(ls[3], abs=1e-9)


def test_refuses_to_overwrite_inputs(tmp_path, demo_copy):
    study = load_study(demo_copy, with_data=False)
    sheet = run_sheet(plan_runs(study), study)
    with pytest.raises(PlanError, match=r"snack_bar.toml is the study file itself"):
        write_run_sheet(sheet, demo_copy, study=study)
    data = demo_copy.parent / "snack_bar_runs.csv"
    data.write_text("run\n1\n")
    with pytest.raises(PlanError, match=r"is the study's data file, which already exists"):
        write_run_sheet(sheet, data, study=study)
    with pytest.raises(PlanError, match=r"written as .csv or .xlsx"):
        write_run_sheet(sheet, tmp_path / "plan.txt", study=study)
    measured = tmp_path / "old_plan.csv"
    measured.write_text("run,protein,liking\n1,20,7.5\n")
    with pytest.raises(PlanError, match=r"already holds measurements in column 'liking'"):
        write_run_sheet(sheet, measured, study=study)
    assert measured.read_text() == "run,protein,liking\n1,20,7.5\n"
    # A fresh (unfilled) sheet may be replaced
    empty = tmp_path / "plan.csv"
    write_run_sheet(sheet, empty, study=study)
    write_run_sheet(sheet, empty, study=study)


def test_cli_json_issue_example(tmp_path, capsys):
    study = _six(tmp_path)
    code = main(["plan", str(study), "--runs", "16", "--out", str(tmp_path / "p.csv"),
                 "--json"])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert out["runs"] == 16 and out["resolution"] == 4
    assert out["generators"] == ["E = ABC", "F = BCD"]
    assert out["aliases"]["a:b"] == ["c:e"]
    assert out["letters"]["E"] == "e"
    assert len(pd.read_csv(tmp_path / "p.csv")) == 16


def test_cli_text_and_seed(tmp_path, capsys, demo_copy):
    args = ["plan", str(demo_copy), "--runs", "8", "--center", "4", "--seed", "5",
            "--effect", "3", "--sd", "1.5"]
    assert main(args + ["--out", str(tmp_path / "a.csv")]) == 0
    text = capsys.readouterr().out
    assert "Resolution IV" in text and "D = ABC   (mix_temp = protein:glycerol:binder)" in text
    assert "protein:glycerol = binder:mix_temp" in text
    assert main(args + ["--out", str(tmp_path / "b.xlsx")]) == 0
    a = pd.read_csv(tmp_path / "a.csv")
    b = pd.read_excel(tmp_path / "b.xlsx")
    assert a["std_order"].tolist() == b["std_order"].tolist()


@pytest.mark.parametrize("extra, message", [
    (["--runs", "12"], "12 runs is not possible"),
    (["--runs", "16", "--resolution", "5"], "resolution V cannot be reached"),
    (["--runs", "16", "--foldover"], "mirror image is the same runs"),
    (["--augment", "face"], "file not found"),
    (["--augment", "face", "--runs", "16"], "--runs cannot be used with it"),
    (["--blocks", "5"], "5 blocks is not possible"),
])
def test_cli_errors_exit_2(tmp_path, capsys, extra, message):
    study = _six(tmp_path)
    code = main(["plan", str(study), "--out", str(tmp_path / "p.csv")] + extra)
    err = capsys.readouterr().err
    assert code == 2
    assert err.startswith("error: ") and message in err and "Traceback" not in err
    assert err.count("\n") == 1


def test_cli_augment_demo(tmp_path, capsys):
    code = main(["plan", str(DEMO), "--augment", "rotatable", "--json",
                 "--out", str(tmp_path / "extra.csv")])
    assert code == 0
    out = json.loads(capsys.readouterr().out)
    assert out["existing_runs"] == 20 and out["axial_runs"] == 12
    assert out["alpha"] == pytest.approx(8 ** 0.25)
    assert out["model"]["model"] == "quadratic" and not out["model"]["not_estimable"]
    extra = pd.read_csv(tmp_path / "extra.csv")
    assert extra["block"].unique().tolist() == [2]
    assert extra["run"].iloc[0].startswith("R")
