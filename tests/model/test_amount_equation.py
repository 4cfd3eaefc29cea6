"""A blend's fitted equation in amounts: the same predictions as the model.

x_i = a_i / total (Cornell (2002), Experiments with Mixtures, 3rd ed., sec.
2.1), so a term of degree d in the proportions divides its coefficient by
total ** d. Checked by evaluating the equation, term by term as written out
here, at random blends and comparing with the fitted model's predictions.
"""
from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from tradeoff import fit_study, load_study
from tradeoff.model.equation import amount_equation
from tradeoff.study.coding import to_coded

FLOUR = Path(__file__).resolve().parents[2] / "demo_data" / "flour_blend.toml"


def _evaluate(equation: dict, amounts: dict, coded: dict, levels: dict) -> float:
    """The equation at one blend: amounts for components, coded process values,
    a level column +1 at its level, -1 at the last level, 0 otherwise."""
    total = 0.0
    for label, b in equation.items():
        value = b
        for part in label.split(":"):
            if part.startswith("("):
                first, second = part[1:-1].split("-")
                value *= amounts[first] - amounts[second]
            elif "[" in part:
                name, level = part[:-1].split("[")
                held = levels[name][0]
                value *= 1.0 if held == level else -1.0 if held == levels[name][1][-1] else 0.0
            else:
                name, _, power = part.partition("^")
                v = amounts[name] if name in amounts else coded[name]
                value *= v ** (int(power) if power else 1)
        total += value
    return total


def test_the_equation_in_amounts_predicts_what_the_model_predicts():
    study = load_study(FLOUR)
    fit = fit_study(study)
    comps = [f for f in study.factors if getattr(f, "is_component", False)]
    names = [c.name for c in comps]
    rng = np.random.default_rng(5)
    for response, model in fit.models.items():
        eq = amount_equation(model.proportion_coefficients_, names, comps[0].total)
        for _ in range(5):
            share = rng.dirichlet(np.ones(3))
            amounts = dict(zip(names, share * comps[0].total))
            temp = float(rng.uniform(175, 205))
            level = str(rng.choice(["psyllium", "xanthan", "guar"]))
            settings = {**amounts, "bake_temp": temp, "hydrocolloid": level}
            X = to_coded(study.factors, {k: [v] for k, v in settings.items()})
            coded = {"bake_temp": (temp - 190.0) / 15.0}
            got = _evaluate(eq, amounts, coded,
                            {"hydrocolloid": (level, ["psyllium", "xanthan", "guar"])})
            assert got == pytest.approx(float(model.predict(X)[0]), rel=1e-8, abs=1e-8), \
                response
