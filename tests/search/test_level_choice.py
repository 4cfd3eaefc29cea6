"""The search picks the level combination the models favour, among every one.

A study with a 3-, a 4- and a 5-level factor (60 combinations) and two
responses is optimized; an exhaustive evaluation written out here scores every
combination independently:

- each response's prediction from an ordinary least-squares fit by
  statsmodels (``C(name, Sum)`` coding, the same interactions model);
- each desirability by Derringer & Suich (1980), eq. (1) for maximize and
  eq. (3) for a two-sided target (from memory), written out below;
- D as their weighted geometric mean, prod d_i^(w_i / sum w) (Derringer
  (1994), Quality Progress 27(6), 51-58; from memory).

The runs are generated for this check (seeded), not published data.
"""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest
import statsmodels.formula.api as smf

from tradeoff import fit_study, optimize
from tradeoff.derive.load import study_from_dict

LEVELS = {"starch": ["corn", "pea", "potato"],
          "sweetener": ["dextrose", "maple", "sucrose", "syrup"],
          "acid": ["citric", "lactic", "malic", "tartaric", "ascorbic"]}


def _d_maximize(y, lo, hi, s=1.0):
    # Derringer & Suich (1980) eq. (1): 0 below lo, ((y - lo)/(hi - lo))^s, 1 above hi
    return np.where(y <= lo, 0.0, np.where(y >= hi, 1.0, ((y - lo) / (hi - lo)) ** s))


def _d_target(y, lo, t, hi, s1=1.0, s2=1.0):
    # Derringer & Suich (1980) eq. (3): rising to 1 at the target, falling after it
    out = np.zeros_like(y)
    low = (y >= lo) & (y <= t)
    high = (y > t) & (y <= hi)
    out[low] = ((y[low] - lo) / (t - lo)) ** s1
    out[high] = ((hi - y[high]) / (hi - t)) ** s2
    return out


def _runs(seed: int) -> pd.DataFrame:
    rng = np.random.default_rng(seed)
    rows = []
    for rep in range(2):
        for combo in itertools.product(*LEVELS.values()):
            rows.append(dict(zip(LEVELS, combo)))
    t = pd.DataFrame(rows)
    effect = {n: dict(zip(lv, rng.normal(0, 1.5, len(lv)))) for n, lv in LEVELS.items()}
    pair = {c: rng.normal(0, 0.6) for c in itertools.product(LEVELS["starch"],
                                                            LEVELS["acid"])}
    main = sum(t[n].map(effect[n]) for n in LEVELS)
    t["firmness"] = (50 + 3 * main + [pair[(a, b)] for a, b in zip(t["starch"], t["acid"])]
                     + rng.normal(0, 0.5, len(t)))
    t["sourness"] = (6 + t["acid"].map(effect["acid"]) - 0.5 * t["sweetener"].map(
        effect["sweetener"]) + rng.normal(0, 0.2, len(t)))
    t.insert(0, "run", np.arange(1, len(t) + 1))
    return t


GOALS = [{"name": "firmness", "goal": "maximize", "lower": 40, "upper": 65, "weight": 2},
         {"name": "sourness", "goal": "target", "lower": 3, "target": 6, "upper": 8,
          "weight": 1}]


@pytest.mark.parametrize("seed", [1, 2, 3])
def test_search_picks_the_level_combination_an_exhaustive_evaluation_favours(seed):
    runs = _runs(seed)
    spec = {"study": {"name": "levels", "data": "runs.csv", "model": "interactions"},
            "factors": [{"name": n, "levels": lv} for n, lv in LEVELS.items()],
            "responses": GOALS}
    study = study_from_dict(spec, data_bytes=runs.to_csv(index=False).encode())
    result = optimize(study, fit=fit_study(study), top=3, seed=0)

    # the exhaustive evaluation, independent of the project's code
    combos = pd.DataFrame(list(itertools.product(*LEVELS.values())), columns=list(LEVELS))
    formula = " ~ (C(starch, Sum) + C(sweetener, Sum) + C(acid, Sum))**2"
    pred = {g["name"]: np.asarray(smf.ols(g["name"] + formula, data=runs).fit()
                                  .predict(combos), dtype=float) for g in GOALS}
    d1 = _d_maximize(pred["firmness"], 40, 65)
    d2 = _d_target(pred["sourness"], 3, 6, 8)
    D = d1 ** (2 / 3) * d2 ** (1 / 3)
    order = np.argsort(-D)
    best = combos.iloc[order[0]]
    assert D[order[0]] > 0 and D[order[0]] - D[order[1]] > 1e-3  # a clear winner
    got = result.best
    assert {n: got.settings[n] for n in LEVELS} == best.to_dict()
    assert got.desirability == pytest.approx(D[order[0]], abs=1e-9)
    assert got.predictions["firmness"] == pytest.approx(pred["firmness"][order[0]], abs=1e-8)
    # every solution's D is that of its own combination
    for s in result.solutions:
        row = np.flatnonzero((combos == pd.Series({n: s.settings[n] for n in LEVELS}))
                             .all(axis=1))[0]
        assert s.desirability == pytest.approx(D[row], abs=1e-9)
