"""Properties that must hold for every input, checked on many generated ones (hypothesis).

- coded units: natural -> coded -> natural gives the value back, low is -1 and
  high is +1, for ranges from 1e-9 to 1e9 (the definition of coded units,
  common practice);
- every desirability lies in [0, 1] and moves the right way with its response:
  up for maximize, down for minimize, rising to 1 at the target and falling
  after it (Derringer & Suich 1980, the definitions of the curves);
- each desirability equals the published curve written out in
  tests/reference_desirability.py (Derringer & Suich 1980);
- the overall desirability does not depend on the order of the responses
  (a weighted geometric mean is symmetric, Derringer 1994) and equals the
  weighted product written out in tests/reference_desirability.py;
- a solution of the search never lies outside the searched region, never
  breaks a rule among factors, and takes only the levels of a categorical
  factor;
- a least-squares fit does not depend on the order of the rows (the normal
  equations are sums over the runs).

Example counts are small (the search runs about twenty times) so the suite
stays fast; every run uses hypothesis' derandomised mode for repeatable CI.
"""
from __future__ import annotations

import itertools
from pathlib import Path

import numpy as np
import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from reference_desirability import d_of, overall, study_D
from tradeoff.study.coding import code_values, decode_values, to_coded, to_natural
from tradeoff.study.constraints import rules_satisfied
from tradeoff.search.desirability import combine_desirability, desirability
from tradeoff.model.fit import ResponseModel
from tradeoff.model.study_fit import fit_study
from tradeoff.search.search import optimize
from tradeoff.search.problem import overall_desirability
from tradeoff.study.spec import Factor, Goal
from tradeoff.derive.load import study_from_dict

FAST = settings(max_examples=40, deadline=None, derandomize=True,
                suppress_health_check=[HealthCheck.too_slow])
SEARCH = settings(max_examples=20, deadline=None, derandomize=True,
                  suppress_health_check=[HealthCheck.too_slow])

magnitudes = st.sampled_from([1e-9, 1e-6, 1e-3, 1.0, 1e3, 1e6, 1e9])


@st.composite
def numeric_factors(draw):
    scale = draw(magnitudes)
    low = draw(st.floats(-10, 10)) * scale
    width = draw(st.floats(0.01, 10)) * scale
    return Factor(name="x", label="x", low=low, high=low + width)


# --------------------------------------------------------------------------
# Coded units


@FAST
@given(numeric_factors(), st.lists(st.floats(-3, 3), min_size=1, max_size=20))
def test_coding_round_trip(factor, coded):
    coded = np.array(coded)
    natural = decode_values(factor, coded)
    back = code_values(factor, natural)
    # relative to the range: the round trip loses only rounding of the centre
    scale = max(1.0, abs(factor.centre) / factor.half_range)
    assert np.allclose(back, coded, rtol=0, atol=1e-9 * scale)
    assert code_values(factor, [factor.low, factor.high]) == pytest.approx([-1, 1],
                                                                             abs=1e-9 * scale)
    again = decode_values(factor, back)
    assert np.allclose(again, natural, rtol=1e-12, atol=1e-12 * abs(factor.half_range))


@FAST
@given(st.lists(st.booleans(), min_size=1, max_size=20))
def test_categorical_coding_round_trip(second):
    factor = Factor(name="binder", label="binder", levels=("rice syrup", "date paste"))
    values = np.array([factor.levels[int(s)] for s in second], dtype=object)
    coded = code_values(factor, values)
    assert set(coded) <= {-1.0, 1.0}
    assert list(decode_values(factor, coded)) == list(values)
    table = to_natural([factor], coded[:, None])
    assert np.array_equal(to_coded([factor], table)[:, 0], coded)


# --------------------------------------------------------------------------
# Desirability


@st.composite
def goals(draw, kind=None):
    kind = kind or draw(st.sampled_from(["maximize", "minimize", "target", "range"]))
    scale = draw(magnitudes)
    lower = draw(st.floats(-10, 10)) * scale
    upper = lower + draw(st.floats(0.01, 10)) * scale
    shape = draw(st.floats(0.1, 10))
    target = None
    if kind == "target":
        target = lower + draw(st.floats(0.05, 0.95)) * (upper - lower)
        if not lower < target < upper:
            target = (lower + upper) / 2
    return Goal(kind=kind, lower=lower, upper=upper, target=target, shape=shape,
                shape_below=draw(st.floats(0.1, 10)), shape_above=shape,
                weight=draw(st.floats(0.1, 10)))


@FAST
@given(goals(), st.lists(st.floats(-3, 4), min_size=2, max_size=30))
def test_desirability_is_in_0_1_and_moves_the_right_way(goal, fractions):
    width = goal.upper - goal.lower
    y = np.sort(goal.lower + np.array(fractions) * width)
    d = desirability(y, goal)
    assert d.shape == y.shape
    # the published curves, written out independently (tests/reference_desirability.py)
    table = {"goal": goal.kind, "lower": goal.lower, "upper": goal.upper,
             "target": goal.target, "shape": goal.shape, "shape_below": goal.shape_below,
             "shape_above": goal.shape_above}
    assert np.allclose(d, d_of(y, table), rtol=1e-9, atol=1e-12)
    assert np.all((d >= 0) & (d <= 1))
    step = np.diff(d)
    tol = 1e-12
    if goal.kind == "maximize":
        assert np.all(step >= -tol)
        assert np.all(d[y >= goal.upper] == 1) and np.all(d[y <= goal.lower] == 0)
    elif goal.kind == "minimize":
        assert np.all(step <= tol)
        assert np.all(d[y <= goal.lower] == 1) and np.all(d[y >= goal.upper] == 0)
    elif goal.kind == "target":
        rising = y[1:] <= goal.target
        falling = y[:-1] >= goal.target
        assert np.all(step[rising] >= -tol) and np.all(step[falling] <= tol)
        assert desirability([goal.target], goal)[0] == pytest.approx(1.0)
        assert d.max() <= 1.0 + tol
    else:
        inside = (y >= goal.lower) & (y <= goal.upper)
        assert np.array_equal(d, inside.astype(float))


@FAST
@given(st.integers(1, 6).flatmap(lambda m: st.tuples(
    st.lists(st.lists(st.floats(0, 1), min_size=m, max_size=m), min_size=1, max_size=10),
    st.lists(st.floats(0.1, 10), min_size=m, max_size=m),
    st.permutations(range(m)))))
def test_overall_desirability_ignores_the_order_of_responses(drawn):
    d, w, order = drawn
    d, w = np.array(d), np.array(w)
    D = combine_desirability(d, w)
    assert np.all((D >= 0) & (D <= 1))
    # Derringer (1994), written out as a product (tests/reference_desirability.py)
    assert np.allclose(D, overall(d.T, w), rtol=1e-9, atol=1e-12)
    assert np.allclose(combine_desirability(d[:, order], w[order]), D, rtol=1e-12, atol=0)
    # a geometric mean lies between the smallest and largest value it averages
    assert np.all(D >= d.min(axis=1) - 1e-12) and np.all(D <= d.max(axis=1) + 1e-12)


# --------------------------------------------------------------------------
# Studies built from generated data (a 2^3 factorial with 3 centre points)

POINTS = np.array(list(itertools.product([-1, 1], repeat=3)) + [(0, 0, 0)] * 3, float)


@st.composite
def studies(draw, rule=True):
    """A study with two numeric factors, one categorical and three responses."""
    scale = draw(magnitudes)
    lows = [draw(st.floats(-5, 5)) * scale for _ in range(2)]
    widths = [draw(st.floats(0.5, 5)) * scale for _ in range(2)]
    seed = draw(st.integers(0, 2**16))
    rng = np.random.default_rng(seed)
    beta = rng.normal(0, 1, (3, 5))
    F = np.column_stack([np.ones(len(POINTS)), POINTS, POINTS[:, 0] * POINTS[:, 1]])
    Y = F @ beta.T + rng.normal(0, 0.2, (len(POINTS), 3))
    natural = [lows[j] + (POINTS[:, j] + 1) / 2 * widths[j] for j in range(2)]
    lines = ["run,a,b,c,y1,y2,y3"]
    for i in range(len(POINTS)):
        level = "x" if POINTS[i, 2] < 0 or (POINTS[i, 2] == 0 and i % 2) else "z"
        lines.append(f"{i + 1},{float(natural[0][i])!r},{float(natural[1][i])!r},{level},"
                     + ",".join(repr(float(v)) for v in Y[i]))
    kinds = [draw(st.sampled_from(["maximize", "minimize", "target"])) for _ in range(3)]
    responses = []
    for j, kind in enumerate(kinds):
        lo, hi = np.quantile(Y[:, j], [0.2, 0.8])
        goal = {"goal": kind, "lower": float(lo), "upper": float(hi)}
        if kind == "target":
            goal["target"] = float((lo + hi) / 2)
        responses.append({"name": f"y{j + 1}", **goal,
                          "weight": draw(st.sampled_from([0.5, 1.0, 2.0]))})
    factors = [{"name": "a", "low": lows[0], "high": lows[0] + widths[0]},
               {"name": "b", "low": lows[1], "high": lows[1] + widths[1]},
               {"name": "c", "levels": ["x", "z"]}]
    if draw(st.booleans()):  # a narrower search range inside the tested one
        factors[0]["search"] = [lows[0] + 0.25 * widths[0], lows[0] + widths[0]]
    spec = {"study": {"name": "generated", "data": "runs.csv", "model": "interactions"},
            "factors": factors, "responses": responses}
    if rule:
        # a rule through the region's centre: half the (a, b) box stays allowed
        ca, cb = (lows[0] + widths[0] / 2), (lows[1] + widths[1] / 2)
        sa, sb = draw(st.sampled_from([1, -1])), draw(st.sampled_from([1, -2]))
        bound = sa * ca / widths[0] + sb * cb / widths[1]
        spec["constraints"] = [{"rule": f"{sa / widths[0]!r}*a + {sb / widths[1]!r}*b "
                                        f"<= {bound!r}"}]
    data = ("\n".join(lines) + "\n").encode()
    return spec, data


def _build(spec, data):
    return study_from_dict(spec, source=Path("generated.toml"), data_bytes=data)


@SEARCH
@given(studies())
def test_a_solution_stays_in_the_region_and_keeps_the_rules(drawn):
    study = _build(*drawn)
    result = optimize(study, top=3, seed=0, draws=500)
    assert result.solutions
    for s in result.solutions:
        for f in study.factors:
            value = s.settings[f.name]
            if f.is_categorical:
                assert value in f.levels
                continue
            lo, hi = f.search_range
            tol = 1e-9 * (hi - lo)
            assert lo - tol <= value <= hi + tol, (f.name, value, lo, hi)
        coded = np.array([[s.coded[f.name] for f in study.factors]])
        assert rules_satisfied(study, coded, tol=1e-7)[0], (study.constraints, s.settings)
        assert 0 <= s.desirability <= 1


@FAST
@given(studies(rule=False), st.permutations(range(3)), st.integers(0, 2**16))
def test_overall_desirability_of_a_study_ignores_the_order_of_its_responses(
        drawn, order, seed):
    spec, data = drawn
    study = _build(spec, data)
    shuffled = _build({**spec, "responses": [spec["responses"][i] for i in order]}, data)
    X = np.random.default_rng(seed).uniform(-1, 1, (25, 3))
    X[:, 2] = np.where(X[:, 2] < 0, -1.0, 1.0)
    fit = fit_study(study)
    D, _ = overall_desirability(study, fit, X)
    D2, _ = overall_desirability(shuffled, fit_study(shuffled), X)
    assert np.allclose(D, D2, rtol=1e-10, atol=1e-12)
    # and D is the published weighted geometric mean (tests/reference_desirability.py)
    assert np.allclose(D, study_D(study, fit, X), rtol=1e-9, atol=1e-12)


@FAST
@given(st.permutations(range(len(POINTS) + 6)), st.integers(0, 2**16),
       st.sampled_from(["main", "interactions", "quadratic"]))
def test_a_fit_does_not_depend_on_the_order_of_the_rows(order, seed, terms):
    # a face-centred composite design: 8 corners, 6 axial points, 3 centres
    axial = np.vstack([np.eye(3), -np.eye(3)])
    X = np.vstack([POINTS, axial])
    y = np.random.default_rng(seed).normal(10, 2, len(X))
    names = ["a", "b", "c"]
    one = ResponseModel(terms=terms, factor_names=names).fit(X, y)
    two = ResponseModel(terms=terms, factor_names=names).fit(X[list(order)],
                                                             y[list(order)])
    assert one.terms_ == two.terms_
    assert np.allclose(one.coef_, two.coef_, rtol=1e-9, atol=1e-9)
    assert one.residual_sd_ == pytest.approx(two.residual_sd_, rel=1e-9)
    assert one.r2_ == pytest.approx(two.r2_, rel=1e-9, abs=1e-12)
    probe = np.random.default_rng(seed + 1).uniform(-1, 1, (5, 3))
    assert np.allclose(one.predict(probe), two.predict(probe), rtol=1e-9, atol=1e-9)
