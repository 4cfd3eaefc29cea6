"""Linear rules among factors: the grammar, the matrices, and checks at study load.

The expected coefficients are worked by hand (moving every term to the left
side of the inequality is common practice in linear programming)."""
from __future__ import annotations

import numpy as np
import pytest

from tradeoff.study.constraints import parse_rule, rule_arrays, rules_satisfied
from tradeoff.errors import StudyError
from tradeoff.study.spec import Factor
from tradeoff.derive.load import study_from_dict

FACTORS = [Factor("protein", "protein", low=20, high=30),
           Factor("glycerol", "glycerol", low=4, high=10),
           Factor("binder", "binder", levels=("rice syrup", "date paste")),
           Factor("mix-temp", "mix temp", low=40, high=60)]


@pytest.mark.parametrize("rule, coef, bound", [
    ("protein + 2*glycerol <= 36", {"protein": 1, "glycerol": 2}, 36),
    ("protein + 2 * glycerol < 36", {"protein": 1, "glycerol": 2}, 36),
    ("36 >= protein + 2*glycerol", {"protein": 1, "glycerol": 2}, 36),
    ("protein >= 2*glycerol + 10", {"protein": -1, "glycerol": 2}, -10),
    ("(protein - glycerol)/2 >= 3 - glycerol", {"protein": -0.5, "glycerol": -0.5}, -3),
    ("-(protein + glycerol) * 3 > -90", {"protein": 3, "glycerol": 3}, 90),
    ("0.5*mix-temp + protein <= 1e2", {"protein": 1, "mix-temp": 0.5}, 100),
])
def test_rules_parse_to_linear_forms(rule, coef, bound):
    parsed = parse_rule(rule, FACTORS)
    assert parsed.coefficients == pytest.approx(coef)
    assert parsed.bound == pytest.approx(bound)


@pytest.mark.parametrize("rule, message", [
    ("protein*glycerol <= 3", "multiplies 'protein' by 'glycerol'.*linear"),
    ("protein / glycerol <= 3", "divides by 'glycerol'"),
    ("protein^2 <= 3", "powers are not allowed"),
    ("protein**2 <= 3", "powers are not allowed"),
    ("protien + glycerol <= 30", "'protien' is not a factor.*did you mean 'protein'"),
    ("binder <= 1", "'binder' is a categorical factor"),
    ("protein = 25", "uses '='"),
    ("protein <= 25 <= 30", "more than one comparison"),
    ("protein + glycerol", "expected one of <= >= < >"),
    ("2protein <= 40", "write '\\*'"),
    ("(protein + 1 <= 3", "expected '\\)'"),
    ("protein - protein <= 3", "names no factor"),
    ("protein / 0 <= 3", "divides by zero"),
    ("protein # 2 <= 3", "unexpected character '#'"),
    ("__import__('os') <= 1", "is not a factor"),
])
def test_bad_rules_are_refused_with_the_rule_named(rule, message):
    with pytest.raises(StudyError, match=message) as info:
        parse_rule(rule, FACTORS)
    assert rule in str(info.value)


def _spec(rule):
    return {"study": {"name": "s"},
            "factors": [{"name": "protein", "low": 20, "high": 30},
                        {"name": "glycerol", "low": 4, "high": 10},
                        {"name": "binder", "levels": ["a", "b"]}],
            "responses": [{"name": "hardness", "goal": "minimize", "lower": 1, "upper": 2}],
            "constraints": [{"rule": rule}]}


def test_rules_are_checked_when_the_study_is_built():
    with pytest.raises(StudyError, match=r"bars\.toml: \[\[constraints\]\].*'glycerl'.*"
                                         r"did you mean 'glycerol'"):
        study_from_dict(_spec("protein + glycerl <= 36"), source="bars.toml",
                        with_data=False)
    study = study_from_dict(_spec("protein + 2*glycerol <= 36"), with_data=False)
    assert study.constraints[0]["rule"] == "protein + 2*glycerol <= 36"


def test_coded_arrays_agree_with_the_rule_in_natural_units():
    study = study_from_dict(_spec("protein + 2*glycerol <= 36"), with_data=False)
    rng = np.random.default_rng(3)
    X = rng.uniform(-1, 1, (500, 3))
    protein = 25 + 5 * X[:, 0]
    glycerol = 7 + 3 * X[:, 1]
    direct = protein + 2 * glycerol <= 36
    assert (rules_satisfied(study, X) == direct).all()
    A, b = rule_arrays(study, coded=True)
    # by hand: 25 + 5 x1 + 2 (7 + 3 x2) <= 36  ->  5 x1 + 6 x2 <= -3
    assert A.tolist() == [[5.0, 6.0, 0.0]] and b.tolist() == [-3.0]
    A_nat, b_nat = rule_arrays(study, coded=False)
    assert A_nat.tolist() == [[1.0, 2.0, 0.0]] and b_nat.tolist() == [36.0]
