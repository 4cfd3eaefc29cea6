"""The trade-off frontier, checked against frontiers computed outside the tool.

Sources:
- Pareto dominance and the epsilon-constraint method: Haimes, Lasdon & Wismer
  (1971), IEEE Trans. Systems, Man and Cybernetics 1(3), 296-297 (from memory).
- The additive epsilon indicator: Zitzler, Thiele, Laumanns, Fonseca & da Fonseca
  (2003), "Performance assessment of multiobjective optimizers: an analysis and
  review", IEEE Trans. Evolutionary Computation 7(2), 117-132: I(A, R) is the
  least e such that every reference point r is weakly dominated by some a + e
  (from memory).
- The closed form: for two isotropic quadratics -|x - p1|^2 and -|x - p2|^2 the
  non-dominated set is the segment p1..p2 (any point off it is beaten by its
  projection onto the segment, which is nearer both optima): worked out here.
- Exchange rate: finite differences of the closed-form frontier (common practice).
"""
from __future__ import annotations

import subprocess
import sys
from types import SimpleNamespace

import numpy as np
import pandas as pd
import pytest

from reference_desirability import study_d
from search_problems import design_matrix, random_problem
from tradeoff.derive.load import study_from_dict
from tradeoff.errors import SearchError
from tradeoff.search.frontier import frontier
from tradeoff.search.frontier_result import knee_index

P1, P2 = np.array([-0.6, -0.4]), np.array([0.6, 0.5])
U = (P2 - P1) / np.linalg.norm(P2 - P1)
# The third response y3 = U . x (coded) must stay below its value 70 % of the way
# from p1 to p2. Its limit line is square to the segment, so every point of that
# line is beaten by the segment's point on it (nearer both optima): the cut
# frontier is the segment from p1 to that point, and nothing else.
T_CUT = 0.7
CUT = float(U @ P1 + T_CUT * np.linalg.norm(P2 - P1))


class _Quadratic:
    """A response with known coefficients on the quadratic columns of two factors."""

    def __init__(self, coef):
        self.coef_ = np.asarray(coef, dtype=float)
        self.residuals_ = pd.Series(np.linspace(-1, 1, 12) * 0.01,
                                    index=[str(i) for i in range(12)])
        self.pred_r2_ = 0.9

    def predict(self, X):
        return design_matrix(X, "quadratic") @ self.coef_

    def predictive(self, X):
        mean = self.predict(X)
        return mean, np.full(len(mean), 0.001), 0.01, 10

    def inverse_transform(self, y):
        return np.asarray(y, dtype=float)

    def intervals(self, X, level=None):
        mean = self.predict(X)
        return pd.DataFrame({"predicted": mean, "ci_low": mean - 0.002,
                             "ci_high": mean + 0.002, "pi_low": mean - 0.02,
                             "pi_high": mean + 0.02})


def _bowl(p):
    # -(x1 - a)^2 - (x2 - b)^2 on the columns 1, x1, x2, x1 x2, x1^2, x2^2
    a, b = p
    return [-(a * a + b * b), 2 * a, 2 * b, 0.0, -1.0, -1.0]


def closed_form_study():
    spec = {"study": {"name": "two bowls"},
            "factors": [{"name": "x1", "low": 0, "high": 10},
                        {"name": "x2", "low": 0, "high": 10}],
            "responses": [
                {"name": "y1", "goal": "maximize", "lower": -10, "upper": 0},
                {"name": "y2", "goal": "maximize", "lower": -10, "upper": 0},
                {"name": "y3", "goal": "minimize", "lower": -2, "upper": CUT}]}
    study = study_from_dict(spec, with_data=False)
    models = {"y1": _Quadratic(_bowl(P1)), "y2": _Quadratic(_bowl(P2)),
              "y3": _Quadratic([0, U[0], U[1], 0, 0, 0])}
    return study, SimpleNamespace(study=study, models=models, skipped={})


@pytest.fixture(scope="module")
def bowls():
    study, fit = closed_form_study()
    return study, fit, frontier(study, ["y1", "y2"], points=15, seed=0, fit=fit, draws=500)


def test_closed_form_segment_cut_by_a_third_limit(bowls):
    study, fit, front = bowls
    X = np.array([[p["coded"]["x1"], p["coded"]["x2"]] for p in front.points])
    # the cut segment: from p1 to where y3 reaches its limit (worked out above)
    end = P1 + T_CUT * (P2 - P1)
    u = (end - P1) / np.linalg.norm(end - P1)
    along = (X - P1) @ u
    off = np.abs((X - P1) @ np.array([-u[1], u[0]]))
    assert off.max() < 1e-3  # every point on the segment
    assert along.min() > -1e-3 and along.max() < np.linalg.norm(end - P1) + 1e-3
    assert (X @ U).max() <= CUT + 1e-6  # the third response's limit holds
    # both ends are reached: y1's optimum and the cut
    assert np.linalg.norm(X[0] - P1) < 2e-3
    assert np.linalg.norm(X[-1] - end) < 2e-3
    # spread evenly: no step along the segment much longer than an even share
    steps = np.diff(np.sort(along))
    assert steps.max() < 2.0 * np.linalg.norm(end - P1) / (len(X) - 1)
    assert len(front.points) == 15


def test_exchange_rate_against_finite_differences(bowls):
    study, fit, front = bowls
    L = np.linalg.norm(P2 - P1)
    ex = front.exchange
    assert len(ex) >= 10
    for row in ex.itertuples():
        # on the segment y1 = -(tL)^2, so t = sqrt(-y1)/L and y2 = -((1 - t) L)^2
        t0, t1 = (np.sqrt(max(-v, 0.0)) / L for v in (row.from_a, row.to_a))
        y2_0, y2_1 = -((1 - t0) * L) ** 2, -((1 - t1) * L) ** 2
        fd = -(y2_1 - y2_0) / (row.to_a - row.from_a)
        assert row.rate == pytest.approx(fd, rel=2e-3, abs=1e-4)
        assert row.from_b == pytest.approx(y2_0, abs=2e-4)
        # and the secant lies between the derivatives -dy2/dy1 = (1 - t)/t at its ends
        lo, hi = sorted((1 - t) / t if t > 0 else np.inf for t in (t0, t1))
        assert lo - 1e-3 <= row.rate <= hi + 1e-3


def test_knee_is_greatest_curvature_written_out():
    # a quarter circle plus a straight tail: the bend is sharpest at the corner (1, 1)
    F = np.array([[0, 3], [1, 2.9], [2, 2.7], [2.7, 2.0], [2.9, 1.0], [3, 0]], float)
    # Menger curvature by the circumradius R = abc / (4 area), written out here
    G = (F - F.min(0)) / np.ptp(F, 0)
    kappa = []
    for i in range(1, len(G) - 1):
        a, b, c = G[i - 1], G[i], G[i + 1]
        area = abs((b - a)[0] * (c - a)[1] - (b - a)[1] * (c - a)[0]) / 2
        sides = np.linalg.norm(b - a) * np.linalg.norm(c - b) * np.linalg.norm(c - a)
        kappa.append(4 * area / sides)
    assert knee_index(F) == int(np.argmax(kappa)) + 1
    assert knee_index(F[:2]) is None


def _grid_front(study, fit, names, n=401):
    """A dense grid's acceptable, non-dominated goal values (larger better), in the test."""
    axis = np.linspace(-1, 1, n)
    X = np.array(np.meshgrid(axis, axis, indexing="ij")).reshape(2, -1).T
    cols, d = study_d(study, fit, X)
    ok = (d > 0).all(axis=1)
    F = []
    for nm in names:
        spec = next(r for r in study.spec["responses"] if r["name"] == nm)
        y = fit.models[nm].predict(X[ok])
        F.append(y if spec["goal"] == "maximize" else -y if spec["goal"] == "minimize"
                 else -np.abs(y - spec["target"]))
    F = np.column_stack(F)
    order = np.lexsort((-F[:, 1], -F[:, 0]))  # best first goal first, ties best second
    keep, best_b = [], -np.inf
    for i in order:
        if F[i, 1] > best_b:
            keep.append(i)
            best_b = F[i, 1]
    return F[keep]


def _merits(front, study):
    out = []
    for p in front.points:
        row = []
        for nm in front.between:
            spec = next(r for r in study.spec["responses"] if r["name"] == nm)
            y = p["predicted"][nm]
            row.append(y if spec["goal"] == "maximize" else -y if spec["goal"] == "minimize"
                       else -abs(y - spec["target"]))
        out.append(row)
    return np.array(out)


@pytest.mark.parametrize("seed", [103, 111, 115])
def test_dense_grid_front_is_matched(seed):
    study, fit = random_problem(seed, k=2, m=3, kind="quadratic")
    names = [r.name for r in study.responses][:2]
    front = frontier(study, names, points=21, seed=0, fit=fit, draws=200)
    R = _grid_front(study, fit, names)
    A = _merits(front, study)
    span = np.ptp(R, axis=0)
    # none of the tool's points is dominated by a grid point (beyond a hair)
    tol = 1e-4 * span
    for a in A:
        assert not np.any(np.all(R >= a + tol, axis=1) & np.any(R > a + tol, axis=1))
    # additive epsilon indicator (Zitzler et al. 2003), goals scaled by their range:
    # the least e such that each grid point r has a tool point a with a + e >= r
    eps = np.max(np.min(np.max((R[:, None, :] - A[None, :, :]) / span, axis=2), axis=1))
    assert eps <= 0.05
    # every point is acceptable by the published formulas: every d > 0
    X = np.array([[p["coded"][f.name] for f in study.factors] for p in front.points])
    _, d = study_d(study, fit, X)
    assert (d > 0).all()
    assert [p["D"] for p in front.points] == pytest.approx(
        [float(np.prod(r ** (np.array([g["weight"] for g in study.spec["responses"]])
                             / sum(g["weight"] for g in study.spec["responses"]))))
         for r in d], rel=1e-9)


def test_three_goals_are_mutually_non_dominated():
    study, fit = random_problem(105, k=3, m=4, kind="quadratic")
    names = [r.name for r in study.responses][:3]
    front = frontier(study, names, points=15, seed=0, fit=fit, draws=200)
    A = _merits(front, study)
    for i, a in enumerate(A):
        others = np.delete(A, i, axis=0)
        assert not np.any(np.all(others >= a + 1e-9, axis=1))
    assert front.knee is not None and 0 <= front.knee["index"] < len(A)


def test_same_seed_same_frontier(bowls):
    study, fit, front = bowls
    again = frontier(study, ["y1", "y2"], points=15, seed=0, fit=fit, draws=500)
    assert again.to_dict() == front.to_dict()


def test_json_shape(bowls):
    data = bowls[2].to_dict()
    assert {"between", "points", "d_optimum", "knee", "exchange"} <= set(data)
    p = data["points"][0]
    assert set(p) == {"settings", "coded", "predicted", "pi", "d", "D", "chance_all"}
    assert set(p["d"]) == {"y1", "y2", "y3"}
    assert {"nearest", "on_frontier", "position"} <= set(data["d_optimum"])


def test_bad_goals_are_refused():
    study, fit = closed_form_study()
    with pytest.raises(SearchError, match="no goal named 'y9'"):
        frontier(study, ["y1", "y9"], fit=fit)
    with pytest.raises(SearchError, match="named twice"):
        frontier(study, ["y1", "y1"], fit=fit)
    with pytest.raises(SearchError, match="two or three goals"):
        frontier(study, ["y1"], fit=fit)
    with pytest.raises(SearchError, match="'x1' has no goal"):
        frontier(study, ["y1", "x1"], fit=fit)


def test_limits_that_leave_no_point_name_the_goals():
    study, fit = closed_form_study()
    spec = dict(study.spec)
    spec["responses"] = [dict(r) for r in spec["responses"]]
    spec["responses"][2].update(lower=-5, upper=-3)  # |y3| <= |x| <= 1.5: never below -3
    bad = study_from_dict(spec, with_data=False)
    fit.study = bad
    with pytest.raises(SearchError, match="'y3'"):
        frontier(bad, ["y1", "y2"], fit=fit)


def test_cli_demo_and_refusals(tmp_path):
    from tradeoff.cli import main

    out = tmp_path / "front.csv"
    assert main(["frontier", "demo_data/snack_bar.toml", "--between", "liking,cost",
                 "--points", "9", "--out", str(out)]) == 0
    table = pd.read_csv(out)
    assert len(table) <= 9 and {"liking", "cost", "D", "knee"} <= set(table.columns)
    run = subprocess.run([sys.executable, "-m", "tradeoff.cli", "frontier",
                          "demo_data/snack_bar.toml", "--between", "liking,nothing"],
                         capture_output=True, text=True)
    assert run.returncode == 2
    assert run.stderr.count("\n") == 1 and "no goal named 'nothing'" in run.stderr


def test_demo_points_are_in_frontier_order_and_the_optimum_has_the_best_d():
    """On the demo, every printed point is non-dominated among the printed points, the
    points run monotonically from one goal's end to the other's, and the D optimum has
    at least every point's D (it maximises D over the same region: common practice,
    Derringer & Suich 1980). Guards the result keeping the frontier's order (the
    search's ranking by D must not reorder it)."""
    from pathlib import Path

    from tradeoff import load_study

    study = load_study(Path(__file__).resolve().parents[2] / "demo_data" / "snack_bar.toml")
    fr = frontier(study, ["liking", "cost"], points=15, seed=0)
    liking = np.array([p["predicted"]["liking"] for p in fr.points])
    cost = np.array([p["predicted"]["cost"] for p in fr.points])
    steps = np.diff(liking)
    assert (steps <= 1e-9).all() or (steps >= -1e-9).all()
    for i in range(len(liking)):
        beaten = (liking >= liking[i]) & (cost <= cost[i]) & (
            (liking > liking[i] + 1e-9) | (cost < cost[i] - 1e-9))
        assert not beaten.any()
    assert fr.d_optimum["D"] >= max(p["D"] for p in fr.points) - 1e-6


def test_knee_ignores_the_jump_between_pieces():
    # Two straight pieces with a jump between them (a seam where one level of a
    # categorical factor hands over to the other) and one gentle bend inside the
    # second piece. Worked out here: by curvature alone the sharpest turn is at the
    # seam (point 3 or 4); the knee within the pieces is the bend at point 6.
    F = np.array([[10, 0.0], [9, 0.2], [8, 0.4], [7, 0.6],   # piece A, straight
                  [6.9, 3.0], [6, 3.3], [5, 3.6],            # piece B after the jump
                  [3, 4.0], [1, 4.4]], float)                # bend at (5, 3.6)
    pieces = ["A"] * 4 + ["B"] * 5
    assert knee_index(F) in (3, 4)
    assert knee_index(F, pieces) == 6
    # one piece only: the same as without labels (Menger curvature, written out above)
    assert knee_index(F, ["A"] * 9) == knee_index(F)


def test_small_amounts_are_written_without_an_exponent():
    """A lab reads 0.0000159, not 1.59e-05 (common practice in lab reports)."""
    from tradeoff.search.frontier_result import _plain

    assert _plain(1.59e-05) == "0.0000159"
    assert _plain(0.25) == "0.25" and _plain(0.0) == "0"
