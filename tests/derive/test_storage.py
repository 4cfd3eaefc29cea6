"""Storage kinetics and interpolation against closed forms and scipy."""
from __future__ import annotations

import math

import numpy as np
import pytest
from scipy import stats

from tradeoff.errors import DataError
from tradeoff.study.intake import read_table
from tradeoff.cautions import SHELF_LIFE_CAUTION
from tradeoff.derive.storage import fit_kinetics, fitted_value, interpolate_at, read_storage, time_to_limit

WEEKS = np.array([0.0, 2.0, 4.0, 8.0, 12.0])


def test_zero_order_recovers_straight_line_exactly():
    # Zero-order integrated rate law value = v0 + k t (common practice; e.g.
    # Atkins' Physical Chemistry, integrated rate laws).
    run = ["a"] * 5 + ["b"] * 5
    t = np.concatenate([WEEKS, WEEKS])
    y = np.concatenate([10 + 1.5 * WEEKS, 30 - 0.25 * WEEKS])
    fit = fit_kinetics(run, t, y, order="zero").set_index("run")
    assert fit.loc["a", "start"] == pytest.approx(10, abs=1e-12)
    assert fit.loc["a", "rate"] == pytest.approx(1.5, abs=1e-12)
    assert fit.loc["b", "rate"] == pytest.approx(-0.25, abs=1e-12)
    assert fit.loc["a", "r_squared"] == pytest.approx(1.0, abs=1e-12)
    assert fit.loc["a", "residual_sd"] == pytest.approx(0.0, abs=1e-9)
    assert list(fit["n_points"]) == [5, 5]


def test_zero_order_matches_scipy_linregress_per_run():
    # Reference library: scipy.stats.linregress (slope, intercept, r, stderr).
    rng = np.random.default_rng(4)
    run = np.repeat(["r1", "r2", "r3"], 5)
    t = np.tile(WEEKS, 3)
    y = 12 + np.repeat([0.8, 0.3, -0.1], 5) * t + rng.normal(0, 0.4, 15)
    fit = fit_kinetics(run, t, y, order="zero").set_index("run")
    for name in ("r1", "r2", "r3"):
        ref = stats.linregress(t[run == name], y[run == name])
        assert fit.loc[name, "rate"] == pytest.approx(ref.slope, abs=1e-10)
        assert fit.loc[name, "start"] == pytest.approx(ref.intercept, abs=1e-10)
        assert fit.loc[name, "r_squared"] == pytest.approx(ref.rvalue ** 2, abs=1e-10)
        assert fit.loc[name, "rate_se"] == pytest.approx(ref.stderr, abs=1e-10)


def test_first_order_matches_linregress_on_log_values():
    # First order: ln(value) is a straight line in time (common practice).
    rng = np.random.default_rng(7)
    run = np.repeat(["x", "y"], 5)
    t = np.tile(WEEKS, 2)
    y = np.repeat([15.0, 20.0], 5) * np.exp(np.repeat([0.05, 0.02], 5) * t) \
        * np.exp(rng.normal(0, 0.02, 10))
    fit = fit_kinetics(run, t, y, order="first").set_index("run")
    for name in ("x", "y"):
        ref = stats.linregress(t[run == name], np.log(y[run == name]))
        assert fit.loc[name, "rate"] == pytest.approx(ref.slope, abs=1e-10)
        assert fit.loc[name, "start"] == pytest.approx(math.exp(ref.intercept), rel=1e-10)
        assert fit.loc[name, "r_squared"] == pytest.approx(ref.rvalue ** 2, abs=1e-10)


def test_first_order_half_life_is_ln2_over_k():
    # First-order half-life t1/2 = ln 2 / k (Atkins' Physical Chemistry,
    # first-order reactions; common practice).
    k, c0 = 0.0866, 40.0
    t = np.array([0.0, 1.0, 3.0, 6.0, 10.0])
    fit = fit_kinetics(["r"] * 5, t, c0 * np.exp(-k * t), order="first")
    assert fit["rate"].iloc[0] == pytest.approx(-k, abs=1e-12)
    half = time_to_limit(fit["start"], fit["rate"], c0 / 2, order="first",
                         direction="down")
    assert half[0] == pytest.approx(math.log(2) / k, rel=1e-10)
    # and the fitted curve reaches exactly the limit there
    assert fitted_value(fit["start"], fit["rate"], half, order="first")[0] == \
        pytest.approx(c0 / 2, rel=1e-10)


def test_zero_order_time_to_limit_closed_form_and_edge_cases():
    # t = (limit - v0) / k for value = v0 + k t (common practice).
    start = np.array([20.0, 20.0, 40.0, 20.0, 50.0])
    rate = np.array([1.25, -0.5, 1.0, 0.0, -2.0])
    t = time_to_limit(start, rate, 35.0, order="zero", direction="up")
    assert t[0] == pytest.approx((35 - 20) / 1.25)
    assert np.isnan(t[1])         # softening: never rises to 35
    assert t[2] == 0.0            # already above 35 at the start
    assert np.isnan(t[3])         # flat: never reaches it
    down = time_to_limit(start, rate, 35.0, order="zero", direction="down")
    assert down[4] == pytest.approx((35 - 50) / -2.0)
    assert down[0] == 0.0 and np.isnan(down[2])


def test_interpolation_between_measured_times_and_no_extrapolation():
    t = np.array([0, 2, 4, 8, 12, 0, 2, 4, 8], float)
    y = np.array([12.5, 13.3, 13.6, 14.6, 16.3, 20, 21, np.nan, 24], float)
    run = ["a"] * 5 + ["b"] * 4
    at10 = interpolate_at(run, t, y, 10.0).set_index("run")
    # by hand: 14.6 + (16.3 - 14.6) * (10 - 8) / (12 - 8) = 15.45
    assert at10.loc["a", "value"] == pytest.approx(15.45, abs=1e-12)
    assert at10.loc["a", "status"] == "interpolated"
    assert (at10.loc["a", "time_before"], at10.loc["a", "time_after"]) == (8, 12)
    assert at10.loc["b", "status"] == "after_last"
    assert np.isnan(at10.loc["b", "value"])
    # the blank at week 4 is skipped: 21 + (24 - 21) * (5 - 2) / (8 - 2) = 22.5
    at5 = interpolate_at(run, t, y, 5.0).set_index("run")
    assert at5.loc["b", "value"] == pytest.approx(22.5, abs=1e-12)
    assert at5.loc["b", "n_points"] == 4 - 1
    at0 = interpolate_at(run, t, y, 0.0).set_index("run")
    assert list(at0["status"]) == ["measured", "measured"]
    assert at0.loc["a", "value"] == 12.5


def test_first_order_needs_positive_values():
    with pytest.raises(DataError, match="needs values above 0"):
        fit_kinetics(["a", "a", "a"], [0, 1, 2], [1.0, 0.0, 2.0], order="first")


def test_caution_names_regulation_and_microbiology():
    assert "not a safety determination" in SHELF_LIFE_CAUTION
    assert "microbiological shelf life" in SHELF_LIFE_CAUTION
    assert "regulations" in SHELF_LIFE_CAUTION


def _table(tmp_path, text, name="storage.csv"):
    path = tmp_path / name
    path.write_text(text)
    return read_table(path)


GOOD = "run,week,property,value\nR1,0,hardness,12\nR1,4,hardness,14\nR2,0,hardness,15\n"


def test_read_storage_tidy(tmp_path):
    frame = read_storage(_table(tmp_path, GOOD), time="week", run_ids=["R1", "R2"])
    assert list(frame.columns) == ["row", "run", "time", "property", "value", "temperature"]
    assert frame["temperature"].isna().all()  # no temperature column named
    assert list(frame["row"]) == [2, 3, 4]
    assert list(frame["time"]) == [0, 4, 0]


@pytest.mark.parametrize("text, pattern", [
    (GOOD + "R2,-2,hardness,15\n",
     r"storage\.csv, row 5, column 'week': negative storage time \(-2\)"),
    (GOOD + "R2,two,hardness,15\n",
     r"storage\.csv, row 5, column 'week': expected a number, found 'two'"),
    (GOOD + "R9,2,hardness,15\n",
     r"storage\.csv, row 5, column 'run': run 'R9' is not in the runs table"),
    (GOOD + "R2,,hardness,15\n",
     r"storage\.csv, row 5, column 'week': blank storage time"),
    (GOOD + "R2,2,hardness,15 N\n",
     r"storage\.csv, row 5, column 'value': expected a number, found '15 N'"),
    ("run,time,property,value\nR1,0,hardness,1\n",
     r"storage\.csv: no column 'week' in the storage table"),
])
def test_read_storage_bad_input(tmp_path, text, pattern):
    with pytest.raises(DataError, match=pattern):
        read_storage(_table(tmp_path, text), time="week", run_ids=["R1", "R2"])
