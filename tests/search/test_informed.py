"""What the data cannot judge: not-estimable level means and a held level choice.

Source for the estimability check: a linear function c'b of a linear model's
coefficients is estimable exactly when c lies in the row space of the model
matrix X, that is when appending c to X does not raise its rank (Searle (1971),
Linear Models, sec. 5.4; from memory). The test builds X itself (intercept,
sum-to-zero block columns, the factors' -1/+1 columns; common practice) and
checks with numpy's matrix rank that the oven's level difference is not
estimable when the oven changes only between days, and is when it changes
within a day; the tool must say "not estimable" and hold the level exactly then.

The runs are generated (seeded) for this check.
"""
from __future__ import annotations

import itertools

import numpy as np
import pandas as pd
import pytest

from tradeoff import fit_study, optimize
from tradeoff.derive.load import study_from_dict
from tradeoff.model.levels import level_means


def _runs(confounded: bool, seed: int = 0) -> pd.DataFrame:
    """Four days; sugar at three settings, flour oat or rice (never spelt).

    ``confounded``: gas on days 1 and 3, electric on days 2 and 4; otherwise both
    ovens on every day.
    """
    rng = np.random.default_rng(seed)
    rows = []
    for day in (1, 2, 3, 4):
        for k, (sugar, flour) in enumerate(itertools.product((10, 15, 20), ("oat", "rice"))):
            # within a day, each flour meets both ovens: g e e g g e (flipped on even days)
            oven = ("gas" if day % 2 else "electric") if confounded else \
                ("gas", "electric")[(0, 1, 1, 0, 0, 1)[k] ^ (day % 2 == 0)]
            rows.append({"day": day, "sugar": sugar, "oven": oven, "flour": flour})
    t = pd.DataFrame(rows)
    t["crisp"] = (8 + 0.3 * (t["sugar"] - 15) + np.where(t["flour"] == "oat", 1.0, -1.0)
                  + np.where(t["oven"] == "gas", 0.4, -0.4) + 0.5 * t["day"]
                  + rng.normal(0, 0.3, len(t)))
    t.insert(0, "run", np.arange(1, len(t) + 1))
    return t


def _study(t: pd.DataFrame, hold: str | None = None):
    oven = {"name": "oven", "levels": ["gas", "electric"]}
    if hold is not None:
        oven["hold"] = hold
    spec = {"study": {"name": "ovens", "data": "runs.csv", "model": "main",
                      "blocks": "day"},
            "factors": [{"name": "sugar", "low": 10, "high": 20}, oven,
                        {"name": "flour", "levels": ["oat", "rice", "spelt"]}],
            "responses": [{"name": "crisp", "goal": "maximize", "lower": 5,
                           "upper": 15}]}
    return study_from_dict(spec, data_bytes=t.to_csv(index=False).encode())


def _oven_difference_estimable(t: pd.DataFrame) -> bool:
    """Independent: is (gas - electric) in the row space of X? (Searle 1971)."""
    days = sorted(t["day"].unique())
    cols = [np.ones(len(t))]
    for d in days[1:]:
        col = (t["day"] == d).to_numpy().astype(float)
        col[(t["day"] == days[0]).to_numpy()] = -1.0
        cols.append(col)
    cols.append((t["sugar"].to_numpy() - 15) / 5)
    cols.append(np.where(t["oven"] == "electric", 1.0, -1.0))
    cols.append(np.where(t["flour"] == "oat", 1.0, 0.0))  # spelt never made
    X = np.column_stack(cols)
    c = np.zeros(X.shape[1])
    c[-2] = -2.0  # gas minus electric: -1 - (+1) on the oven column
    return bool(np.linalg.matrix_rank(np.vstack([X, c])) == np.linalg.matrix_rank(X))


@pytest.mark.parametrize("confounded", [True, False])
def test_level_means_say_not_estimable_exactly_when_they_are_not(confounded):
    t = _runs(confounded)
    estimable = _oven_difference_estimable(t)
    assert estimable is (not confounded)
    model = fit_study(_study(t)).models["crisp"]
    rows = {(r["factor"], r["level"]): r for r in level_means(model)}
    for level in ("gas", "electric"):
        row = rows[("oven", level)]
        if estimable:
            assert row["not_estimable"] is None and row["predicted"] is not None
        else:
            assert row["not_estimable"] == "confounded with the blocks"
            assert row["predicted"] is None and row["ci_low"] is None
    # spelt was never made: its mean is not estimable either way
    assert rows[("flour", "spelt")]["not_estimable"] == "no runs at this level"
    assert rows[("flour", "oat")]["predicted"] is not None


@pytest.mark.parametrize("hold, expected", [(None, "gas"), ("electric", "electric")])
def test_optimize_holds_a_factor_the_runs_cannot_judge(hold, expected):
    # the oven's effect is +0.4 for gas in the generated data, yet it falls on the
    # days: the search must not claim either oven, only hold the one asked for
    result = optimize(_study(_runs(True), hold=hold), top=3, seed=0)
    assert all(s.settings["oven"] == expected for s in result.solutions)
    assert all(s.settings["flour"] != "spelt" for s in result.solutions)
    notes = {n["factor"]: n for n in result.to_dict()["not_informed"]}
    assert notes["oven"] == {"factor": "oven", "why": "confounded with the blocks",
                             "held_at": expected,
                             "left_out": [v for v in ("gas", "electric") if v != expected]}
    assert notes["flour"] == {"factor": "flour", "why": "no runs at 'spelt'",
                              "held_at": None, "left_out": ["spelt"]}
    text = result.text()
    assert (f"not informed: oven: the runs cannot tell its levels apart (confounded with "
            f"the blocks), so the choice among them is not informed by the data: held at "
            f"'{expected}'") in text


def test_a_factor_the_runs_judge_is_chosen_freely():
    result = optimize(_study(_runs(False)), top=2, seed=0)
    assert [n["factor"] for n in result.not_informed] == ["flour"]
    # gas raises crispness by 0.8 over electric in the generated data, maximize
    assert result.best.settings["oven"] == "gas"
    assert result.best.settings["flour"] == "oat"


def test_not_informed_in_the_cli_json(tmp_path, capsys):
    import json

    from tradeoff.cli import main

    t = _runs(True)
    (tmp_path / "runs.csv").write_text(t.to_csv(index=False))
    (tmp_path / "s.toml").write_text(
        '[study]\nname = "ovens"\ndata = "runs.csv"\nmodel = "main"\nblocks = "day"\n\n'
        '[[factors]]\nname = "sugar"\nlow = 10\nhigh = 20\n\n'
        '[[factors]]\nname = "oven"\nlevels = ["gas", "electric"]\nhold = "electric"\n\n'
        '[[factors]]\nname = "flour"\nlevels = ["oat", "rice", "spelt"]\n\n'
        '[[responses]]\nname = "crisp"\ngoal = "maximize"\nlower = 5\nupper = 15\n')
    assert main(["optimize", str(tmp_path / "s.toml"), "--json"]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["not_informed"][0]["held_at"] == "electric"
    assert out["best"]["settings"]["oven"] == "electric"
    assert main(["fit", str(tmp_path / "s.toml")]) == 0
    text = capsys.readouterr().out
    assert "oven gas not estimable (confounded with the blocks)" in text
    assert "flour spelt not estimable (no runs at this level)" in text
