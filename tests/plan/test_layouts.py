"""tradeoff plan --design: central composite, Box-Behnken and optimal plans through
the command line, their evaluation, run sheets and refusals."""
from __future__ import annotations

import json

import numpy as np
import pandas as pd
import pytest

from tradeoff import load_study
from tradeoff.cli import main
from tradeoff.plan.designs import plan_runs

FOUR = """\
[study]
name = "crumb"
data = "runs.csv"
model = "quadratic"
{extra}
[[factors]]
name = "fat"
low = 10
high = 30

[[factors]]
name = "sugar"
low = 5
high = 25

[[factors]]
name = "bake"
low = 10
high = 20

[[factors]]
name = "flour"
levels = ["oat", "rice", "spelt"]
{rules}
[[responses]]
name = "crisp"
"""


def _study(tmp_path, extra="", rules="", numeric_only=False, name="s.toml"):
    text = FOUR.format(extra=extra, rules=rules)
    if numeric_only:
        text = text.replace('[[factors]]\nname = "flour"\nlevels = ["oat", "rice", "spelt"]\n', "")
    path = tmp_path / name
    path.write_text(text)
    return path


def _plan(tmp_path, capsys, study, *extra):
    code = main(["plan", str(study), "--out", str(tmp_path / "p.csv"), "--json", *extra])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out), pd.read_csv(tmp_path / "p.csv")


def test_central_composite_sheet(tmp_path, capsys):
    study = _study(tmp_path, numeric_only=True)
    out, sheet = _plan(tmp_path, capsys, study, "--design", "central-composite")
    # 2^3 factorial + 6 axial + 4 centre (common practice: 4 centre runs by default)
    assert len(sheet) == 18 and out["layout"] == "central-composite"
    assert sheet["point"].value_counts().to_dict() == {"factorial": 8, "axial": 6,
                                                        "centre": 4}
    # rotatable alpha 8^(1/4) = 1.682 (NIST/SEMATECH e-Handbook 5.3.3.6.1, from memory)
    axial = sheet.loc[sheet["point"] == "axial", "fat"]
    assert axial.max() == pytest.approx(20 + 10 * 8 ** 0.25, abs=1e-3)
    assert out["model"]["model"] == "quadratic" and not out["model"]["not_estimable"]
    pv = out["prediction_variance"]
    assert set(pv["spv_quantiles"]) == {"10%", "50%", "90%"}
    assert pv["spv_quantiles"]["10%"] <= pv["spv_quantiles"]["90%"] <= pv["g_max_spv"]
    assert 0 < pv["d_efficiency"] <= 100
    face, sheet = _plan(tmp_path, capsys, study, "--design", "central-composite",
                        "--alpha", "face", "--center", "2", "--blocks", "2")
    assert sheet["fat"].max() == 30 and sheet["block"].unique().tolist() == [1, 2]
    assert (sheet["point"] == "centre").sum() == 4


def test_box_behnken_crossed_with_levels_and_loads_back(tmp_path, capsys):
    study = _study(tmp_path)
    out, sheet = _plan(tmp_path, capsys, study, "--design", "box-behnken")
    # 12 edge + 3 centre runs (Box & Behnken 1960; NIST 5.3.3.6.2) at each of 3 flours
    assert len(sheet) == 45
    assert sheet.groupby("flour").size().to_dict() == {"oat": 15, "rice": 15, "spelt": 15}
    assert set(sheet["point"]) == {"edge", "centre"}
    # the filled-in sheet is the study's data file: a quadratic model with flour fits
    rng = np.random.default_rng(0)
    sheet["crisp"] = (5 + 0.1 * sheet["fat"] + sheet["flour"].map(
        {"oat": 1.0, "rice": -0.5, "spelt": -0.5}) + rng.normal(0, 0.1, len(sheet)))
    sheet.to_csv(tmp_path / "runs.csv", index=False)
    from tradeoff import fit_response

    model = fit_response(load_study(study), "crisp")
    assert "flour[oat]" in model.terms_ and "fat:flour[rice]" in model.terms_


def test_optimal_respects_rules_and_levels(tmp_path, capsys):
    rules = '\n[[constraints]]\nrule = "fat + sugar <= 40"\n'
    study = _study(tmp_path, rules=rules)
    args = ("--design", "optimal", "--runs", "12", "--criterion", "i", "--seed", "2",
            "--model", "fat,sugar,bake,flour,fat:sugar")
    out, sheet = _plan(tmp_path, capsys, study, *args)
    assert len(sheet) == 12 and set(sheet["point"]) == {"optimal"}
    assert (sheet["fat"] + sheet["sugar"] <= 40 + 1e-6).all()
    # the rule binds: an I-optimal plan puts runs on its boundary
    assert np.isclose(sheet["fat"] + sheet["sugar"], 40, atol=1e-3).any()
    assert set(sheet["flour"]) == {"oat", "rice", "spelt"}
    assert sheet["fat"].between(10, 30).all() and sheet["bake"].between(10, 20).all()
    assert not out["model"]["not_estimable"] and out["model"]["parameters"] == 7
    again, sheet2 = _plan(tmp_path, capsys, study, *args)
    assert sheet2.equals(sheet)


def test_optimal_keep_augments_measured_runs(tmp_path, capsys):
    study = _study(tmp_path, numeric_only=True)
    first = plan_runs(load_study(study, with_data=False), center=2)
    runs = first.runs.drop(columns=["std_order", "run_order"])
    runs["crisp"] = np.linspace(1, 2, len(runs))
    runs.to_csv(tmp_path / "runs.csv", index=False)
    out, sheet = _plan(tmp_path, capsys, study, "--design", "optimal", "--runs", "6",
                       "--keep")
    assert out["kept_runs"] == 10
    assert sheet["point"].value_counts().to_dict() == {"kept": 10, "optimal": 6}
    kept = sheet[sheet["point"] == "kept"]
    assert kept["crisp"].tolist() == runs["crisp"].tolist()
    assert sheet.loc[sheet["point"] == "optimal", "run"].astype(str).tolist() == \
        [str(i) for i in range(11, 17)]
    assert not out["model"]["not_estimable"]  # quadratic estimable with the new runs


def test_factorial_spreads_runs_over_levels(tmp_path):
    study = load_study(_study(tmp_path), with_data=False)
    plan = plan_runs(study, center=3)
    # 2^3 over the numeric factors at each of the 3 flours, centre runs spread too
    assert plan.runs.groupby("flour").size().to_dict() == {"oat": 9, "rice": 9, "spelt": 9}
    assert plan.summary()["letters"] == {"A": "fat", "B": "sugar", "C": "bake"}


@pytest.mark.parametrize("extra, message", [
    (["--design", "central-composite", "--alpha", "wide"],
     "--alpha 'wide' is not a distance I know"),
    (["--design", "central-composite", "--alpha", "-2"], "--alpha -2"),
    (["--design", "optimal", "--runs", "10"],
     "ask for at least 18 runs (--runs 18)"),
    (["--design", "optimal"], "needs the number of runs"),
    (["--design", "optimal", "--runs", "20", "--keep"], "--keep keeps the study's"),
    (["--design", "box-behnken", "--blocks", "2"], "1 block(s) as published"),
    (["--design", "box-behnken", "--foldover"], "belong to factorial plans"),
])
def test_refusals_exit_2(tmp_path, capsys, extra, message):
    study = _study(tmp_path).read_text().replace('data = "runs.csv"\n', "")
    (tmp_path / "n.toml").write_text(study)
    code = main(["plan", str(tmp_path / "n.toml"), "--out", str(tmp_path / "p.csv"),
                 *extra])
    err = capsys.readouterr().err
    assert code == 2 and message in err and "Traceback" not in err
    assert err.count("\n") == 1
    assert not (tmp_path / "p.csv").exists()


def test_box_behnken_needs_three_factors_and_rules_need_a_point(tmp_path, capsys):
    text = _study(tmp_path, numeric_only=True).read_text()
    two = text.replace('[[factors]]\nname = "bake"\nlow = 10\nhigh = 20\n', "")
    (tmp_path / "two.toml").write_text(two)
    code = main(["plan", str(tmp_path / "two.toml"), "--design", "box-behnken",
                 "--out", str(tmp_path / "p.csv")])
    err = capsys.readouterr().err
    assert code == 2 and "3 to 7 numeric factors, and this study has 2" in err
    rules = ('\n[[constraints]]\nrule = "fat + sugar <= 12"\n'
             '\n[[constraints]]\nrule = "fat >= 11"\n\n[[constraints]]\nrule = "sugar >= 6"\n')
    study = _study(tmp_path, rules=rules, name="r.toml")
    code = main(["plan", str(study), "--design", "optimal", "--runs", "20",
                 "--out", str(tmp_path / "p.csv")])
    err = capsys.readouterr().err
    assert code == 2 and "no setting inside the factors' ranges meets every rule" in err
    assert "'fat + sugar <= 12'" in err and "'fat >= 11'" in err
    assert not (tmp_path / "p.csv").exists()
