"""Blend studies: [[components]] and [mixture] read and checked once.

Implied bounds: Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 6.2
(low_i >= total - sum of the other highs, high_i <= total - sum of the other
lows), worked by hand below. The 0.5 % row tolerance is the issue's rule.
"""
from __future__ import annotations

import shutil
from pathlib import Path

import numpy as np
import pytest

from tradeoff import DataError, StudyError, load_study
from tradeoff.cli import main
from tradeoff.study.mixture import Component, components_of, implied_bounds

DATA = Path(__file__).resolve().parents[1] / "data"

BLEND = """\
[study]
name = "blend"
data = "runs.csv"

[mixture]
total = 100
{mixture}

[[components]]
name = "a"
low = {a_low}
high = {a_high}

[[components]]
name = "b"
low = 10
high = 30

[[components]]
name = "c"
low = 10
high = 30
{extra}
[[responses]]
name = "y"
"""

RUNS = """\
run,a,b,c,y
1,80,10,10,5.0
2,40,30,30,6.0
3,60,30,10,7.0
4,60,10,30,6.5
5,50,20,30,6.1
6,50,30,20,6.6
7,70,20,10,6.2
8,70,10,20,5.9
9,53.3,23.3,23.4,6.3
"""


def _study(write_study, *, a_low=0, a_high=90, mixture="", extra="", runs=RUNS):
    return write_study(BLEND.format(a_low=a_low, a_high=a_high, mixture=mixture,
                                    extra=extra), runs)


def test_components_come_first_and_code_as_pseudo_components(write_study):
    study = load_study(_study(write_study))
    assert [f.name for f in study.factors] == ["a", "b", "c"]
    assert all(isinstance(f, Component) for f in study.factors)
    # implied low of a: 100 - (30 + 30) = 40 (worked by hand)
    a = study.factor("a")
    assert a.low == 40 and a.given_low == 0
    # pseudo-components: (x - L) / (total - sum L), sum L = 40 + 10 + 10 = 60
    coded = study.coded().to_numpy()
    runs = study.runs[["a", "b", "c"]].to_numpy()
    np.testing.assert_allclose(coded, (runs - [40, 10, 10]) / 40)
    assert study.mixture.scale == "pseudo"
    assert any("tightened to 40" in n for n in study.notes)


def test_implied_bounds_by_hand():
    # Cornell (2002) sec. 6.2 rule, numbers worked by hand
    lows, highs = implied_bounds([0, 10, 10], [90, 30, 30], 100)
    np.testing.assert_allclose(lows, [40, 10, 10])
    np.testing.assert_allclose(highs, [80, 30, 30])
    # every low above 0: a can reach at most 100 - 30 - 10 = 60, b 100 - 20 - 10 = 70
    # (its own high), c 100 - 20 - 30 = 50, so its own 40 stays
    lows, highs = implied_bounds([20, 30, 10], [70, 70, 40], 100)
    np.testing.assert_allclose(lows, [20, 30, 10])
    np.testing.assert_allclose(highs, [60, 70, 40])


def test_proportion_scale_when_every_low_is_zero():
    study = load_study(DATA / "yarn_elongation_cornell.toml")
    assert study.mixture.scale == "proportion"
    np.testing.assert_allclose(study.coded().to_numpy(),
                               study.runs[components_names(study)].to_numpy())


def components_names(study):
    return [c.name for c in components_of(study)]


def test_lows_above_the_total_refused(write_study):
    with pytest.raises(StudyError, match=r"lows add up to 110, more than the total 100"):
        load_study(_study(write_study, a_low=90, a_high=95))


def test_highs_below_the_total_refused(write_study):
    with pytest.raises(StudyError, match=r"highs add up to 80, less than the total 100"):
        load_study(_study(write_study, a_low=0, a_high=20))


def test_component_named_like_a_factor_refused(write_study):
    extra = '\n[[factors]]\nname = "a"\nlow = 1\nhigh = 2\n'
    with pytest.raises(StudyError, match=r"'a' is also the name of a factor"):
        load_study(_study(write_study, extra=extra))


def test_row_that_does_not_add_up_names_row_sum_and_total(write_study):
    runs = RUNS.replace("5,50,20,30,6.1", "5,50,20,31,6.1")
    with pytest.raises(DataError, match=r"runs.csv, row 6: the components \(a, b, c\) "
                                        r"add up to 101, not the total 100"):
        load_study(_study(write_study, runs=runs))


def test_row_within_half_a_percent_is_accepted(write_study):
    runs = RUNS.replace("5,50,20,30,6.1", "5,50,20,30.4,6.1")
    assert len(load_study(_study(write_study, runs=runs)).runs) == 9


def test_unknown_mixture_model_hints(write_study):
    with pytest.raises(StudyError, match=r"model = 'quadratik'.*did you mean 'quadratic'"):
        load_study(_study(write_study, mixture='model = "quadratik"'))


def test_components_without_mixture_section_refused(write_study):
    text = BLEND.format(a_low=0, a_high=90, mixture="", extra="").replace(
        "[mixture]\ntotal = 100\n", "")
    with pytest.raises(StudyError, match=r"no \[mixture\] section"):
        load_study(write_study(text, RUNS))


def test_cli_check_reports_tightened_bounds_and_exits_2_on_bad_rows(write_study, capsys):
    path = _study(write_study)
    assert main(["check", str(path)]) == 0
    out = capsys.readouterr().out
    assert "component 'a': low 0 can never be reached" in out
    assert "(given 0 .. 90)" in out
    bad = _study(write_study, runs=RUNS.replace("1,80,10,10", "1,70,10,10"))
    before = bad.with_name("runs.csv").read_bytes()
    assert main(["check", str(bad)]) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and "row 2" in err and "Traceback" not in err
    assert bad.with_name("runs.csv").read_bytes() == before  # input left unchanged


def test_study_written_back_keeps_components_out_of_factors(tmp_path):
    from tradeoff.study.writer import study_to_dict

    for name in ("yarn_elongation_cornell.toml", "yarn_elongation_cornell.csv"):
        shutil.copy(DATA / name, tmp_path / name)
    study = load_study(tmp_path / "yarn_elongation_cornell.toml")
    out = study_to_dict(study)
    assert "factors" not in out
    assert [c["name"] for c in out["components"]] == components_names(study)
    assert out["mixture"]["total"] == 1
