"""Individual and overall desirability against values worked by hand from the
published formulas, and against the formulas written out independently in
tests/reference_desirability.py: Derringer & Suich (1980), Journal of Quality
Technology 12(4), 214-219 (individual), and Derringer (1994), Quality Progress
27(6) (weighted geometric mean)."""
from __future__ import annotations

import numpy as np
import pytest

from reference_desirability import d_maximize, d_minimize, d_target, overall
from tradeoff.search.desirability import combine_desirability, desirability, limits, shortfall
from tradeoff.study.spec import Goal


def test_maximize_one_sided_with_shape():
    # d = ((y - L) / (U - L)) ** s between L and U; 0 below L, 1 above U. Limits
    # and 129.5 from Derringer & Suich (1980)'s abrasion index (from memory).
    g = Goal("maximize", lower=120, upper=170)
    assert desirability([100, 120, 129.5, 170, 200], g) == pytest.approx(
        [0.0, 0.0, 9.5 / 50, 1.0, 1.0])
    g2 = Goal("maximize", lower=120, upper=170, shape=2)
    assert desirability(145, g2) == pytest.approx(0.25)       # (25/50)^2
    g_half = Goal("maximize", lower=120, upper=170, shape=0.5)
    assert desirability(132.5, g_half) == pytest.approx(0.5)  # (12.5/50)^0.5


def test_minimize_one_sided_with_shape():
    # d = ((U - y) / (U - L)) ** s between L and U; 1 below L, 0 above U.
    g = Goal("minimize", lower=20, upper=35)
    assert desirability([10, 20, 23, 35, 40], g) == pytest.approx(
        [1.0, 1.0, 0.8, 0.0, 0.0])
    g3 = Goal("minimize", lower=20, upper=35, shape=3)
    assert desirability(27.5, g3) == pytest.approx(0.125)      # 0.5^3


def test_target_two_sided_with_both_shapes():
    # Derringer & Suich (1980), elongation at break: L=400, T=500, U=600, s=t=1
    # (from memory).
    g = Goal("target", lower=400, target=500, upper=600)
    assert desirability([350, 400, 465.7, 500, 550, 600, 650], g) == pytest.approx(
        [0.0, 0.0, 0.657, 1.0, 0.5, 0.0, 0.0])
    g2 = Goal("target", lower=400, target=500, upper=600, shape_below=0.5, shape_above=2)
    assert desirability(450, g2) == pytest.approx(0.5 ** 0.5)
    assert desirability(550, g2) == pytest.approx(0.25)


def test_target_with_unequal_widths_and_shapes():
    # Derringer & Suich (1980), two-sided with widths that differ: 8 - 2 = 6 below
    # the target, 10 - 8 = 2 above, s = 0.5 below and t = 3 above. Swapping the
    # widths or the shapes changes these values. By hand: y = 5 gives (3/6)^0.5,
    # y = 9 gives (1/2)^3, y = 3.5 gives (1.5/6)^0.5 = 0.5.
    g = Goal("target", lower=2, target=8, upper=10, shape_below=0.5, shape_above=3)
    assert desirability([5.0, 9.0, 3.5, 8.0, 2.0, 10.0], g) == pytest.approx(
        [0.5 ** 0.5, 0.125, 0.5, 1.0, 0.0, 0.0], rel=1e-12)
    # and everywhere, against the formulas written out in tests/reference_desirability.py
    y = np.linspace(0, 12, 241)
    assert np.allclose(desirability(y, g), d_target(y, 2, 8, 10, 0.5, 3), rtol=1e-12, atol=0)


def test_one_sided_curves_against_the_written_out_formulas():
    # Derringer & Suich (1980), with shapes on either side of 1
    y = np.linspace(100, 200, 201)
    for s in (0.3, 1.0, 2.5):
        assert np.allclose(desirability(y, Goal("maximize", lower=120, upper=170, shape=s)),
                           d_maximize(y, 120, 170, s), rtol=1e-12, atol=0)
        assert np.allclose(desirability(y, Goal("minimize", lower=120, upper=170, shape=s)),
                           d_minimize(y, 120, 170, s), rtol=1e-12, atol=0)


def test_range_and_none():
    g = Goal("range", lower=0.5, upper=0.6)
    assert desirability([0.49, 0.5, 0.55, 0.6, 0.61], g).tolist() == [0, 1, 1, 1, 0]
    assert desirability([1.0, -5.0], Goal()).tolist() == [1.0, 1.0]


def test_vectorised_shapes_and_blanks():
    g = Goal("maximize", lower=0, upper=10)
    y = np.arange(12.0).reshape(3, 4)
    d = desirability(y, g)
    assert d.shape == (3, 4)
    assert d[1, 1] == pytest.approx(0.5)
    assert desirability([np.nan], g).tolist() == [0.0]


def test_overall_desirability_published_example():
    # Derringer & Suich (1980) optimum predictions y1=129.5, y2=1300, y3=465.7,
    # y4=68.0 give D = 0.583 as published (unweighted geometric mean; the values
    # from memory, then checked: a quadratic fit of the table reproduces them).
    d = np.array([[desirability(129.5, Goal("maximize", lower=120, upper=170)),
                   desirability(1300, Goal("maximize", lower=1000, upper=1300)),
                   desirability(465.7, Goal("target", lower=400, target=500, upper=600)),
                   desirability(68.0, Goal("target", lower=60, target=67.5, upper=75))]])
    hand = (0.19 * 1.0 * 0.657 * (7 / 7.5)) ** 0.25
    assert combine_desirability(d)[0] == pytest.approx(hand)
    assert combine_desirability(d)[0] == pytest.approx(0.583, abs=0.002)


def test_weighted_geometric_mean_and_zero():
    # Derringer (1994): D = (prod d_i^w_i)^(1/sum w); by hand (0.25^2 * 1)^(1/3).
    d = np.array([[0.25, 1.0], [0.0, 0.9], [0.5, 0.5]])
    D = combine_desirability(d, [2, 1])
    assert D == pytest.approx([0.0625 ** (1 / 3), 0.0, 0.5])
    # unequal weights on many rows, against the product written out
    rng = np.random.default_rng(3)
    d = rng.uniform(0, 1, (50, 4))
    w = [0.5, 2.0, 1.0, 3.0]
    assert np.allclose(combine_desirability(d, w), overall(d.T, w), rtol=1e-12, atol=0)


def test_limits_and_shortfall():
    g = Goal("maximize", lower=120, upper=170)
    assert limits(g) == (120, np.inf)
    assert shortfall([110, 125, 200], g) == pytest.approx([0.2, 0.0, 0.0])
    t = Goal("target", lower=400, target=500, upper=600)
    assert shortfall([350, 500, 700], t) == pytest.approx([0.25, 0.0, 0.5])
    m = Goal("minimize", lower=20, upper=35)
    assert shortfall([50], m) == pytest.approx([1.0])
