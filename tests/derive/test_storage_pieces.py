"""Several packs (pieces) per run and storage time: value_at and change use their mean,
fitted kinds fit every piece; checked by hand and against scipy.stats.linregress."""
from __future__ import annotations

import numpy as np
import pytest
from scipy import stats

from tradeoff.derive.derived import derivation_table
from tradeoff.derive.load import load_study
from tradeoff.derive.storage import fit_kinetics, interpolate_at, piece_spread, read_storage
from tradeoff.model.study_fit import fit_study
from tradeoff.study.intake import read_table

RUNS = "run,protein\nR1,20\nR2,30\nR3,20\nR4,30\nR5,25\n"
WEEKS = (0, 4, 8)
# three packs per run and week; values worked so every mean is a round number
PACKS = {"R1": (10, 12, 14), "R2": (20, 24, 28), "R3": (11, 12.5, 14),
         "R4": (19, 23, 27), "R5": (15, 18, 21)}
SPREAD = (-0.5, 0.0, 0.5)


def _storage():
    lines = ["run,week,property,value"]
    for run, means in PACKS.items():
        for week, mean in zip(WEEKS, means):
            for d in SPREAD:
                lines.append(f"{run},{week},hardness,{mean + d * (1 + week / 4)}")
    return "\n".join(lines) + "\n"


HEAD = """[study]
data = "runs.csv"
model = "main"
[storage]
data = "storage.csv"
time = "week"
time_unit = "weeks"
[[factors]]
name = "protein"
low = 20
high = 30
[[responses]]
name = "rate"
derive = "rate"
property = "hardness"
goal = "minimize"
lower = 0.2
upper = 1.2
[[responses]]
name = "h6"
derive = "value_at"
property = "hardness"
at = 6
[[responses]]
name = "gain"
derive = "change"
property = "hardness"
at = 8
"""


def _study(tmp_path):
    (tmp_path / "runs.csv").write_text(RUNS)
    (tmp_path / "storage.csv").write_text(_storage())
    (tmp_path / "study.toml").write_text(HEAD)
    return load_study(tmp_path / "study.toml")


def test_read_storage_keeps_every_pack(tmp_path):
    path = tmp_path / "storage.csv"
    path.write_text(_storage())
    frame = read_storage(read_table(path), time="week", run_ids=list(PACKS))
    assert len(frame) == 45 and (frame.groupby(["run", "time"]).size() == 3).all()


def test_value_at_and_change_use_the_pack_mean(tmp_path):
    study = _study(tmp_path)
    runs = study.runs.set_index("run")
    # by hand: R1 means 10, 12, 14 at weeks 0, 4, 8: at week 6 halfway, 13
    assert runs.loc["R1", "h6"] == pytest.approx(13.0)
    assert runs.loc["R3", "h6"] == pytest.approx(13.25)
    assert runs.loc["R2", "gain"] == pytest.approx(8.0)  # 28 - 20
    res = interpolate_at(["a"] * 4, [0, 0, 2, 2], [1, 3, 5, 9], 1.0)
    assert res.loc[0, "value"] == pytest.approx(4.5)  # means 2 and 7, halfway
    assert res.loc[0, "n_points"] == 2


def test_rate_fits_every_pack_like_linregress(tmp_path):
    study = _study(tmp_path)
    frame = read_storage(read_table(tmp_path / "storage.csv"), time="week")
    rates = study.runs.set_index("run")["rate"]
    table = derivation_table(study, "rate").set_index("run")
    for run in PACKS:
        mine = frame[frame["run"] == run]
        ref = stats.linregress(mine["time"], mine["value"])  # reference: scipy
        assert rates[run] == pytest.approx(ref.slope, abs=1e-12)
        assert table.loc[run, "se"] == pytest.approx(ref.stderr, abs=1e-12)
        assert table.loc[run, "points"] == 9
    notes = "\n".join(study.notes)
    assert ("the rate line is fitted to every piece, and its standard error uses the "
            "pieces' scatter around each run's line") in notes
    assert "each time's value is the mean of its pieces" in notes


def test_derivation_table_shows_pieces_and_their_sd(tmp_path):
    study = _study(tmp_path)
    table = derivation_table(study, "h6").set_index("run")
    # SD of (m - 0.5 s, m, m + 0.5 s) is 0.5 s (by hand); s = 1, 2, 3 at weeks 0, 4, 8
    assert table.loc["R1", "pieces"] == "3 per week, SD 0.5 to 1.5"
    spread = piece_spread(["a", "a", "a", "b"], [0, 0, 0, 0], [1, 2, 6, 4])
    assert list(spread["pieces"]) == [3, 1]
    assert spread.loc[0, "sd"] == pytest.approx(np.std([1, 2, 6], ddof=1))
    assert np.isnan(spread.loc[1, "sd"])


def test_a_storage_study_with_packs_fits_and_optimizes(tmp_path):
    from tradeoff import optimize

    study = _study(tmp_path)
    fits = fit_study(study)
    assert set(fits.models) == {"rate", "h6", "gain"}
    assert fits.models["rate"].n_ == 5
    assert optimize(study, seed=0).best.settings["protein"] == pytest.approx(20, abs=1.0)


def test_fit_kinetics_counts_packs_as_points():
    fit = fit_kinetics(["a"] * 4, [0, 0, 4, 4], [1, 2, 5, 6])
    assert fit.loc[0, "rate"] == pytest.approx(1.0) and fit.loc[0, "n_points"] == 4


def test_the_same_week_at_two_temperatures_is_not_two_pieces():
    # Counted by hand: week 4 was measured at 20 and at 40 degC (two measurements,
    # one piece each); week 8 at 40 degC twice (two pieces); week 0 once, before
    # storage, whatever its temperature cell holds.
    run = ["R1"] * 6
    week = [0, 4, 4, 8, 8, 12]
    temp = [np.nan, 20, 40, 40, 40, 20]
    value = [10.0, 11.0, 13.0, 15.0, 16.0, 14.0]
    spread = piece_spread(run, week, value, temp)
    assert list(spread["pieces"]) == [1, 1, 1, 2, 1]
    assert list(spread["time"]) == [0, 4, 4, 8, 12]
    two = spread[spread["pieces"] == 2].iloc[0]
    assert two["mean"] == pytest.approx(15.5) and two["sd"] == pytest.approx(np.std([15, 16], ddof=1))
    # without temperatures every row of a week is a piece of it
    assert list(piece_spread(run, week, value)["pieces"]) == [1, 2, 2, 1]
