"""Mixture designs against closed forms, a published example and brute force.

Counts: the {q, m} simplex-lattice has C(q + m - 1, m) blends, the
simplex-centroid 2^q - 1 (Cornell (2002), Experiments with Mixtures, 3rd ed.,
secs. 2.3 and 2.12). Extreme vertices: McLean and Anderson (1966),
Technometrics 8, flare example (magnesium 0.40-0.60, sodium nitrate
0.10-0.50, strontium nitrate 0.10-0.50, binder 0.03-0.08): 8 vertices and 6
two-dimensional face centroids (from memory); and a brute-force enumeration of
every intersection of q - 1 bound planes with the total's plane.
"""
from __future__ import annotations

import itertools
import math
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

from tradeoff import PlanError
from tradeoff.cli import main
from tradeoff.plan.mixture_designs import round_to_total, simplex_centroid, simplex_lattice
from tradeoff.study.mixture_region import extreme_vertices, face_centroids

DATA = Path(__file__).resolve().parents[1] / "data"
DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"
FLARE = ([0.40, 0.10, 0.10, 0.03], [0.60, 0.50, 0.50, 0.08])


@pytest.mark.parametrize("q,m", [(3, 2), (3, 3), (4, 2), (5, 3)])
def test_lattice_size_and_sums(q, m):
    L = simplex_lattice(q, m)
    assert len(L) == math.comb(q + m - 1, m)
    np.testing.assert_allclose(L.sum(axis=1), 1.0)
    assert set(np.round(L.ravel() * m, 9)) <= set(range(m + 1))


def test_centroid_size():
    for q in (3, 4, 5):
        C = simplex_centroid(q)
        assert len(C) == 2 ** q - 1
        np.testing.assert_allclose(C.sum(axis=1), 1.0)


def _brute_vertices(lows, highs, total):
    """Every point where q - 1 bound planes meet the total's plane, kept if feasible."""
    q = len(lows)
    planes = [(j, lows[j]) for j in range(q)] + [(j, highs[j]) for j in range(q)]
    out = []
    for combo in itertools.combinations(planes, q - 1):
        A = np.zeros((q, q))
        b = np.zeros(q)
        for r, (j, v) in enumerate(combo):
            A[r, j], b[r] = 1.0, v
        A[-1], b[-1] = 1.0, total
        if abs(np.linalg.det(A)) < 1e-12:
            continue
        x = np.linalg.solve(A, b)
        if np.all(x >= np.array(lows) - 1e-9) and np.all(x <= np.array(highs) + 1e-9):
            out.append(np.round(x, 9))
    return np.unique(np.array(out), axis=0)


def _same_rows(a, b):
    """The same set of points, each within 1e-8 of one in the other set."""
    if len(a) != len(b):
        return False
    d = np.abs(a[:, None, :] - b[None, :, :]).max(axis=2)
    return bool((d.min(axis=1) < 1e-8).all() and (d.min(axis=0) < 1e-8).all())


def test_flare_example_vertices_and_faces():
    lows, highs = FLARE
    V = extreme_vertices(lows, highs, 1.0)
    assert len(V) == 8  # McLean and Anderson (1966) (from memory)
    assert len(face_centroids(V, lows, highs, 1.0, 2)) == 6  # (from memory)
    assert _same_rows(V, _brute_vertices(lows, highs, 1.0))


@pytest.mark.parametrize("seed", range(6))
def test_vertices_against_brute_force(seed):
    rng = np.random.default_rng(seed)
    q = int(rng.integers(3, 6))
    lows = rng.uniform(0, 0.15, q)
    highs = lows + rng.uniform(0.2, 0.7, q)
    if highs.sum() < 1:
        highs = highs / highs.sum() * 1.2
    V = extreme_vertices(lows, highs, 1.0)
    assert _same_rows(V, _brute_vertices(lows, highs, 1.0))
    # each edge centroid is the midpoint of two vertices
    for e in face_centroids(V, lows, highs, 1.0, 1):
        np.testing.assert_allclose(e.sum(), 1.0)


def test_rounding_lands_on_the_stated_component():
    A = np.array([[33.33333, 33.33333, 33.33334], [12.345678, 50.0, 37.654322]])
    R = round_to_total(A, 100.0, balance=2, decimals=2)
    np.testing.assert_allclose(R.sum(axis=1), 100.0, atol=1e-9)
    np.testing.assert_allclose(R[:, :2], [[33.33, 33.33], [12.35, 50.0]])


def test_cli_vertices_plan_crossed_with_temperature(tmp_path, capsys):
    out = tmp_path / "plan.csv"
    assert main(["plan", str(DEMO), "--design", "vertices", "--centroids",
                 "edges,overall", "--center", "2", "--out", str(out)]) == 0
    text = capsys.readouterr().out
    assert "takes the rounding" in text
    sheet = pd.read_csv(out)
    amounts = sheet[["rice_flour", "sorghum_flour", "tapioca_starch"]].to_numpy()
    np.testing.assert_allclose(amounts.sum(axis=1), 100.0, atol=1e-9)
    # 5 vertices + 5 edge centroids + 1 centroid, each at 2 temperatures and with each
    # of the 3 hydrocolloids, + 2 centre runs (counted by hand)
    assert len(sheet) == 11 * 2 * 3 + 2
    assert set(sheet["bake_temp"]) == {175.0, 205.0, 190.0}
    assert np.all(amounts <= [70, 45, 45]) and np.all(amounts >= [40, 15, 10])
    cells = sheet[sheet["point"] != "centroid"].groupby(["bake_temp", "hydrocolloid"]).size()
    assert len(cells) == 6 and set(cells) == {10}
    assert set(sheet["hydrocolloid"]) == {"psyllium", "xanthan", "guar"}
    assert "every level of a categorical one" in text
    assert "not estimable" not in text  # each flour crossed with each level's column


def test_cli_lattice_json(tmp_path, capsys):
    import json
    import shutil

    for name in ("yarn_elongation_cornell.toml", "yarn_elongation_cornell.csv"):
        shutil.copy(DATA / name, tmp_path / name)
    assert main(["plan", str(tmp_path / "yarn_elongation_cornell.toml"), "--design",
                 "lattice", "--degree", "3", "--out", str(tmp_path / "p.csv"),
                 "--json"]) == 0
    rep = json.loads(capsys.readouterr().out)
    assert rep["total_runs"] == 10 and rep["model"]["error_df"] == 4


def test_mixture_design_for_a_study_without_components(write_study, tmp_path, capsys):
    path = write_study()
    assert main(["plan", str(path), "--design", "lattice", "--out",
                 str(tmp_path / "p.csv")]) == 2
    err = capsys.readouterr().err
    assert "has no [[components]]" in err and err.count("\n") == 1
    assert not (tmp_path / "p.csv").exists()


def test_lattice_refused_where_highs_cut_the_simplex():
    from tradeoff import load_study
    from tradeoff.plan.mixture_plan import plan_mixture

    study = load_study(DEMO, with_data=False)
    with pytest.raises(PlanError, match=r"use --design vertices"):
        plan_mixture(study, "lattice")


CATEGORICAL = """\
[study]
name = "blend with an oven type"

[mixture]
total = 500
model = "linear"
process = "linear"

[[components]]
name = "flour"
unit = "g"
low = 250
high = 400

[[components]]
name = "water"
unit = "g"
low = 80
high = 200

[[components]]
name = "oil"
unit = "g"
low = 10
high = 60

[[factors]]
name = "oven"
levels = ["deck", "convection"]

[[responses]]
name = "volume"
"""


def test_blend_plan_with_a_categorical_process_factor(tmp_path, capsys):
    study = tmp_path / "s.toml"
    study.write_text(CATEGORICAL, encoding="utf-8")
    out = tmp_path / "p.csv"
    assert main(["plan", str(study), "--out", str(out)]) == 0  # default: vertices
    text = capsys.readouterr().out
    assert "extreme vertices" in text and "6 of 6 terms estimable" in text
    sheet = pd.read_csv(out)
    amounts = sheet[["flour", "water", "oil"]].to_numpy()
    np.testing.assert_allclose(amounts.sum(axis=1), 500.0, atol=1e-9)
    blends = sheet.groupby(["flour", "water", "oil"])["oven"].apply(set)
    assert all(s == {"deck", "convection"} for s in blends)
    # vertices of {250..400, 80..200, 10..60, sum 500} by brute force
    V = _brute_vertices([250, 80, 10], [400, 200, 60], 500.0)
    assert len(blends) == len(V) + 1  # and the overall centroid
