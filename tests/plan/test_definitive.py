"""Definitive screening designs: conference matrices and the published properties
of the designs built from them, for every number of factors from 3 to 30, and
the plan command's run sheet and refusals."""
from __future__ import annotations

import json
from itertools import combinations

import numpy as np
import pandas as pd
import pytest

from tradeoff.cli import main
from tradeoff.errors import PlanError
from tradeoff.plan.conference import SOURCES, conference_matrix
from tradeoff.plan.definitive import definitive_points


@pytest.mark.parametrize("n", sorted(SOURCES))
def test_conference_matrix_definition(n):
    # definition of a conference matrix: zero diagonal, +-1 elsewhere, C'C = (n-1) I
    # (Paley 1933; Xiao, Lin & Bai 2012, from memory)
    C = conference_matrix(n)
    assert np.all(np.diag(C) == 0)
    off = C[~np.eye(n, dtype=bool)]
    assert set(np.unique(off)) == {-1.0, 1.0}
    np.testing.assert_array_equal(C.T @ C, (n - 1) * np.eye(n))
    # Paley: symmetric for q = 1 mod 4, antisymmetric for q = 3 mod 4 (Paley 1933)
    how, q = SOURCES[n]
    if how == "paley":
        sign = 1 if q % 4 == 1 else -1
        np.testing.assert_array_equal(C.T, sign * C)


def test_doubling_identity_written_out():
    # [[S, S+I], [S-I, -S]] for antisymmetric S with S S' = (n-1) I: the (1,1) block is
    # S S' + (S+I)(S+I)' = 2(n-1) I + I, the (1,2) block -S - S' = 0 (worked by hand)
    S = np.array(conference_matrix(8))
    I = np.eye(8)
    assert np.allclose(S @ S.T + (S + I) @ (S + I).T, 15 * I)
    assert np.allclose(S @ (S - I).T + (S + I) @ (-S).T, 0)


def _second_order(X):
    k = X.shape[1]
    cols = [X[:, j] ** 2 for j in range(k)] + [X[:, a] * X[:, b]
                                                for a, b in combinations(range(k), 2)]
    return np.column_stack(cols)


@pytest.mark.parametrize("m", range(3, 31))
def test_published_properties_every_size(m):
    # Jones & Nachtsheim (2011), J. Quality Technology: three levels; main effects
    # orthogonal to each other and to every square and two-factor interaction; no two
    # second-order effects fully aliased; 2m + 1 runs for even m, and for odd m the
    # design for m + 1 factors with a column dropped (Xiao, Lin & Bai 2012; from
    # memory); no conference matrix of order 22 (Belevitch; from memory), so 21 and 22
    # factors take order 24.
    X, point, pair, block, n = definitive_points(m)
    expected = m + (m % 2)
    expected = 24 if expected == 22 else expected
    assert n == expected and len(X) == 2 * n + 1
    assert set(np.unique(X)) == {-1.0, 0.0, 1.0}
    assert all(set(np.unique(X[:, j])) == {-1.0, 0.0, 1.0} for j in range(m))
    XtX = X.T @ X
    np.testing.assert_array_equal(XtX, np.diag(np.diag(XtX)))
    S = _second_order(X)
    np.testing.assert_allclose(X.T @ S, 0, atol=1e-12)
    np.testing.assert_allclose(X.sum(axis=0), 0, atol=1e-12)
    Sc = S - S.mean(axis=0)
    Sc = Sc / np.linalg.norm(Sc, axis=0)
    R = np.abs(Sc.T @ Sc)
    np.fill_diagonal(R, 0)
    assert R.max() < 1 - 1e-9
    # the fold-over structure: every run but the centre has its mirror image
    for p in range(1, n + 1):
        a, b = X[pair == p]
        np.testing.assert_array_equal(a, -b)
    assert point.count("centre") == 1


def test_quadratic_in_any_three_factors_of_six():
    # Jones & Nachtsheim (2011): with 6 or more factors, the full quadratic model in any
    # three factors can be fitted from the runs (from memory); checked by rank
    X = definitive_points(8)[0]
    for trio in combinations(range(8), 3):
        Z = X[:, trio]
        M = np.column_stack([np.ones(len(Z)), Z, _second_order(Z)])
        assert np.linalg.matrix_rank(M) == 10


def test_screening_properties_see_aliases_in_a_fraction():
    # the half fraction 2^(3-1) with C = AB (Box, Hunter & Hunter; common practice):
    # C is fully aliased with AB, so the check that reports 0 for a definitive
    # screening design reports 1 here
    from types import SimpleNamespace

    from tradeoff.plan.definitive import screening_properties

    X = np.array([[-1, -1, 1], [1, -1, -1], [-1, 1, -1], [1, 1, 1], [0, 0, 0]], float)
    study = SimpleNamespace(factors=[SimpleNamespace(name=n, is_categorical=False)
                                     for n in "abc"])
    props = screening_properties(study, X)
    assert props["main_vs_second_order"] == pytest.approx(1.0)
    assert "a^2 = b^2" in props["second_order"]["fully_aliased"]
    dsd = screening_properties(SimpleNamespace(factors=[
        SimpleNamespace(name=f"f{j}", is_categorical=False) for j in range(6)]),
        definitive_points(6)[0])
    assert dsd["main_vs_second_order"] == 0 and dsd["second_order"]["fully_aliased"] == []
    assert dsd["quadratic_in_three"]["fittable"] == 20


def test_extra_runs_are_fake_factor_columns():
    # Jones & Nachtsheim (2017), Technometrics: extra runs through fake factors; the
    # design of the real factors keeps its orthogonality (checked directly)
    X, point, pair, block, n = definitive_points(8, extra=4)
    assert n == 10 and len(X) == 21
    np.testing.assert_allclose(X.T @ _second_order(X), 0, atol=1e-12)
    C = np.array(conference_matrix(10))
    np.testing.assert_array_equal(X[:10], C[:, :8])


def test_categorical_columns_orthogonal_to_numeric_main_effects():
    # Jones & Nachtsheim (2013), J. Quality Technology (construction from memory):
    # categorical two-level columns balanced and orthogonal to the numeric main
    # effects; numeric main effects still clear of the numeric second-order terms
    X, point, pair, block, n = definitive_points(6, 2)
    num, cat = X[:, :6], X[:, 6:]
    assert set(np.unique(cat)) == {-1.0, 1.0}
    np.testing.assert_allclose(cat.sum(axis=0), 0)
    np.testing.assert_allclose(num.T @ cat, 0)
    np.testing.assert_allclose(num.T @ _second_order(num), 0, atol=1e-12)
    assert len(X) == 2 * 8 + 2


@pytest.mark.parametrize("blocks", [2, 3, 4])
def test_blocks_orthogonal_to_main_effects(blocks):
    # whole fold-over pairs per block, one centre run each: every main effect sums to
    # zero in every block (common practice for fold-over designs; checked directly)
    X, point, pair, block, n = definitive_points(8, blocks=blocks)
    assert len(X) == 2 * 8 + blocks
    for b in range(1, blocks + 1):
        np.testing.assert_allclose(X[block == b].sum(axis=0), 0)
        assert set(pair[block == b][pair[block == b] > 0]) == set(
            pair[(block == b) & (pair > 0)])


STUDY = """\
[study]
name = "bar screen"
data = "runs.csv"
model = "quadratic"
"""


def _study(tmp_path, k, *, categorical=False, components=False):
    text = STUDY
    for j in range(k):
        text += f'\n[[factors]]\nname = "f{j + 1}"\nlow = {10 + j}\nhigh = {20 + j}\n'
    if categorical:
        text += '\n[[factors]]\nname = "pack"\nlevels = ["film", "foil"]\n'
    text += '\n[[responses]]\nname = "hardness"\n'
    path = tmp_path / "s.toml"
    path.write_text(text)
    return path


def _plan(tmp_path, capsys, study, *extra):
    code = main(["plan", str(study), "--design", "definitive-screening", "--out",
                 str(tmp_path / "p.csv"), "--json", *extra])
    captured = capsys.readouterr()
    assert code == 0, captured.err
    return json.loads(captured.out), pd.read_csv(tmp_path / "p.csv")


@pytest.mark.parametrize("k,extra,runs", [(6, [], 13), (8, [], 17),
                                           (8, ["--extra", "4"], 21), (7, [], 17)])
def test_plan_command_run_counts(tmp_path, capsys, k, extra, runs):
    # 13, 17 and 21 runs (Jones & Nachtsheim 2011: 2m + 1; 2017: four extra runs)
    report, sheet = _plan(tmp_path, capsys, _study(tmp_path, k), *extra)
    assert report["total_runs"] == runs == len(sheet)
    assert report["screening"]["main_vs_second_order"] == 0
    assert report["screening"]["second_order"]["fully_aliased"] == []
    assert report["model"]["model"] == "main"
    assert set(sheet["point"]) == {"fold-over", "centre"}
    # natural units: three settings per factor, low, centre and high
    for j in range(k):
        assert sorted(sheet[f"f{j + 1}"].unique()) == [10 + j, 15 + j, 20 + j]
    # the pair column names each run's mirror image
    coded = (sheet[[f"f{j + 1}" for j in range(k)]].to_numpy(float)
             - [15 + j for j in range(k)]) / 5
    for p, rows in sheet.groupby("pair").groups.items():
        a, b = coded[list(rows)]
        np.testing.assert_allclose(a, -b)


def test_plan_run_order_is_seeded(tmp_path, capsys):
    study = _study(tmp_path, 6)
    _, one = _plan(tmp_path, capsys, study, "--seed", "3")
    _, two = _plan(tmp_path, capsys, study, "--seed", "3")
    _, three = _plan(tmp_path, capsys, study, "--seed", "4")
    pd.testing.assert_frame_equal(one, two)
    assert list(one["std_order"]) != list(three["std_order"])


def test_plan_text_shows_second_order_aliases(tmp_path, capsys):
    study = _study(tmp_path, 8)
    assert main(["plan", str(study), "--design", "definitive-screening", "--out",
                 str(tmp_path / "p.csv")]) == 0
    out = capsys.readouterr().out
    assert "on the main effects: largest correlation 0 (none" in out
    assert "no pair fully aliased" in out
    assert "--extra 4" in out


def _refused(tmp_path, capsys, study, *extra):
    code = main(["plan", str(study), "--design", "definitive-screening", "--out",
                 str(tmp_path / "p.csv"), *extra])
    err = capsys.readouterr().err
    assert code == 2
    assert "Traceback" not in err and len(err.strip().splitlines()) == 1
    return err


def test_bad_input(tmp_path, capsys):
    assert "at least 3 numeric factors" in _refused(tmp_path, capsys, _study(tmp_path, 2))
    assert "even" in _refused(tmp_path, capsys, _study(tmp_path, 6), "--extra", "3")
    assert "0 or more" in _refused(tmp_path, capsys, _study(tmp_path, 6), "--extra", "-2")
    assert "up to 30" in _refused(tmp_path, capsys, _study(tmp_path, 31))
    assert "30 covered" in _refused(tmp_path, capsys, _study(tmp_path, 29), "--extra", "4")
    with pytest.raises(PlanError, match="even"):
        definitive_points(6, extra=1)


def test_components_need_a_mixture_design(tmp_path, capsys):
    study = tmp_path / "blend.toml"
    study.write_text("""\
[study]
name = "blend"
data = "runs.csv"

[mixture]
total = 100

[[components]]
name = "oat"
low = 0
high = 100

[[components]]
name = "rice"
low = 0
high = 100

[[components]]
name = "rye"
low = 0
high = 100

[[responses]]
name = "crisp"
""")
    err = _refused(tmp_path, capsys, study)
    assert "lattice" in err
