"""Derived responses: study-file keys, merging into runs, notes, demo reduction."""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest
from scipy import stats

from tradeoff.derive.options import DERIVED_COLUMNS
from tradeoff.derive.derived import derivation_table, describe_derivation
from tradeoff.errors import DataError, StudyError
from tradeoff.cautions import SHELF_LIFE_CAUTION
from tradeoff.derive.load import load_study
from tradeoff.study.writer import study_to_dict
from tradeoff.report.summary import study_summary, summary_text

DEMO = Path(__file__).resolve().parents[2] / "demo_data"

RUNS = "run,protein\nR1,20\nR2,30\nR3,20\nR4,30\n"
# R3 lacks week 8 (interpolated at 8), R4 stops at week 2 (too few points to fit).
STORAGE = """run,week,property,value
R1,0,hardness,10
R1,4,hardness,12
R1,8,hardness,14
R1,12,hardness,16
R2,0,hardness,20
R2,4,hardness,24
R2,8,hardness,28
R2,12,hardness,32
R3,0,hardness,15
R3,4,hardness,16
R3,12,hardness,20
R4,0,hardness,18
R4,2,hardness,19
"""
PANEL = """run,assessor,attribute,score
R1,A1,liking,7
R2,A1,liking,5
R3,A1,liking,6
R1,A2,liking,8
R2,A2,liking,6
R4,A2,liking,7
R1,A3,liking,6
R3,A3,liking,5
R4,A3,liking,
"""
HEAD = """[study]
data = "runs.csv"
model = "main"
[storage]
data = "storage.csv"
time = "week"
time_unit = "weeks"
[panel]
data = "panel.csv"
scale = [1, 9]
[[factors]]
name = "protein"
low = 20
high = 30
"""


def _study(tmp_path, responses, head=HEAD, storage=STORAGE, panel=PANEL, **kw):
    (tmp_path / "runs.csv").write_text(RUNS)
    (tmp_path / "storage.csv").write_text(storage)
    (tmp_path / "panel.csv").write_text(panel)
    path = tmp_path / "study.toml"
    path.write_text(head + responses)
    return path


def _load(tmp_path, responses, **kw):
    return load_study(_study(tmp_path, responses, **kw))


def _col(study, name):
    return study.runs.set_index("run")[name]


def test_value_at_measured_interpolated_and_left_out(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "h8"
derive = "value_at"
property = "hardness"
at = 8
""")
    h8 = _col(study, "h8")
    assert h8["R1"] == 14 and h8["R2"] == 28
    assert h8["R3"] == pytest.approx(16 + (20 - 16) * (8 - 4) / (12 - 4))  # by hand: 18
    assert np.isnan(h8["R4"])
    notes = "\n".join(study.notes)
    assert "interpolated (no measurement at week 8): run(s) R3 (between 4 and 12)" in notes
    assert "'h8': run R4 left out: week 8 is after its last measurement (week 2)" in notes
    assert "storage 'hardness': run R3 has no row at week 8" in notes
    assert "storage 'hardness': run R4 has no row at week 4, 8, 12" in notes
    assert "run R1 has no row" not in notes  # week 2 is off the usual schedule
    assert "response 'h8' is derived (3 of 4 runs)" in notes


def test_extrapolation_only_with_a_flag(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "h12"
derive = "value_at"
property = "hardness"
at = 12
extrapolate = true
min_points = 2
""")
    h12 = _col(study, "h12")
    # R4: zero-order line through (0, 18) and (2, 19) gives 18 + 0.5 * 12 = 24
    assert h12["R4"] == pytest.approx(24.0)
    assert any("extrapolated to week 12" in n and "R4" in n for n in study.notes)
    table = derivation_table(study, "h12")
    assert list(table.columns) == DERIVED_COLUMNS
    assert table.set_index("run").loc["R4", "flag"].startswith("extrapolated")


def test_change_absolute_and_relative(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "gain"
derive = "change"
property = "hardness"
at = 12
[[responses]]
name = "gain_pct"
derive = "change"
property = "hardness"
at = 12
from = 4
relative = true
""")
    gain, pct = _col(study, "gain"), _col(study, "gain_pct")
    assert gain["R1"] == 6 and gain["R2"] == 12 and gain["R3"] == 5
    assert np.isnan(gain["R4"])
    assert pct["R2"] == pytest.approx(100 * (32 - 24) / 24)
    assert pct["R3"] == pytest.approx(100 * (20 - 16) / 16)


def test_rate_left_out_of_that_response_only(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "rate"
derive = "rate"
property = "hardness"
[[responses]]
name = "fresh"
derive = "value_at"
property = "hardness"
at = 0
""")
    rate, fresh = _col(study, "rate"), _col(study, "fresh")
    assert rate["R1"] == pytest.approx(0.5) and rate["R2"] == pytest.approx(1.0)
    ref = stats.linregress([0, 4, 12], [15, 16, 20])  # reference: scipy
    assert rate["R3"] == pytest.approx(ref.slope, abs=1e-12)
    assert np.isnan(rate["R4"]) and fresh["R4"] == 18  # left out of the rate only
    assert any("'rate': run R4 left out: only 2 measured point(s), 3 needed" in n
               for n in study.notes)
    table = derivation_table(study, "rate").set_index("run")
    assert table.loc["R3", "r_squared"] == pytest.approx(ref.rvalue ** 2, abs=1e-12)
    assert table.loc["R3", "se"] == pytest.approx(ref.stderr, abs=1e-12)


def test_time_to_limit_flags_extrapolation_and_carries_the_caution(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "weeks_to_30"
derive = "time_to_limit"
property = "hardness"
limit = 30
direction = "up"
min_points = 2
""")
    t = _col(study, "weeks_to_30")
    assert t["R1"] == pytest.approx((30 - 10) / 0.5)       # 40 weeks, beyond week 12
    assert t["R2"] == pytest.approx((30 - 20) / 1.0)       # 10 weeks, inside
    assert t["R4"] == pytest.approx((30 - 18) / 0.5)
    notes = "\n".join(study.notes)
    # 40 weeks is beyond 1.5 times the last measured week (12): the stronger flag
    # our rule: stated up to 1.5 x 12 = 18 weeks (stricter than ICH Q1E (2003)
    # 2.4.1.2, up to twice and at most 12 months beyond the period covered)
    assert ("extrapolated far beyond the data: the fitted curve reaches 30 after 18, the "
            "longest the storage supports (1.5 times the last measured week)") in notes
    assert "R1 (week 40, measured to 12)" in notes and "R2 (" not in notes.split(
        "extrapolated far")[1].split("\n")[0]
    assert SHELF_LIFE_CAUTION in notes


def test_time_to_limit_never_reached_is_left_out(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "weeks_to_15"
derive = "time_to_limit"
property = "hardness"
limit = 15
direction = "down"
min_points = 2
""")
    t = _col(study, "weeks_to_15")
    # every run hardens, so none falls to 15 N except R1/R3 which start at or below it
    assert t["R1"] == 0.0
    assert np.isnan(t["R2"])
    assert any("'weeks_to_15': run R2 left out: its fitted hardness moves away from 15"
               in n for n in study.notes)


def test_panel_mean_and_adjusted(tmp_path):
    study = _load(tmp_path, """
[[responses]]
name = "liking"
derive = "panel_mean"
attribute = "liking"
[[responses]]
name = "liking_adj"
derive = "panel_adjusted"
attribute = "liking"
""")
    liking = _col(study, "liking")
    assert liking["R1"] == pytest.approx(7.0) and liking["R2"] == pytest.approx(5.5)
    notes = "\n".join(study.notes)
    assert "panel 'liking': run R4 has 1 blank score(s) (row(s) 10), left out" in notes
    # R4 has one score left: fewer than min_points = 2, so left out
    assert np.isnan(liking["R4"])
    assert "not every assessor scored every run" in notes
    assert _col(study, "liking_adj").notna().sum() == 3


def test_demo_raw_tables_reduce_to_demo_runs():
    # The demo generator writes hardness_fresh/hardness_12w as the storage
    # values at weeks 0 and 12 and liking as the panel run mean to 2 decimals.
    typed = load_study(DEMO / "snack_bar.toml").runs.set_index("run")
    raw = load_study(DEMO / "snack_bar_raw.toml").runs.set_index("run")
    for name in ("hardness_fresh", "hardness_12w"):
        assert np.array_equal(raw.loc[typed.index, name].to_numpy(),
                              typed[name].to_numpy())
    assert np.abs(raw.loc[typed.index, "liking"].round(2) - typed["liking"]).max() < 1e-9
    # A complete panel (every assessor scores every run once): the least-squares
    # means equal the plain means (common practice for balanced designs).
    assert np.allclose(raw["liking_adjusted"], raw["liking"], atol=1e-10)
    for name in ("water_activity", "cost"):
        assert np.array_equal(raw.loc[typed.index, name], typed[name])


def test_demo_time_to_limit_matches_closed_form_per_run():
    raw = load_study(DEMO / "snack_bar_raw.toml")
    import pandas as pd

    storage = pd.read_csv(DEMO / "snack_bar_storage.csv")
    got = raw.runs.set_index("run")
    for run in ("R01", "R04", "R15"):
        g = storage[(storage.run == run) & (storage.property == "hardness")]
        ref = stats.linregress(g.week, np.log(g.value))  # reference: scipy
        assert got.loc[run, "hardening_rate"] == pytest.approx(ref.slope, abs=1e-12)
        t = (math.log(35) - ref.intercept) / ref.slope
        assert got.loc[run, "weeks_to_35N"] == pytest.approx(max(t, 0.0), abs=1e-9)


def test_check_says_how_each_was_computed(tmp_path):
    study = load_study(DEMO / "snack_bar_raw.toml")
    text = summary_text(study_summary(study))
    assert ("derived: hardness at week 12 from snack_bar_storage.csv, as measured or by "
            "straight-line interpolation") in text
    assert "derived: assessor-adjusted mean liking score per run" in text
    assert "first-order (log-linear) least-squares fit" in text
    assert "read from the runs table" == describe_derivation(
        study, study.response("cost"))


def test_study_to_dict_keeps_sections_and_keys(tmp_path):
    import tomli_w

    study = load_study(DEMO / "snack_bar_raw.toml")
    out = study_to_dict(study)
    assert out["storage"]["time"] == "week" and out["panel"]["scale"] == [1, 9]
    spec = out
    spec["study"]["data"] = str(DEMO / "snack_bar_runs.csv")
    spec["storage"] = dict(spec["storage"], data=str(DEMO / "snack_bar_storage.csv"))
    spec["panel"] = dict(spec["panel"], data=str(DEMO / "snack_bar_panel.csv"))
    copy = tmp_path / "copy.toml"
    copy.write_bytes(tomli_w.dumps(spec).encode())
    again = load_study(copy)
    assert np.allclose(again.runs["weeks_to_35N"], study.runs["weeks_to_35N"])


def test_without_data_the_keys_are_still_checked(tmp_path):
    path = _study(tmp_path, """
[[responses]]
name = "h"
derive = "value_at"
property = "hardness"
""")
    with pytest.raises(StudyError, match=r"study\.toml: \[\[responses\]\] 'h': derive = "
                                         r"'value_at' needs at = \.\.\."):
        load_study(path, with_data=False)


@pytest.mark.parametrize("responses, head, pattern", [
    ('[[responses]]\nname = "h"\nderive = "value_after"\nproperty = "hardness"\nat = 1\n',
     HEAD, r"derive = 'value_after' is not one I know.*did you mean 'value_at'"),
    ('[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\nlimit = 3\n',
     HEAD, r"\[\[responses\]\] 'h': 'limit' is not used with derive = 'rate'"),
    ('[[responses]]\nname = "h"\nproperty = "hardness"\n',
     HEAD, r"'property' is only used with derive"),
    ('[[responses]]\nname = "h"\nderive = "time_to_limit"\nproperty = "hardness"\n'
     'limit = 3\ndirection = "upward"\n', HEAD, r"direction = 'upward' is not one I know"),
    ('[[responses]]\nname = "h"\nderive = "time_to_limit"\nproperty = "hardness"\n'
     'limit = 0\ndirection = "up"\norder = "first"\n', HEAD,
     r"a first-order fit cannot reach a limit of 0"),
    ('[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\norder = "second"\n',
     HEAD, r"order = 'second' is not one I know"),
    ('[[responses]]\nname = "h"\nderive = "value_at"\nproperty = "hardness"\nat = -1\n',
     HEAD, r"at = -1 is before the start of storage"),
    ('[[responses]]\nname = "h"\nderive = "panel_mean"\nattribute = "liking"\n',
     HEAD.replace("scale = [1, 9]", "scale = [9, 1]"),
     r"\[panel\] scale = \[9, 1\]: the low end must come first"),
    ('[[responses]]\nname = "h"\nderive = "panel_mean"\nattribute = "liking"\n',
     HEAD.replace("scale = [1, 9]\n", ""), r"\[panel\] needs scale = \[low, high\]"),
    ('[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\n',
     HEAD.replace('time_unit = "weeks"', 'time_units = "weeks"'),
     r"\[storage\]: unknown key 'time_units' \(did you mean 'time_unit'\?\)"),
    ('[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\n',
     HEAD.split("[storage]")[0] + "[[factors]]" + HEAD.split("[[factors]]")[1],
     r"derive = 'rate' reads the storage table, but the study file has no \[storage\]"),
    ('[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\nmin_points = 1\n',
     HEAD, r"a fitted line needs min_points of 2 or more"),
])
def test_bad_study_keys(tmp_path, responses, head, pattern):
    with pytest.raises(StudyError, match=pattern):
        _load(tmp_path, responses, head=head)


RATE = '[[responses]]\nname = "h"\nderive = "rate"\nproperty = "hardness"\n'
LIKE = '[[responses]]\nname = "l"\nderive = "panel_mean"\nattribute = "liking"\n'


@pytest.mark.parametrize("responses, storage, panel, pattern", [
    (RATE, STORAGE + "R1,-1,hardness,13\n", PANEL,
     r"storage\.csv, row 15, column 'week': negative storage time"),
    (RATE, STORAGE + "R1,6 weeks,hardness,13\n", PANEL,
     r"storage\.csv, row 15, column 'week': expected a number, found '6 weeks'"),
    (RATE, STORAGE + "R9,4,hardness,13\n", PANEL,
     r"storage\.csv, row 15, column 'run': run 'R9' is not in the runs table"),
    (RATE.replace('"hardness"', '"hardnes"'), STORAGE, PANEL,
     r"storage\.csv: no rows with property 'hardnes' for response 'h'.*did you mean "
     r"'hardness'"),
    (RATE + 'order = "first"\n', STORAGE + "R1,6,hardness,0\n", PANEL,
     r"storage\.csv, row 15, column 'value': response 'h' uses a first-order"),
    (LIKE, STORAGE, PANEL + "R1,A4,liking,12\n",
     r"panel\.csv, row 11, column 'score': liking score 12 is outside its scale 1 to 9"),
    (LIKE, STORAGE, PANEL + "R1,A1,liking,4\n",
     r"panel\.csv, row 11, column 'assessor': assessor 'A1' scored 'liking' of run 'R1' "
     r"again \(first at row 2\)"),
    (LIKE, STORAGE, PANEL + "R7,A1,liking,4\n",
     r"panel\.csv, row 11, column 'run': run 'R7' is not in the runs table"),
    # two groups of assessors with no run in common (common practice: a disconnected
    # design cannot compare runs across groups)
    (LIKE.replace("panel_mean", "panel_adjusted"), STORAGE,
     "run,assessor,attribute,score\nR1,A1,liking,7\nR2,A1,liking,5\nR3,A2,liking,6\n"
     "R4,A2,liking,8\n",
     r"^panel\.csv: response 'l': the panel splits into groups of assessors"),
])
def test_bad_tables_name_file_and_row(tmp_path, responses, storage, panel, pattern):
    with pytest.raises(DataError, match=pattern):
        _load(tmp_path, responses, storage=storage, panel=panel)


def test_no_run_derivable_is_an_error(tmp_path):
    with pytest.raises(DataError, match=r"response 'h' could not be derived for any run"):
        _load(tmp_path, RATE + "min_points = 9\n")


def test_cli_check_reports_bad_storage_row_and_exits_2(tmp_path, capsys):
    from tradeoff.cli import main

    path = _study(tmp_path, RATE, storage=STORAGE + "R1,-3,hardness,13\n")
    assert main(["check", str(path)]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: storage.csv, row 15, column 'week': negative storage time")
    assert "Traceback" not in err
