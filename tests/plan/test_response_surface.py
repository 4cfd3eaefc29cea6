"""Central composite and Box-Behnken layouts (core/plan/composite.py, boxbehnken.py)."""
import itertools

import numpy as np
import pytest

from tradeoff.errors import PlanError
from tradeoff.model.terms import model_matrix, model_terms
from tradeoff.plan.boxbehnken import BOX_BEHNKEN_GROUPS, box_behnken_points
from tradeoff.plan.composite import axial_alpha, composite_points


def _quadratic(k):
    terms, _ = model_terms("quadratic", [f"x{i}" for i in range(k)])
    return terms


def _factorial(k):
    return np.array(list(itertools.product([-1.0, 1.0], repeat=k)))


@pytest.mark.parametrize("k, F, alpha", [(2, 4, 1.414), (3, 8, 1.682), (4, 16, 2.000),
                                         (5, 32, 2.378), (5, 16, 2.000), (6, 32, 2.378)])
def test_rotatable_alpha_table(k, F, alpha):
    # NIST/SEMATECH e-Handbook 5.3.3.6.1, table of alpha for rotatability (from memory).
    assert axial_alpha("rotatable", k, F, center_factorial=4, center_axial=0) == \
        pytest.approx(alpha, abs=5e-4)


@pytest.mark.parametrize("k, center", [(2, 1), (2, 4), (3, 1), (3, 4), (4, 2)])
def test_orthogonal_alpha_uncorrelates_the_squares(k, center):
    # Independent check: with the orthogonal alpha the square terms' estimates are
    # uncorrelated ((X'X)^-1 diagonal among them). Myers, Montgomery & Anderson-Cook
    # tabulate alpha = 1.000 (k = 2) and 1.215 (k = 3) with one centre run (from memory).
    X, point, block, a = composite_points(_factorial(k), alpha="orthogonal", center=center)
    terms = _quadratic(k)
    F = model_matrix(X, terms)
    C = np.linalg.inv(F.T @ F)
    sq = [i for i, t in enumerate(terms) if t.is_square]
    off = C[np.ix_(sq, sq)] - np.diag(np.diag(C[np.ix_(sq, sq)]))
    assert np.abs(off).max() < 1e-12
    if center == 1:
        assert a == pytest.approx({2: 1.000, 3: 1.215}[k], abs=5e-4)
    assert point.count("axial") == 2 * k and point.count("centre") == center


def test_orthogonal_blocks():
    # Orthogonal blocking (Montgomery, Design and Analysis of Experiments, from
    # memory): k = 2, 3 centre runs per block gives alpha = sqrt(2) = 1.414; in
    # general each block's mean of x_i^2 is the same, so block effects are
    # orthogonal to the square terms (checked directly).
    X, point, block, a = composite_points(_factorial(2), alpha="orthogonal", center=3,
                                          blocks=2)
    assert a == pytest.approx(np.sqrt(2))
    for k in (3, 4):
        X, point, block, a = composite_points(_factorial(k), alpha="orthogonal", center=2,
                                              blocks=2)
        means = [(X[block == b] ** 2).mean(axis=0) for b in (1, 2)]
        assert means[0] == pytest.approx(means[1])


def test_alpha_refusals():
    for bad in ("wide", "-1", "0", "nan"):
        with pytest.raises(PlanError, match="--alpha"):
            axial_alpha(bad, 2, 4, center_factorial=4, center_axial=0)
    assert axial_alpha("1.3", 2, 4, center_factorial=4, center_axial=0) == 1.3
    with pytest.raises(PlanError, match="1 block or in 2"):
        composite_points(_factorial(2), blocks=3)


@pytest.mark.parametrize("k, runs", [(3, 15), (4, 27), (5, 43), (6, 51), (7, 59)])
def test_box_behnken_runs_and_quadratic_estimable(k, runs):
    # Box & Behnken (1960): 12, 24, 40, 48 and 56 edge runs for 3..7 factors; the
    # 3-factor design with 3 centre runs has 15 (NIST/SEMATECH e-Handbook 5.3.3.6.2).
    X, point, block = box_behnken_points(k)
    assert len(X) == runs and point.count("centre") == 3
    assert set(np.unique(X)) == {-1.0, 0.0, 1.0}
    F = model_matrix(X, _quadratic(k))
    assert np.linalg.matrix_rank(F) == F.shape[1]
    # every factor in the same number of groups; every pair of factors meets
    groups = BOX_BEHNKEN_GROUPS[k]
    counts = np.bincount([j for g in groups for j in g], minlength=k)
    assert len(set(counts.tolist())) == 1
    for a, b in itertools.combinations(range(k), 2):
        assert any(a in g and b in g for g in groups)


@pytest.mark.parametrize("k, rotatable", [(3, False), (4, True), (5, False), (7, True)])
def test_box_behnken_rotatability(k, rotatable):
    # Box & Behnken (1960): the 4- and 7-factor designs are rotatable; rotatable
    # means sum x_i^4 = 3 sum x_i^2 x_j^2 (Box & Hunter 1957 moment condition).
    X, _, _ = box_behnken_points(k)
    pure = (X[:, 0] ** 4).sum()
    mixed = (X[:, 0] ** 2 * X[:, 1] ** 2).sum()
    assert bool(np.isclose(pure, 3 * mixed)) is rotatable


@pytest.mark.parametrize("k, blocks", [(4, 3), (5, 2), (6, 2), (7, 2)])
def test_box_behnken_blocks_are_orthogonal(k, blocks):
    # Blocks orthogonal to every term of the quadratic model (Box & Behnken 1960's
    # condition): every centred model column is orthogonal to each block indicator.
    X, point, block = box_behnken_points(k, blocks=blocks)
    assert sorted(set(block.tolist())) == list(range(1, blocks + 1))
    F = model_matrix(X, _quadratic(k))[:, 1:]
    B = np.column_stack([(block == b).astype(float) for b in range(1, blocks + 1)])
    assert np.abs(B.T @ (F - F.mean(axis=0))).max() < 1e-9


def test_box_behnken_refusals():
    with pytest.raises(PlanError, match="3 to 7 numeric factors, and this study has 2"):
        box_behnken_points(2)
    with pytest.raises(PlanError, match="1 or 3 block"):
        box_behnken_points(4, blocks=2)
    with pytest.raises(PlanError, match="1 block"):
        box_behnken_points(3, blocks=2)
