"""Confirmation runs: reading them from the study file, and the verdicts.

The prediction intervals are checked against statsmodels OLS
(``get_prediction(...).summary_frame(alpha)``, columns obs_ci_lower and
obs_ci_upper), fitted independently to the published Derringer & Suich (1980)
tire tread data (Journal of Quality Technology 12(4), 214-219; the table is in
tests/data/tire_tread_1980.csv, recalled from memory and then checked: a
quadratic fit of it reproduces the published optimum). The interval for the mean of m new runs,
yhat +/- t * sqrt(s^2/m + se(yhat)^2), is the textbook one (Montgomery, Peck &
Vining, Introduction to Linear Regression Analysis, from memory).
"""
from __future__ import annotations

import json
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import stats

import tradeoff
from tradeoff.cli import main
from tradeoff.confirm.check import check_confirmations
from tradeoff.study.confirmations import confirmation_runs
from tradeoff.errors import DataError, StudyError
from tradeoff.study.writer import study_to_dict

DATA = Path(__file__).resolve().parents[1] / "data" / "tire_tread_1980.csv"

TIRE = """\
[study]
name = "tire tread"
data = "tire.csv"
model = "quadratic"

[[factors]]
name = "x1"
low = -1
high = 1

[[factors]]
name = "x2"
low = -1
high = 1

[[factors]]
name = "x3"
low = -1
high = 1

[[responses]]
name = "y1"
goal = "maximize"
lower = 120
upper = 170

[[responses]]
name = "y2"
transform = "log"
"""


def _write(tmp_path, extra: str, files: dict[str, str] | None = None) -> Path:
    shutil.copy(DATA, tmp_path / "tire.csv")
    for name, text in (files or {}).items():
        (tmp_path / name).write_text(text, encoding="utf-8")
    path = tmp_path / "tire.toml"
    path.write_text(TIRE + extra, encoding="utf-8")
    return path


def _statsmodels_interval(x0, response: str, *, log: bool = False, level: float = 0.95):
    """Independent fit: full quadratic OLS in statsmodels, prediction at x0."""
    import statsmodels.formula.api as smf

    runs = pd.read_csv(DATA)
    if log:
        runs[response] = np.log(runs[response])
    formula = (f"{response} ~ x1 + x2 + x3 + I(x1**2) + I(x2**2) + I(x3**2) + x1:x2 + "
               "x1:x3 + x2:x3")
    res = smf.ols(formula, data=runs).fit()
    new = pd.DataFrame([dict(zip(("x1", "x2", "x3"), x0))])
    frame = res.get_prediction(new).summary_frame(alpha=1 - level)
    return res, frame.iloc[0]


def _inline(run, x, measured: dict) -> str:
    settings = ", ".join(f"x{i + 1} = {float(v)!r}" for i, v in enumerate(x))
    values = ", ".join(f"{k} = {json.dumps(v) if isinstance(v, str) else repr(float(v))}"
                       for k, v in measured.items())
    return (f"\n[[confirmations]]\nrun = \"{run}\"\nsettings = {{ {settings} }}\n"
            f"measured = {{ {values} }}\n")


# --------------------------------------------------------------------------
# Verdicts on constructed cases


def test_inside_and_outside_single_runs_against_statsmodels(tmp_path):
    x_in, x_out = (0.0, 0.5, -0.5), (-0.5, 0.0, 0.5)
    _, ref_in = _statsmodels_interval(x_in, "y1")
    _, ref_out = _statsmodels_interval(x_out, "y1")
    half_in = (ref_in["obs_ci_upper"] - ref_in["obs_ci_lower"]) / 2
    half_out = (ref_out["obs_ci_upper"] - ref_out["obs_ci_lower"]) / 2
    inside_value = round(ref_in["mean"] + 0.8 * half_in, 3)      # inside by construction
    outside_value = round(ref_out["mean"] - 1.2 * half_out, 3)   # outside, below
    path = _write(tmp_path, _inline("A", x_in, {"y1": inside_value})
                  + _inline("B", x_out, {"y1": outside_value}))
    check = check_confirmations(tradeoff.load_study(path))
    table = check.table.set_index("runs")
    for run, ref in (("A", ref_in), ("B", ref_out)):
        assert table.loc[run, "predicted"] == pytest.approx(ref["mean"], rel=1e-9)
        assert table.loc[run, "pi_low"] == pytest.approx(ref["obs_ci_lower"], rel=1e-9)
        assert table.loc[run, "pi_high"] == pytest.approx(ref["obs_ci_upper"], rel=1e-9)
    assert bool(table.loc["A", "inside"]) is True
    assert bool(table.loc["B", "inside"]) is False
    verdict = check.verdicts.set_index("response").loc["y1"]
    assert verdict["verdict"] == "not confirmed"
    assert verdict["checked"] == 2 and verdict["inside"] == 1
    assert "below the interval" in verdict["advice"]
    assert "augment the design" in verdict["advice"] and "revisit the model" in \
        verdict["advice"]
    assert check.verdicts.set_index("response").loc["y2", "verdict"] == "not checked"
    assert not check.confirmed


def test_all_inside_is_confirmed(tmp_path):
    x0 = (0.2, -0.3, 0.4)
    _, ref = _statsmodels_interval(x0, "y1")
    path = _write(tmp_path, _inline("C1", x0, {"y1": round(ref["mean"] + 1.0, 2)}))
    check = check_confirmations(tradeoff.load_study(path))
    verdict = check.verdicts.set_index("response").loc["y1"]
    assert verdict["verdict"] == "confirmed" and check.confirmed
    assert "inside its 95% prediction interval" in verdict["advice"]


def test_mean_of_replicates_uses_the_interval_for_m_runs(tmp_path):
    x0 = (0.0, 0.0, -0.8)
    res, ref = _statsmodels_interval(x0, "y1")
    t = stats.t.ppf(0.975, res.df_resid)
    half_1 = (ref["obs_ci_upper"] - ref["obs_ci_lower"]) / 2
    half_2 = t * np.sqrt(res.scale / 2 + ref["mean_se"] ** 2)  # mean of m = 2 new runs
    assert half_2 < half_1
    # A mean inside the one-run interval but outside the two-run interval.
    target = ref["mean"] + (half_1 + half_2) / 2
    a, b = round(target - 3.0, 6), round(target + 3.0, 6)
    path = _write(tmp_path, _inline("R1", x0, {"y1": a}) + _inline("R2", x0, {"y1": b}))
    check = check_confirmations(tradeoff.load_study(path))
    row = check.table.iloc[0]
    assert len(check.table) == 1 and row["m"] == 2 and row["runs"] == "R1, R2"
    assert row["measured"] == pytest.approx((a + b) / 2)
    assert row["pi_high"] - row["predicted"] == pytest.approx(half_2, rel=1e-9)
    assert not row["inside"]


def test_log_scale_interval_is_back_transformed(tmp_path):
    x0 = (0.3, 0.1, -0.2)
    _, ref = _statsmodels_interval(x0, "y2", log=True)
    value = round(float(np.exp(ref["obs_ci_upper"])) * 1.01, 1)  # just above the interval
    path = _write(tmp_path, _inline("L1", x0, {"y2": value}))
    row = check_confirmations(tradeoff.load_study(path)).table.iloc[0]
    assert row["predicted"] == pytest.approx(np.exp(ref["mean"]), rel=1e-9)
    assert row["pi_low"] == pytest.approx(np.exp(ref["obs_ci_lower"]), rel=1e-9)
    assert row["pi_high"] == pytest.approx(np.exp(ref["obs_ci_upper"]), rel=1e-9)
    assert not row["inside"]


def test_settings_outside_the_tested_region_are_flagged(tmp_path):
    # The design's axial runs reach +-1.633 (Derringer & Suich 1980, from memory);
    # 1.8 is beyond.
    path = _write(tmp_path, _inline("F", (1.8, 0, 0), {"y1": 150.0}))
    check = check_confirmations(tradeoff.load_study(path))
    assert bool(check.table.iloc[0]["outside_region"]) is True
    assert "outside the tested region" in check.verdicts.set_index("response").loc[
        "y1", "advice"]


def test_runs_from_a_separate_table(tmp_path):
    table = "run,x1,x2,x3,y1,y2\nT1,0,0,0,140,\nT2,0,0,0,138,1250\nT3,1,-1,0.5,,1400\n"
    path = _write(tmp_path, "\n[[confirmations]]\ndata = \"confirm.csv\"\n",
                  {"confirm.csv": table})
    study = tradeoff.load_study(path)
    runs = confirmation_runs(study)
    assert list(runs["run"]) == ["T1", "T2", "T3"]
    assert list(runs["row"]) == [2, 3, 4]
    assert np.isnan(runs.loc[0, "y2"]) and runs.loc[1, "y2"] == 1250
    check = check_confirmations(study)
    y1 = check.table[check.table["response"] == "y1"]
    assert list(y1["m"]) == [2]  # T1 and T2 share settings; T3 has no y1
    assert set(check.table["response"]) == {"y1", "y2"}


def test_json_round_trip_and_study_file_keeps_confirmations(tmp_path):
    path = _write(tmp_path, _inline("C1", (0, 0, 0), {"y1": 140.0}))
    study = tradeoff.load_study(path)
    check = check_confirmations(study)
    text = json.dumps(check.to_dict())
    assert json.loads(text)["verdicts"][0]["response"] == "y1"
    assert study_to_dict(study)["confirmations"] == study.spec["confirmations"]


# --------------------------------------------------------------------------
# Bad input: one-line messages naming file, row and column


@pytest.mark.parametrize("extra, error, match", [
    ("\n[[confirmations]]\nrun = \"C1\"\nsetings = { x1 = 0 }\n", StudyError,
     r"tire\.toml: \[\[confirmations\]\] number 1: unknown key 'setings' "
     r"\(did you mean 'settings'\?\)"),
    (_inline("C1", (0, 0, 0), {"y1": 1.0}).replace("x2 =", "x4 ="), StudyError,
     r"run 'C1'.*settings: 'x4' is not a factor of this study"),
    ("\n[[confirmations]]\nsettings = { x1 = 0, x2 = 0 }\nmeasured = { y1 = 1 }\n",
     StudyError, r"number 1: settings: no setting for factor 'x3'"),
    (_inline("C1", (0, 0, 0), {"y9": 1.0}), StudyError,
     r"measured: 'y9' is not a response"),
    (_inline("C1", (0, 0, 0), {"y1": "high"}), StudyError,
     r"measured: y1 must be a number, found 'high'"),
    ("\n[[confirmations]]\nrun = \"C1\"\nsettings = { x1 = \"a\", x2 = 0, x3 = 0 }\n"
     "measured = { y1 = 1 }\n", StudyError, r"settings: x1 must be a number"),
    (_inline("C1", (0, 0, 0), {"y1": 1.0}) + _inline("C1", (1, 0, 0), {"y1": 2.0}),
     StudyError, r"confirmation run id 'C1' is used again"),
    ("\n[[confirmations]]\ndata = \"c.csv\"\nrun = \"C1\"\n", StudyError,
     r"give either data = \"file\" or settings and measured, not both"),
    ("\n[[confirmations]]\nrun = \"C1\"\nsettings = { x1 = 0, x2 = 0, x3 = 0 }\n",
     StudyError, r"needs measured = "),
])
def test_bad_confirmations_are_refused_at_load(tmp_path, extra, error, match):
    path = _write(tmp_path, extra)
    with pytest.raises(error, match=match):
        tradeoff.load_study(path)


@pytest.mark.parametrize("table, match", [
    ("run,x1,x2,x3,y1\nT1,0,,0,140\n", r"confirm\.csv, row 2, column 'x2': blank factor"),
    ("run,x1,x2,y1\nT1,0,0,140\n", r"confirm\.csv: no column 'x3' for factor 'x3'"),
    ("run,x1,x2,x3,y1\nT1,0,0,0,abc\n", r"confirm\.csv, row 2, column 'y1'"),
    ("run,x1,x2,x3,y1\nT1,0,0,0,140\nT2,0,0,0,\n", r"confirm\.csv, row 3: no measured"),
    ("run,x1,x2,x3,note\nT1,0,0,0,ok\n", r"confirm\.csv: no column named after a response"),
])
def test_bad_confirmation_tables(tmp_path, table, match):
    path = _write(tmp_path, "\n[[confirmations]]\ndata = \"confirm.csv\"\n",
                  {"confirm.csv": table})
    with pytest.raises(DataError, match=match):
        tradeoff.load_study(path)


def test_categorical_level_is_checked(tmp_path):
    runs = "run,p,binder,h\n1,20,rice,10\n2,30,rice,14\n3,20,date,11\n4,30,date,16\n"
    (tmp_path / "runs.csv").write_text(runs)
    (tmp_path / "s.toml").write_text(
        "[study]\ndata = \"runs.csv\"\nmodel = \"main\"\n[[factors]]\nname = \"p\"\n"
        "low = 20\nhigh = 30\n[[factors]]\nname = \"binder\"\nlevels = [\"rice\", \"date\"]\n"
        "[[responses]]\nname = \"h\"\n[[confirmations]]\nsettings = { p = 25, binder = "
        "\"oat\" }\nmeasured = { h = 12 }\n")
    with pytest.raises(StudyError, match=r"settings: binder = 'oat' is not one of its "
                                         r"levels \['rice', 'date'\]"):
        tradeoff.load_study(tmp_path / "s.toml")


def test_no_confirmations_is_a_clear_error(tmp_path):
    study = tradeoff.load_study(_write(tmp_path, ""))
    with pytest.raises(StudyError, match="lists no confirmation runs"):
        check_confirmations(study)


# --------------------------------------------------------------------------
# Command line


def test_cli_confirm_text_and_json(tmp_path, capsys):
    path = _write(tmp_path, _inline("C1", (0, 0, 0), {"y1": 139.0}))
    assert main(["confirm", str(path)]) == 0
    out = capsys.readouterr().out
    assert "y1" in out and "CONFIRMED" in out
    assert main(["confirm", str(path), "--json"]) == 0
    payload = json.loads(capsys.readouterr().out)
    assert payload["verdicts"][0]["verdict"] == "confirmed"
    import hashlib
    assert payload["provenance"]["study_sha256"] == hashlib.sha256(
        path.read_bytes()).hexdigest()


def test_cli_confirm_without_runs_exits_2(tmp_path, capsys):
    path = _write(tmp_path, "")
    assert main(["confirm", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: ") and "no confirmation runs" in err
    assert len(err.strip().splitlines()) == 1


def test_model_without_error_estimate_is_not_checked(tmp_path):
    # Two runs, one factor, main-effects model: no residual degrees of freedom and
    # too few effects for Lenth's method (it needs several; common practice), so no
    # prediction interval exists and no verdict can be given.
    (tmp_path / "runs.csv").write_text("a,y\n-1,10\n1,14\n")
    (tmp_path / "s.toml").write_text(
        "[study]\ndata = \"runs.csv\"\nmodel = \"main\"\n[[factors]]\nname = \"a\"\n"
        "low = -1\nhigh = 1\n[[responses]]\nname = \"y\"\n[[confirmations]]\n"
        "settings = { a = 0 }\nmeasured = { y = 13 }\n")
    check = check_confirmations(tradeoff.load_study(tmp_path / "s.toml"))
    assert np.isnan(check.table.loc[0, "pi_low"])
    verdict = check.verdicts.iloc[0]
    assert verdict["verdict"] == "not checked"
    assert "no error estimate" in verdict["advice"]
    assert "no interval" in check.text()
