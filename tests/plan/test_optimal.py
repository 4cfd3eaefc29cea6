"""Coordinate-exchange optimal designs (core/plan/optimal.py) and their region."""
import itertools

import numpy as np
import pytest

from tradeoff.errors import PlanError
from tradeoff.model.terms import model_matrix, model_terms
from tradeoff.plan.optimal import coordinate_exchange, region_moments
from tradeoff.plan.region import Region


def _matrix(model, k):
    terms, _ = model_terms(model, [f"x{i}" for i in range(k)])
    return lambda X: model_matrix(X, terms)


def _box(k, **kw):
    return Region(lower=-np.ones(k), upper=np.ones(k), levels=(None,) * k, **kw)


def test_d_optimal_reaches_the_exhaustive_optimum_on_a_grid():
    # Independent computation: every multiset of 7 runs from the 3 x 3 grid,
    # quadratic model in 2 factors; the continuous builder must do at least as well.
    f = _matrix("quadratic", 2)
    grid = np.array(list(itertools.product([-1.0, 0.0, 1.0], repeat=2)))
    Fg = f(grid)
    best = max(np.linalg.slogdet(Fg[list(c)].T @ Fg[list(c)])[1]
               for c in itertools.combinations_with_replacement(range(9), 7))
    result = coordinate_exchange(f, _box(2), 7, criterion="d", seed=1)
    assert result.value >= best - 1e-9
    F = f(result.coded)
    assert result.value == pytest.approx(np.linalg.slogdet(F.T @ F)[1])


def test_d_optimal_one_factor_quadratic_is_minus_one_zero_one():
    # Closed form: the D-optimal 3-run design for a quadratic in one factor on
    # [-1, 1] puts its runs at -1, 0 and +1 (common practice; det X'X = 4).
    result = coordinate_exchange(_matrix("quadratic", 1), _box(1), 3, seed=0)
    assert np.sort(result.coded[:, 0]) == pytest.approx([-1.0, 0.0, 1.0], abs=1e-6)
    assert np.exp(result.value) == pytest.approx(4.0)


def test_saturated_d_optimal_reaches_the_hadamard_bound_without_warnings():
    # A saturated plan (as many runs as terms: 8 runs, 3 factors, every
    # interaction). Hadamard's bound: with entries in [-1, 1], det X'X <= n^p, met
    # by the 2^3 factorial (X'X = 8 I, det 8^8) (Box, Hunter & Hunter 2005, ch. 5,
    # orthogonal columns). Taking one run out of a saturated plan leaves a singular
    # matrix: the exchange must still swap without dividing by zero.
    import warnings
    with warnings.catch_warnings():
        warnings.simplefilter("error")
        result = coordinate_exchange(_matrix("full", 3), _box(3), 8, criterion="d", seed=3)
    assert np.exp(result.value) == pytest.approx(8.0 ** 8, rel=1e-6)
    assert sorted(map(tuple, np.round(result.coded))) == sorted(
        itertools.product([-1.0, 1.0], repeat=3))


def test_swap_inverse_is_the_inverse_after_the_swap():
    # Independent computation: numpy's inverse of M - f f' + g g', also where M
    # less f f' is singular (a saturated plan).
    from tradeoff.plan.optimal import _swap_inverse
    rng = np.random.default_rng(7)
    for runs in (12, 5):
        F = rng.normal(size=(runs, 5))
        M = F.T @ F
        f, g = F[2], rng.normal(size=5)
        expected = np.linalg.inv(M - np.outer(f, f) + np.outer(g, g))
        assert _swap_inverse(np.linalg.inv(M), f, g) == pytest.approx(expected, abs=1e-9)


def test_i_optimal_matches_exhaustive_search_on_a_fine_grid():
    # Independent computation: the best 4-run design for a quadratic in one factor
    # among all multisets of a 21-point grid, by the average prediction variance
    # over [-1, 1] (moments in closed form: E[x^2] = 1/3, E[x^4] = 1/5).
    f = _matrix("quadratic", 1)
    W = np.array([[1, 0, 1 / 3], [0, 1 / 3, 0], [1 / 3, 0, 1 / 5]])
    grid = np.linspace(-1, 1, 21)[:, None]
    Fg = f(grid)
    best = np.inf
    for c in itertools.combinations_with_replacement(range(21), 4):
        M = Fg[list(c)].T @ Fg[list(c)]
        if abs(np.linalg.det(M)) < 1e-9:
            continue
        best = min(best, float(np.trace(np.linalg.solve(M, W))))
    result = coordinate_exchange(f, _box(1), 4, criterion="i", moments=W, seed=2)
    assert result.value <= best + 1e-9


def test_rules_and_levels_are_respected():
    f = _matrix("interactions", 3)
    region = Region(lower=[-1, -1, 0], upper=[1, 1, 0], levels=(None, None, (0.0, 1.0, 2.0)),
                    A=[[1.0, 1.0, 0.0]], b=[0.5], rule_names=("a + b <= 0.5",))
    terms, _ = model_terms(["x0", "x1", "x2", "x0:x1"], ["x0", "x1", "x2"])
    result = coordinate_exchange(lambda X: model_matrix(X, terms), region, 10, seed=3)
    X = result.coded
    assert region.feasible(X).all()
    assert np.all(X[:, 0] + X[:, 1] <= 0.5 + 1e-9)
    assert set(np.unique(X[:, 2])) <= {0.0, 1.0, 2.0}
    # the rule binds: some runs sit on its boundary
    assert np.isclose(X[:, 0] + X[:, 1], 0.5).any()


def test_same_seed_same_design_and_fixed_runs_stay():
    f = _matrix("quadratic", 2)
    fixed = np.array([[-1.0, -1.0], [1.0, 1.0], [0.0, 0.0]])
    a = coordinate_exchange(f, _box(2), 5, seed=4, fixed=fixed)
    b = coordinate_exchange(f, _box(2), 5, seed=4, fixed=fixed)
    assert np.array_equal(a.coded, b.coded)
    F = f(np.vstack([fixed, a.coded]))
    assert a.value == pytest.approx(np.linalg.slogdet(F.T @ F)[1])


def test_too_few_runs_names_the_minimum():
    with pytest.raises(PlanError, match="at least 6 runs"):
        coordinate_exchange(_matrix("quadratic", 2), _box(2), 5)
    with pytest.raises(PlanError, match="criterion 'a'"):
        coordinate_exchange(_matrix("main", 2), _box(2), 5, criterion="a")


def test_region_with_no_feasible_point_names_the_rules():
    region = _box(2, A=[[1.0, 0.0], [-1.0, 0.0]], b=[-0.5, -0.5],
                  rule_names=("a <= 10", "a >= 20"))
    with pytest.raises(PlanError, match="'a <= 10'; 'a >= 20'"):
        region.check()


def test_region_sample_is_uniform_inside_the_rules():
    # A triangle x0 + x1 <= 0 in the square: half the area, centroid (-1/3, -1/3)
    # (closed form); hit-and-run is used when the rules keep a sliver.
    region = _box(2, A=[[1.0, 1.0]], b=[0.0])
    X = region.sample(20000, np.random.default_rng(0))
    assert region.feasible(X).all()
    assert X.mean(axis=0) == pytest.approx([-1 / 3, -1 / 3], abs=0.02)
    sliver = _box(2, A=[[1.0, 1.0], [-1.0, -1.0]], b=[-1.998, 2.0])  # near the corner
    Y = sliver.sample(500, np.random.default_rng(1))
    assert sliver.feasible(Y).all() and len(Y) == 500


def test_region_moments_closed_form():
    # E over [-1, 1]^2 of (1, x, y, xy, ...): E[x^2] = 1/3 (closed form).
    W = region_moments(_matrix("main", 2), _box(2), points=40000, seed=0)
    assert W[0, 0] == 1.0
    assert W[1, 1] == pytest.approx(1 / 3, abs=0.01)
    assert W[1, 2] == pytest.approx(0.0, abs=0.01)
