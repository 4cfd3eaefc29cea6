"""The search scores exactly what the models predict, for every kind of model column.

The search stacks every response's polynomial into one matrix (search/problem.py);
a column kept under the wrong key (every level column of one factor shares its
powers) once merged the level columns and summed their coefficients. Here
``_Problem.values`` is compared, at the same coded settings, with

- each model's own ``predict`` (to 1e-9), and
- an independent ordinary least-squares fit of the same runs by statsmodels
  (patsy formulas, ``C(name, Sum)`` for categorical factors), predicted at the
  same settings in natural units.

Predictions do not depend on how a model's columns are coded when the column
spaces agree (common practice), so a sum-to-zero, a treatment or a coded-unit
fit give the same predictions; a Scheffe model in proportions and in
L-pseudo-components likewise (an affine map keeps the degree: Cornell (2002),
Experiments with Mixtures, 3rd ed., sec. 3.4; from memory).

The runs are generated for these checks (seeded), not published data: every
check compares two independent computations on them.
"""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf

from tradeoff.derive.load import study_from_dict
from tradeoff.model.study_fit import fit_study
from tradeoff.search.problem import _Problem
from tradeoff.search.spread import transmitted_spread

from search_problems import d_reference


# ------------------------------------------------------------------ helpers

def _study(spec: dict, table: pd.DataFrame):
    """A study from a spec and a generated runs table (as a CSV upload)."""
    spec = {**spec, "study": {"name": "generated", "data": "runs.csv", **spec["study"]}}
    return study_from_dict(spec, data_bytes=table.to_csv(index=False).encode())


def _natural(study, X: np.ndarray) -> pd.DataFrame:
    """Coded points -> a table in natural units (level names for categorical factors)."""
    out = {}
    for j, f in enumerate(study.factors):
        if f.is_categorical:
            codes = X[:, j]
            if len(f.levels) == 2:
                out[f.name] = np.where(codes < 0, f.levels[0], f.levels[1])
            else:
                out[f.name] = np.array(f.levels, dtype=object)[np.rint(codes).astype(int)]
        else:
            out[f.name] = f.centre + f.half_range * X[:, j]
    return pd.DataFrame(out)


def _points(study, n: int, seed: int) -> np.ndarray:
    """Seeded coded points: every level of each categorical factor, numeric
    factors anywhere in -1..1, components on the simplex of coded shares."""
    rng = np.random.default_rng(seed)
    cols = []
    comps = [j for j, f in enumerate(study.factors) if getattr(f, "is_component", False)]
    shares = rng.dirichlet(np.ones(len(comps)), n) if comps else None
    for j, f in enumerate(study.factors):
        if j in comps:
            cols.append(shares[:, comps.index(j)])
        elif f.is_categorical:
            codes = np.array([-1.0, 1.0]) if len(f.levels) == 2 else \
                np.arange(len(f.levels), dtype=float)
            cols.append(codes[np.arange(n) % len(codes)])
            rng.shuffle(cols[-1])
        else:
            cols.append(rng.uniform(-1, 1, n))
    return np.column_stack(cols)


def _statsmodels_prediction(study, name: str, formula: str, X: np.ndarray,
                            blocks: str | None = None) -> np.ndarray:
    """OLS of the study's runs by statsmodels, predicted at coded points X.

    With blocks, the prediction is the average over the blocks of the
    prediction in each (sum-to-zero block effects average to 0).
    """
    data = study.runs.copy()
    for f in study.factors:
        if f.is_categorical:
            data[f.name] = data[f.name].astype(str)
    res = smf.ols(formula, data=data).fit()
    new = _natural(study, X)
    if blocks is None:
        return np.asarray(res.predict(new), dtype=float)
    labels = sorted(data[blocks].astype(str).unique())
    data[blocks] = data[blocks].astype(str)
    res = smf.ols(formula, data=data).fit()
    return np.mean([np.asarray(res.predict(new.assign(**{blocks: b})), dtype=float)
                    for b in labels], axis=0)


def _check_values(study, fit, X):
    """``_Problem.values`` equals every model's predict at X; returns them."""
    problem = _Problem(study, fit)
    Y = problem.values(X)
    for i, (kind, name) in enumerate(problem.columns):
        if kind == "response":
            own = np.asarray(fit.models[name].predict(X), dtype=float).ravel()
            np.testing.assert_allclose(Y[:, i], own, rtol=1e-9, atol=1e-9)
    return problem, Y


def _levels_table(rng, spec_levels: dict, numeric: list[str], reps: int) -> pd.DataFrame:
    """Every level combination, ``reps`` times, numeric factors at seeded -1..1 settings."""
    combos = list(itertools.product(*spec_levels.values()))
    rows = []
    for rep in range(reps):
        for combo in combos:
            row = dict(zip(spec_levels, combo))
            for x in numeric:
                row[x] = float(rng.choice([-1.0, 0.0, 1.0]))
            rows.append(row)
    return pd.DataFrame(rows)


# ------------------------------------------- level columns and their crosses

def _levels_study():
    # A 3-level and a 4-level factor, a 2-level one and two numeric factors, the
    # interactions model: level x numeric, level x level (3 x 4, 3 x 2) columns.
    rng = np.random.default_rng(24)
    levels = {"flour": ["oat", "rye", "spelt"], "fat": ["butter", "lard", "oil", "palm"],
              "film": ["pe", "pp"]}
    t = _levels_table(rng, levels, ["sugar", "salt"], reps=3)
    eff = {"oat": 3.0, "rye": -1.0, "spelt": -2.0, "butter": 1.5, "lard": -0.5,
           "oil": 2.0, "palm": -3.0, "pe": 0.7, "pp": -0.7}
    sugar, salt = t["sugar"].to_numpy(), t["salt"].to_numpy()
    y = (20 + t["flour"].map(eff) + t["fat"].map(eff) + t["film"].map(eff)
         + 2 * sugar - salt + sugar * t["flour"].map(eff)
         + 0.5 * t["flour"].map(eff) * t["fat"].map(eff) + rng.normal(0, 0.4, len(t)))
    t["sugar"] = 10 + 2 * sugar  # natural units 8..12
    t["salt"] = 1 + 0.5 * salt
    t["crisp"] = y
    t.insert(0, "run", np.arange(1, len(t) + 1))
    spec = {"study": {"model": "interactions"},
            "factors": [{"name": "sugar", "low": 8, "high": 12, "production_sd": 0.4},
                        {"name": "salt", "low": 0.5, "high": 1.5},
                        {"name": "flour", "levels": levels["flour"]},
                        {"name": "fat", "levels": levels["fat"]},
                        {"name": "film", "levels": levels["film"]}],
            "responses": [{"name": "crisp", "goal": "maximize", "lower": 10, "upper": 30}]}
    return _study(spec, t)


def test_level_columns_and_their_interactions_score_as_predicted():
    study = _levels_study()
    fit = fit_study(study)
    X = _points(study, 400, seed=1)
    problem, Y = _check_values(study, fit, X)
    # statsmodels: the same interactions model, sum-to-zero coded categoricals
    formula = ("crisp ~ (sugar + salt + C(flour, Sum) + C(fat, Sum) + C(film, Sum))**2")
    np.testing.assert_allclose(Y[:, 0], _statsmodels_prediction(study, "crisp", formula, X),
                               rtol=1e-9, atol=1e-8)
    # each d is the Derringer & Suich (1980) maximize formula, written out
    D, d = problem.score(Y)
    np.testing.assert_allclose(d[:, 0], d_reference(Y[:, 0], {"goal": "maximize",
                                                              "lower": 10, "upper": 30}),
                               atol=1e-12)


def test_quadratic_log_transform_and_blocks_score_as_predicted():
    # quadratic in two numeric factors with a 5-level factor, a log transform,
    # the runs in three blocks (blocks never reach a prediction: the average block)
    rng = np.random.default_rng(7)
    levels = {"cocoa": ["a", "b", "c", "d", "e"]}
    t = _levels_table(rng, levels, ["time", "temp"], reps=6)
    x1, x2 = t["time"].to_numpy(), t["temp"].to_numpy()
    shift = t["cocoa"].map({"a": 0.2, "b": -0.1, "c": 0.0, "d": 0.3, "e": -0.4})
    t["block"] = np.arange(len(t)) % 3 + 1
    block = t["block"].map({1: 0.1, 2: -0.05, 3: -0.05})
    t["gloss"] = np.exp(2 + shift + 0.3 * x1 - 0.2 * x2 + 0.1 * x1 * x2 - 0.25 * x1 ** 2
                        + 0.1 * x1 * shift + block + rng.normal(0, 0.03, len(t)))
    t["time"], t["temp"] = 30 + 10 * x1, 45 + 5 * x2
    t.insert(0, "run", np.arange(1, len(t) + 1))
    spec = {"study": {"model": "quadratic"},
            "factors": [{"name": "time", "low": 20, "high": 40},
                        {"name": "temp", "low": 40, "high": 50},
                        {"name": "cocoa", "levels": levels["cocoa"]}],
            "responses": [{"name": "gloss", "transform": "log", "goal": "target",
                           "lower": 4, "target": 8, "upper": 12}]}
    study = _study(spec, t)
    fit = fit_study(study)
    assert fit.models["gloss"].blocks_ is not None
    X = _points(study, 300, seed=2)
    problem, Y = _check_values(study, fit, X)
    formula = ("np.log(gloss) ~ C(block, Sum) + (time + temp + C(cocoa, Sum))**2"
               " + I(time**2) + I(temp**2)")
    ref = np.exp(_statsmodels_prediction(study, "gloss", formula, X, blocks="block"))
    np.testing.assert_allclose(Y[:, 0], ref, rtol=1e-9)
    D, d = problem.score(Y)
    np.testing.assert_allclose(d[:, 0], d_reference(Y[:, 0], {
        "goal": "target", "lower": 4, "target": 8, "upper": 12}), atol=1e-12)


def test_smooth_model_scores_as_predicted():
    rng = np.random.default_rng(3)
    levels = {"binder": ["gum", "pectin", "starch"]}
    t = _levels_table(rng, levels, ["water"], reps=5)
    w = t["water"].to_numpy() + rng.uniform(-0.3, 0.3, len(t))
    t["water"] = 50 + 10 * np.clip(w, -1, 1)
    t["spread"] = (5 + np.sin(2 * w) + t["binder"].map({"gum": 0.5, "pectin": 0.0,
                                                          "starch": -0.5})
                   + rng.normal(0, 0.05, len(t)))
    t.insert(0, "run", np.arange(1, len(t) + 1))
    spec = {"study": {"model": "smooth"},
            "factors": [{"name": "water", "low": 40, "high": 60},
                        {"name": "binder", "levels": levels["binder"]}],
            "responses": [{"name": "spread", "goal": "maximize", "lower": 4, "upper": 7}]}
    study = _study(spec, t)
    fit = fit_study(study)
    _check_values(study, fit, _points(study, 200, seed=4))


# --------------------------------------------------- mixtures and process factors

def _blends(q: int) -> list[tuple]:
    """Vertices, binary mid-points, the centroid and interior points of a simplex
    (the points of a simplex-centroid plan with axial checks: common practice)."""
    out = [tuple(np.eye(q)[i]) for i in range(q)]
    out += [tuple((np.eye(q)[i] + np.eye(q)[j]) / 2) for i, j in
            itertools.combinations(range(q), 2)]
    out += [tuple(np.full(q, 1 / q))]
    out += [tuple((np.eye(q)[i] + np.full(q, 1 / q)) / 2) for i in range(q)]
    out += [tuple(v) for v in [(0.6, 0.3, 0.1), (0.1, 0.6, 0.3), (0.3, 0.1, 0.6)]]
    return out


def _mixture_table(rng, process_levels: list[str]) -> pd.DataFrame:
    rows = []
    for a, b, c in _blends(3):
        for film in process_levels:
            for temp in (-1.0, 1.0):
                rows.append({"a": a, "b": b, "c": c, "film": film, "temp": temp})
    t = pd.DataFrame(rows)
    a, b, c, temp = (t[n].to_numpy() for n in ("a", "b", "c", "temp"))
    fe = t["film"].map(dict(zip(process_levels, [1.0, -2.0, 1.0, 0.5][:len(process_levels)])))
    t["y"] = (10 * a + 12 * b + 8 * c + 6 * a * b - 4 * b * c + 9 * a * b * (a - b)
              + (1 + a) * fe + 0.8 * temp * (a - c) + 0.5 * temp * fe * b
              + rng.normal(0, 0.2, len(t)))
    # amounts in % of 100; component a has a low of 10 (L-pseudo-components)
    t["a"] = 10 + 90 * a
    t["b"], t["c"] = 90 * b, 90 * c
    t["temp"] = 175 + 15 * temp
    t.insert(0, "run", np.arange(1, len(t) + 1))
    return t


def _mixture_spec(model: str, process: str, film_levels: list[str]) -> dict:
    return {"study": {"model": "main"},
            "mixture": {"total": 100, "model": model, "process": process},
            "components": [{"name": "a", "low": 10, "high": 100},
                           {"name": "b", "low": 0, "high": 90},
                           {"name": "c", "low": 0, "high": 90}],
            "factors": [{"name": "temp", "low": 160, "high": 190, "production_sd": 3},
                        {"name": "film", "levels": film_levels}],
            "responses": [{"name": "y", "goal": "maximize", "lower": 5, "upper": 20}]}


@pytest.mark.parametrize("model, process, blend_terms", [
    ("quadratic", "linear", "a + b + c + a:b + a:c + b:c"),
    ("quadratic", "full", "a + b + c + a:b + a:c + b:c"),
    ("cubic", "full", "a + b + c + a:b + a:c + b:c + I(a*b*(a-b)) + I(a*c*(a-c))"
                      " + I(b*c*(b-c)) + a:b:c"),
])
def test_mixture_terms_and_process_crosses_score_as_predicted(model, process, blend_terms):
    # Scheffe blending terms, the cubic's x_a x_b (x_a - x_b) columns and their
    # crosses with a numeric and a 3-level categorical process factor
    film = ["pe", "pet", "pp"]
    study = _study(_mixture_spec(model, process, film), _mixture_table(
        np.random.default_rng(11), film))
    fit = fit_study(study)
    labels = [t.label for t in fit.models["y"].polynomial()[0]]
    assert "a:film[pe]" in labels and "a:film" not in labels
    X = _points(study, 300, seed=5)
    _, Y = _check_values(study, fit, X)
    # statsmodels in proportions of the total (pseudo-components span the same model)
    data_cols = "(" + blend_terms + ")"
    if process == "linear":
        rhs = f"{data_cols} + (a + b + c):temp + (a + b + c):C(film, Sum)"
    else:
        rhs = f"{data_cols} + {data_cols}:temp + {data_cols}:C(film, Sum)"
    study.runs[["a", "b", "c"]] = study.runs[["a", "b", "c"]] / 100
    nat = _natural(study, X)
    nat[["a", "b", "c"]] = nat[["a", "b", "c"]] / 100
    data = study.runs.assign(film=study.runs["film"].astype(str))
    res = smf.ols("y ~ 0 + " + rhs, data=data).fit()
    np.testing.assert_allclose(Y[:, 0], np.asarray(res.predict(nat)), rtol=1e-8,
                               atol=1e-8)


def _cubic_mixture_study():
    film = ["pe", "pet", "pp"]
    spec = _mixture_spec("cubic", "full", film)
    spec["study"]["model"] = "interactions"  # temp x film crossed with every blend term
    return _study(spec, _mixture_table(np.random.default_rng(11), film))


@pytest.mark.parametrize("build, factor, name", [(_levels_study, "sugar", "crisp"),
                                                (_cubic_mixture_study, "temp", "y")])
def test_transmitted_spread_of_level_and_blending_columns_is_exact(build, factor, name):
    # The production spread of one factor through a model whose columns cross it
    # with level columns (sugar:flour[oat], a:b:(a-b):temp:film[pe]): the spread
    # module's exact moments against Gauss-Hermite quadrature of the model's own
    # predict (a polynomial of degree <= 2 in the deviation: 5 nodes integrate
    # its square exactly; common practice, Abramowitz & Stegun 25.4.46).
    study = build()
    fit = fit_study(study)
    model = fit.models[name]
    X = _points(study, 40, seed=6)
    out = transmitted_spread(study, {name: model}, X)
    assert out.method[name] == "exact"
    assert any(t.cells and t.powers[study.factor_names.index(factor)]
               for t in model.polynomial()[0])
    nodes, weights = np.polynomial.hermite_e.hermegauss(5)  # weight exp(-x^2/2)
    weights = weights / weights.sum()
    sd = study.factor(factor).production_sd / study.factor(factor).half_range
    j = study.factor_names.index(factor)
    for row in range(len(X)):
        P = np.repeat(X[row:row + 1], len(nodes), axis=0)
        P[:, j] += sd * nodes
        y = np.asarray(model.predict(P), dtype=float)
        mean = weights @ y
        var = weights @ (y - mean) ** 2
        centre = float(np.asarray(model.predict(X[row:row + 1]))[0])
        assert out.mean_shift[row, 0] == pytest.approx(mean - centre, abs=1e-9)
        assert out.sd[row, 0] == pytest.approx(np.sqrt(var), rel=1e-7, abs=1e-9)
