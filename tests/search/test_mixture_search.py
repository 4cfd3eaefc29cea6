"""The search on the constrained simplex against brute-force enumeration.

The best overall desirability found must match (or beat) the best of a dense
grid of blends, enumerated here independently of the search and scored with
the Derringer & Suich (1980) desirabilities and Derringer's (1994) weighted D
written out in tests/reference_desirability.py; every blend it returns must add
up to the total and keep every component within its bounds.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from reference_desirability import study_D
from tradeoff import fit_study, load_study, optimize

DATA = Path(__file__).resolve().parents[1] / "data"
DEMO = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"


def _grid(n: int) -> np.ndarray:
    """Every blend of three with proportions i/n (a dense simplex grid)."""
    g = [(i, j, n - i - j) for i in range(n + 1) for j in range(n + 1 - i)]
    return np.array(g, dtype=float) / n


def test_yarn_optimum_matches_a_dense_simplex_grid():
    study = load_study(DATA / "yarn_elongation_cornell.toml")
    fit = fit_study(study)
    result = optimize(study, fit=fit, top=3)
    P = _grid(400)
    D = study_D(study, fit, P)
    best = result.best
    # the search before rounding to the steps (search/rounding.py) beats the grid
    assert best.found_desirability >= D.max() - 1e-9
    # the grid's best blend is next to the one found (independent enumeration)
    found = np.array([best.found_settings[n] for n in ("polyethylene", "polystyrene",
                                                       "polypropylene")])
    assert np.abs(found - P[np.argmax(D)]).max() < 0.01
    # the recipe shown is on the default step (0.01 of a 0..1 range) and its D is
    # the published formula's at that recipe
    shown = np.array([best.settings[n] for n in ("polyethylene", "polystyrene",
                                                 "polypropylene")])
    assert np.allclose(shown * 100, np.round(shown * 100), atol=1e-9)
    assert best.desirability == pytest.approx(study_D(study, fit, shown[None, :])[0],
                                              abs=1e-12)
    for s in result.solutions:
        assert abs(sum(s.settings.values()) - 1.0) < 1e-9
        assert abs(sum(s.proportions.values()) - 1.0) < 1e-9


def test_flour_demo_optimum_matches_grid_over_blend_temperature_and_hydrocolloid():
    study = load_study(DEMO)
    fit = fit_study(study)
    result = optimize(study, fit=fit, top=3, seed=3)
    names = ["rice_flour", "sorghum_flour", "tapioca_starch"]
    lows, highs = np.array([40.0, 15, 10]), np.array([70.0, 45, 45])
    P = _grid(120) * 100
    P = P[np.all((P >= lows - 1e-9) & (P <= highs + 1e-9), axis=1)]
    temps = np.linspace(-1, 1, 31)
    levels = study.factor("hydrocolloid").levels
    Z = (P - lows) / 35.0
    # every blend of the grid at every temperature with each hydrocolloid (its
    # coded value is the level's position)
    X = np.vstack([np.column_stack([Z, np.full(len(Z), t), np.full(len(Z), h)])
                   for t in temps for h in range(len(levels))])
    D = study_D(study, fit, X)
    assert result.best.desirability >= D.max() - 1e-6
    assert result.best.settings["hydrocolloid"] == levels[int(X[np.argmax(D), 4])]
    for s in result.solutions:
        amounts = np.array([s.settings[n] for n in names])
        assert abs(amounts.sum() - 100) < 1e-6
        assert np.all(amounts >= lows - 1e-6) and np.all(amounts <= highs + 1e-6)
    text = result.text()
    assert "% of the total" in text
    assert any("sits at its" in w for w in result.best.warnings)


def test_same_seed_same_blend():
    study = load_study(DEMO)
    fit = fit_study(study)
    a = optimize(study, fit=fit, top=2, seed=7).to_dict()
    b = optimize(study, fit=fit, top=2, seed=7).to_dict()
    assert a["solutions"] == b["solutions"]
    assert set(a["best"]["proportions"]) == {"rice_flour", "sorghum_flour",
                                             "tapioca_starch"}


def test_next_runs_for_a_blend_add_up_and_keep_the_bounds():
    from tradeoff import next_batch

    study = load_study(DEMO)
    batch = next_batch(study, runs=3, seed=1, draws=256)
    names = ["rice_flour", "sorghum_flour", "tapioca_starch"]
    for run in batch.runs:
        amounts = np.array([run.settings[n] for n in names])
        assert abs(amounts.sum() - 100) < 1e-6
        assert np.all(amounts >= [40 - 1e-6, 15 - 1e-6, 10 - 1e-6])
        assert np.all(amounts <= [70 + 1e-6, 45 + 1e-6, 45 + 1e-6])
