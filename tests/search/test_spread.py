"""Transmitted variation against closed forms and a long Monte Carlo run.

Sources:
- a linear function of independent normal deviations, y = b'e, has standard
  deviation sqrt(sum (b_i s_i)^2) (propagation of error for a linear function;
  common practice);
- the moments of a quadratic form in normal variables, Q = e'Be + g'e with
  e ~ N(0, S): E[Q] = tr(BS) and Var[Q] = g'Sg + 2 tr(BSBS) (Mathai & Provost
  (1992), Quadratic Forms in Random Variables, Theorem 3.2b.2; from memory);
- a seeded Monte Carlo run of a million draws (independent computation).
"""
from __future__ import annotations

import math
from pathlib import Path

import numpy as np
import pytest

from tradeoff.derive.load import load_study, study_from_dict
from tradeoff.model.study_fit import fit_study
from tradeoff.search.spread import (coded_spread, polynomial_moments, transmitted_spread)

DATA = Path(__file__).resolve().parents[1] / "data"

QUADRATIC = np.array([(0, 0, 0), (1, 0, 0), (0, 1, 0), (0, 0, 1), (1, 1, 0), (1, 0, 1),
                      (0, 1, 1), (2, 0, 0), (0, 2, 0), (0, 0, 2)])


def _gradient_hessian(powers, coef, x):
    """Gradient and Hessian of sum coef * prod x^powers at x, term by term."""
    k = len(x)
    g, H = np.zeros(k), np.zeros((k, k))
    for P, b in zip(powers, coef):
        for j in range(k):
            if not P[j]:
                continue
            q = P.copy()
            q[j] -= 1
            g[j] += b * P[j] * np.prod(x ** q)
            for m in range(k):
                if q[m]:
                    q2 = q.copy()
                    q2[m] -= 1
                    H[j, m] += b * P[j] * q[m] * np.prod(x ** q2)
    return g, H


def test_quadratic_moments_match_the_quadratic_form_formulas():
    # Mathai & Provost (1992), Thm 3.2b.2 (from memory): Var = g'Sg + 2 tr(BSBS), E = tr(BS)
    rng = np.random.default_rng(11)
    coef = rng.normal(size=len(QUADRATIC)) * 3
    X = np.array([[0.3, -0.5, 0.8], [0.0, 0.0, 0.0], [-1.0, 1.0, 0.2]])
    sd = np.array([0.2, 0.05, 0.3])
    shift, var = polynomial_moments(QUADRATIC, coef, X, sd)
    S = np.diag(sd ** 2)
    for i, x in enumerate(X):
        g, H = _gradient_hessian(QUADRATIC, coef, x)
        B = H / 2
        assert shift[i] == pytest.approx(np.trace(B @ S), rel=1e-12, abs=1e-14)
        assert var[i] == pytest.approx(g @ S @ g + 2 * np.trace(B @ S @ B @ S), rel=1e-12)


def test_quadratic_and_three_factor_moments_match_a_long_monte_carlo():
    # independent computation: 1 000 000 seeded draws of the deviations
    rng = np.random.default_rng(12)
    powers = np.vstack([QUADRATIC, [(1, 1, 1)]])
    coef = rng.normal(size=len(powers)) * 2
    x = np.array([[0.4, -0.7, 0.1]])
    sd = np.array([0.25, 0.1, 0.4])
    shift, var = polynomial_moments(powers, coef, x, sd)
    z = x + rng.standard_normal((1_000_000, 3)) * sd
    y = sum(b * np.prod(z ** P, axis=1) for P, b in zip(powers, coef))
    y0 = (np.prod(x ** powers, axis=1) @ coef)
    n = len(y)
    assert shift[0] == pytest.approx(y.mean() - y0, abs=5 * y.std() / math.sqrt(n))
    # the variance of a sample variance is about 2 var^2 / n for near-normal y
    assert var[0] == pytest.approx(y.var(), rel=5 * math.sqrt(2 / n) * 3)


def _tire_with_spread(tmp_path, model: str, sds=(0.1, 0.2, 0.05)) -> Path:
    """The published tire study (Derringer & Suich 1980, from memory) with another
    model and production SDs (coded = natural)."""
    text = (DATA / "tire_tread_1980.toml").read_text(encoding="utf-8")
    text = text.replace('model = "quadratic"', f'model = "{model}"')
    for name, sd in zip(("x1", "x2", "x3"), sds):
        text = text.replace(f'name = "{name}"\n', f'name = "{name}"\nproduction_sd = {sd}\n')
    (tmp_path / "tire_tread_1980.csv").write_bytes((DATA / "tire_tread_1980.csv").read_bytes())
    path = tmp_path / "tire.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_coded_spread_divides_by_half_the_range():
    study = study_from_dict({"study": {"name": "s"}, "factors": [
        {"name": "protein", "low": 20, "high": 30, "production_sd": 0.5},
        {"name": "bake", "low": 10, "high": 30},
        {"name": "binder", "levels": ["a", "b"]}],
        "responses": [{"name": "y"}]}, with_data=False)
    assert coded_spread(study) == pytest.approx([0.1, 0.0, 0.0])


def test_linear_model_transmitted_sd_is_the_closed_form(tmp_path):
    # Derringer & Suich (1980) tire data (from memory), main-effects models: the
    # transmitted SD is sqrt(sum (b_i s_i)^2) in coded units (propagation of
    # error; common practice)
    study = load_study(_tire_with_spread(tmp_path, "main"))
    fit = fit_study(study)
    s = coded_spread(study)
    assert s == pytest.approx([0.1, 0.2, 0.05])
    X = np.array([[0.2, -0.4, 1.0], [-1.0, 1.0, -0.3]])
    out = transmitted_spread(study, fit.models, X)
    for name in ("y1", "y2", "y3", "y4"):
        b = dict(zip(fit.models[name].terms_, fit.models[name].coef_))
        closed = math.sqrt(sum((b[f] * sd) ** 2 for f, sd in zip(("x1", "x2", "x3"), s)))
        col = out.responses.index(name)
        assert out.sd[:, col] == pytest.approx([closed, closed], rel=1e-12)
        assert out.mean_shift[:, col] == pytest.approx([0.0, 0.0], abs=1e-12)
        assert out.method[name] == "exact"


def test_quadratic_tire_models_match_monte_carlo(tmp_path):
    # the fitted quadratic models of the published data, against 400 000 seeded draws
    study = load_study(_tire_with_spread(tmp_path, "quadratic", (0.3, 0.2, 0.25)))
    fit = fit_study(study)
    x = np.array([[-0.05, 0.15, -0.87]])
    out = transmitted_spread(study, fit.models, x)
    e = np.random.default_rng(21).standard_normal((400_000, 3)) * coded_spread(study)
    for name in ("y1", "y2", "y3", "y4"):
        y = fit.models[name].predict(x + e)
        col = out.responses.index(name)
        y0 = fit.models[name].predict(x)[0]
        assert out.mean_shift[0, col] == pytest.approx(y.mean() - y0,
                                                       abs=5 * y.std() / math.sqrt(len(y)))
        assert out.sd[0, col] == pytest.approx(y.std(), rel=0.01)


def test_log_scale_model_uses_monte_carlo(tmp_path):
    path = _tire_with_spread(tmp_path, "quadratic", (0.3, 0.2, 0.25))
    text = path.read_text(encoding="utf-8").replace(
        'name = "y1"\n', 'name = "y1"\ntransform = "log"\n')
    path.write_text(text, encoding="utf-8")
    study = load_study(path)
    fit = fit_study(study)
    x = np.array([[0.1, -0.2, 0.3]])
    out = transmitted_spread(study, fit.models, x, seed=3)
    assert out.method["y1"] == "monte carlo" and out.method["y2"] == "exact"
    e = np.random.default_rng(22).standard_normal((200_000, 3)) * coded_spread(study)
    y = fit.models["y1"].predict(x + e)
    assert out.sd[0, out.responses.index("y1")] == pytest.approx(y.std(), rel=0.03)
