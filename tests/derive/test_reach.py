"""How far a storage study reaches: our 1.5x rule against ICH Q1E, and the flag
carried from the derived shelf lives into the models and the recommendation.

ICH Q1E, Evaluation of stability data (2003), section 2.4.1.2: a proposed shelf
life may be extrapolated up to twice the period covered by long-term data, and
not more than 12 months beyond it. The tool's own rule is stricter: 1.5 times.
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from tradeoff.derive.reach import (StorageReach, goal_warnings, months_per_unit,
                                   stated_limit, storage_needed)
from tradeoff.study.spec import Goal

DEMO = Path(__file__).resolve().parents[2] / "demo_data"


def _q1e_limit(last_months: float) -> float:
    """ICH Q1E (2003) 2.4.1.2: up to 2x the period covered, at most 12 months beyond."""
    return min(2.0 * last_months, last_months + 12.0)


@pytest.mark.parametrize("last", [1, 3, 6, 9, 12, 18, 24, 30, 36, 48, 60])
def test_our_rule_never_reaches_further_than_ich_q1e(last):
    ours = stated_limit(last, "months")
    assert ours <= _q1e_limit(last) + 1e-12
    # up to 24 months the 1.5x rule binds; past it, the 12 months beyond (Q1E)
    assert ours == pytest.approx(1.5 * last if last <= 24 else last + 12.0)


def test_units_convert_through_the_mean_gregorian_year():
    # 365.2425 days a year, 12 months (common practice)
    assert months_per_unit("weeks") == pytest.approx(7 * 12 / 365.2425)
    assert months_per_unit("day") == pytest.approx(12 / 365.2425)
    assert months_per_unit("years") == 12.0
    assert months_per_unit("batches") is None
    # 26 weeks stored: 39 weeks by 1.5x; 12 months beyond would be 78.2 weeks
    assert stated_limit(26, "weeks") == pytest.approx(39.0)
    # 156 weeks (about 36 months): 12 months beyond (52.18 weeks) binds, not 234
    assert stated_limit(156, "weeks") == pytest.approx(156 + 365.2425 / 7)
    # an unknown unit: the 1.5x rule alone
    assert stated_limit(10, "cycles") == pytest.approx(15.0)


@pytest.mark.parametrize("value,unit", [(42.12, "weeks"), (39.0, "weeks"), (64.5, "weeks"),
                                        (30.0, "months"), (400.0, "days"), (7.0, "x")])
def test_storage_needed_is_the_shortest_whole_storage_that_reaches(value, unit):
    need = storage_needed(value, unit)
    assert need == int(need)
    assert stated_limit(need, unit) >= value - 1e-9
    assert stated_limit(need - 1, unit) < value


def test_demo_reach_from_the_storage_table_itself():
    import tradeoff as t
    from tradeoff.derive.derived import derivation_table

    study = t.load_study(DEMO / "snack_bar_shelf.toml")
    raw = pd.read_csv(DEMO / "snack_bar_storage_temps.csv")
    last = raw.loc[raw["storage_temp"] == 20, "week"].max()   # stored to 26 weeks at 20 degC
    reach = study.reach["shelf_life_20C"]
    assert reach.last == last == 26
    assert reach.stated_to == pytest.approx(1.5 * 26)
    values = derivation_table(study, "shelf_life_20C").set_index("run")["value"]
    assert set(reach.far) == set(values.index[values > 39])
    assert set(reach.beyond) == set(values.index[(values > 26) & (values <= 39)])
    assert "R15" in reach.far and values["R15"] == pytest.approx(64.49, abs=0.01)
    # only the times derived from storage have a reach
    assert set(study.reach) == {"shelf_life_20C", "shelf_life_20C_mean"}


def test_models_of_extrapolated_values_say_so():
    import tradeoff as t
    from tradeoff.model.study_fit import fit_study

    study = t.load_study(DEMO / "snack_bar_shelf.toml")
    fit = fit_study(study)
    reach = study.reach["shelf_life_20C"]
    note = [w for w in fit.models["shelf_life_20C"].warnings_ if "storage week" in w]
    assert len(note) == 1
    assert note[0].startswith(f"{len(reach.beyond) + len(reach.far)} of 20 runs")
    assert not any("storage week" in w for w in fit.models["liking"].warnings_)


def _reach():
    return StorageReach("life", "week", "weeks", 26.0, 39.0)


def test_status_and_sentence():
    r = _reach()
    assert list(r.status([20.0, 26.0, 30.0, 39.0, 39.5])) == ["", "", "beyond", "beyond",
                                                              "far"]
    assert r.sentence(20.0) == ""
    assert "beyond the last storage week (26 weeks)" in r.sentence(30.0)
    far = r.sentence(42.12)
    assert "no chance is stated" in far and "store to at least 29 weeks" in far  # 42.12/1.5


def test_goal_beyond_reach_is_warned():
    r = _reach()
    assert r.goal_warning(Goal("maximize", lower=26, upper=52)).startswith(
        "The goal of 'life' names 52 weeks, beyond 39 weeks")
    assert "store to at least 35 weeks" in r.goal_warning(Goal("maximize", lower=26,
                                                               upper=52))  # 52 / 1.5
    assert r.goal_warning(Goal("maximize", lower=20, upper=39)) == ""
    assert r.goal_warning(Goal("none")) == ""


def test_demo_goal_warning_and_no_chance_past_reach():
    import tradeoff as t

    study = t.load_study(DEMO / "snack_bar_shelf.toml")
    assert list(goal_warnings(study)) == ["shelf_life_20C"]     # upper = 52 > 39
    result = t.optimize(study)
    assert any(w.startswith("The goal of 'shelf_life_20C'") for w in result.warnings)
    for s in result.solutions:
        o = s.responses["shelf_life_20C"]
        if o.predicted > 39:
            assert o.extrapolated == "far" and o.chance_in_limits is None
            assert s.chance_all is None
            assert o.storage_needed == math.ceil(o.predicted / 1.5)
            assert any("no chance is stated" in w for w in s.warnings)
        elif o.predicted > 26:
            assert o.extrapolated == "beyond" and o.chance_in_limits is not None
        else:
            assert o.extrapolated == ""
    # a goal within reach: the shelf life the search settles on carries no "far"
    within = study.with_goal("shelf_life_20C", Goal("range", lower=20, upper=30))
    res = t.optimize(within)
    o = res.best.responses["shelf_life_20C"]
    assert 20 <= o.predicted <= 30 and o.extrapolated in ("", "beyond")
    assert o.chance_in_limits is not None and res.best.chance_all is not None
    assert goal_warnings(within) == {}
    # the JSON carries the flag
    js = result.to_dict()["best"]["responses"]["shelf_life_20C"]
    assert js["extrapolated"] == result.best.responses["shelf_life_20C"].extrapolated
