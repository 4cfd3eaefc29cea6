"""Prediction-variance figures of a plan (core/plan/variance.py), against closed forms."""
import itertools

import numpy as np
import pytest

from tradeoff.errors import PlanError
from tradeoff.model.terms import model_matrix, model_terms
from tradeoff.plan.region import Region
from tradeoff.plan.variance import prediction_variance


def _matrix(model, k):
    terms, _ = model_terms(model, [f"x{i}" for i in range(k)])
    return lambda X: model_matrix(X, terms)


def test_two_level_factorial_first_order_closed_forms():
    # 2^k factorial, first-order model: SPV(x) = 1 + |x|^2 (closed form), so over
    # the cube I = 1 + k/3, G = 1 + k, and D-efficiency is 100 % (X'X = nI).
    k = 3
    X = np.array(list(itertools.product([-1.0, 1.0], repeat=k)))
    region = Region(lower=-np.ones(k), upper=np.ones(k), levels=(None,) * k)
    pv = prediction_variance(_matrix("main", k), X, region, points=40000, seed=1)
    assert pv.d_efficiency == pytest.approx(100.0)
    assert pv.g_max == pytest.approx(1 + k)
    assert pv.i_average == pytest.approx(1 + k / 3, abs=0.01)


def test_fds_median_one_factor():
    # One factor, runs at -1 and +1, first-order model: SPV = 1 + x^2 with x
    # uniform on [-1, 1]; its quantile q is 1 + q^2 (closed form): 1.01, 1.25, 1.81.
    region = Region(lower=[-1.0], upper=[1.0], levels=(None,))
    pv = prediction_variance(_matrix("main", 1), np.array([[-1.0], [1.0]]), region,
                             points=40000, seed=2)
    for q, v in pv.quantiles.items():
        assert v == pytest.approx(1 + q ** 2, abs=0.02)
    fraction, spv = pv.curve
    assert fraction[-1] == 1.0 and np.all(np.diff(spv) >= 0)


def test_constrained_region_average():
    # Region x <= 0 of [-1, 1]: SPV = 1 + x^2 for runs at -1, +1, so the average is
    # 1 + 1/3 still (x uniform on [-1, 0]), and G over the region stays 2 (at -1).
    region = Region(lower=[-1.0], upper=[1.0], levels=(None,), A=[[1.0]], b=[0.0])
    pv = prediction_variance(_matrix("main", 1), np.array([[-1.0], [1.0]]), region,
                             points=40000, seed=3)
    assert pv.i_average == pytest.approx(4 / 3, abs=0.01)
    assert pv.g_max == pytest.approx(2.0)


def test_singular_plan_is_refused():
    region = Region(lower=[-1.0, -1.0], upper=[1.0, 1.0], levels=(None, None))
    with pytest.raises(PlanError, match="cannot estimate"):
        prediction_variance(_matrix("interactions", 2), np.array([[-1.0, -1.0], [1.0, 1.0],
                                                                   [0.0, 0.0]]), region)
