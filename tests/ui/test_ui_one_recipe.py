"""One row, one recipe: every figure on a row of every view belongs to the settings that
row names.

Each row of the workbench that shows settings beside figures (the solutions, the
chosen solution's predictions, the what-if panel, the suggested next runs, the
targets view's best settings) is read back and its figures are recomputed at that
row's settings: predictions by the fitted model, each d and D by the published
formulas written out (Derringer & Suich (1980), Derringer (1994):
tests/reference_desirability.py), the chances by the seeded Monte Carlo at the same
coded settings. A row whose D belonged to another recipe than its predictions (the
what-if panel once scored the previous blend) fails here. Driven headless with
Streamlit's AppTest on the snack bar and the flour blend demos.
"""
from __future__ import annotations

import re
from importlib.resources import files

import numpy as np
import pytest
from streamlit.testing.v1 import AppTest

from conftest import DEMO
from reference_desirability import study_D, study_d

APP = str(files("tradeoff_ui") / "app.py")
FLOUR = ("flour_blend.toml", "flour_blend_runs.csv")


def _open(upload: tuple[str, ...], page: str) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    if upload:
        at.switch_page("views/study.py").run()
        at.file_uploader[0].set_value([(n, (DEMO.parent / n).read_bytes(), "text/plain")
                                       for n in upload]).run()
    at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def _study(upload):
    import tradeoff

    path = DEMO if not upload else DEMO.parent / upload[0]
    study = tradeoff.load_study(path)
    return study, tradeoff.fit_study(study)


def _coded(study, settings: dict) -> np.ndarray:
    from tradeoff.study.coding import to_coded

    return to_coded(study.factors, {f.name: [settings[f.name]] for f in study.factors})


def _figures(study, fit, settings: dict) -> dict:
    """Every figure at one recipe, recomputed outside the workbench."""
    from tradeoff.search.chance import chance_in_limits

    X = _coded(study, settings)
    names, d = study_d(study, fit, X)
    chance = chance_in_limits(study, dict(fit.models), X, draws=20000, seed=study.seed)
    return {"D": float(study_D(study, fit, X)[0]),
            "d": {n: float(d[0, i]) for i, n in enumerate(names)},
            "predicted": {n: float(m.predict(X)[0]) for n, m in fit.models.items()},
            "chance": {n: float(chance.each[0, i]) for i, n in enumerate(chance.responses)},
            "chance_all": float(chance.all[0])}


def _num(x, digits=4) -> str:
    from tradeoff_ui.shown import num

    return num(x, digits)


def _chance(p) -> str:
    from tradeoff import chance_text

    return chance_text(p)


def _table(at: AppTest, has: str, lacks: str = "\0"):
    """The one table of the view with a column ``has`` and none ``lacks`` (AppTest
    does not give a table's key back)."""
    found = [d.value for d in at.dataframe if has in d.value.columns
             and lacks not in d.value.columns]
    assert len(found) == 1, (has, [list(d.value.columns) for d in at.dataframe])
    return found[0]


def _label_of(study, response: str) -> str:
    return study.response(response).display()


@pytest.mark.parametrize("upload", [(), FLOUR], ids=["snack bar", "flour blend"])
def test_results_rows_each_belong_to_one_recipe(upload):
    import tradeoff

    study, fit = _study(upload)
    at = _open(upload, "results")
    result = tradeoff.optimize(study, top=5, seed=study.seed, fit=fit)
    by_label = {s.label: s for s in result.solutions}

    # the solutions: D and the chance of every limit beside the settings of their row
    table = _table(at, "solution")
    for _, row in table.iterrows():
        sol = by_label[row["solution"]]
        fig = _figures(study, fit, sol.settings)
        assert row["D"] == _num(fig["D"], 3), row["solution"]
        assert row["all limits met"] == _chance(fig["chance_all"]), row["solution"]
        for f in study.factors:  # headed by the label, each number with its unit
            want = sol.settings[f.name]
            assert str(row[f.label]) == (want if isinstance(want, str) else
                                         f"{_num(want)} {f.unit}".strip()), f.name

    # the chosen solution's predictions, d's and chances, and its sentence
    chosen = result.solutions[0]
    fig = _figures(study, fit, chosen.settings)
    rows = _table(at, "d", lacks="limits").set_index("response")
    for name in fit.models:
        row = rows.loc[_label_of(study, name)]
        assert row["predicted"] == _num(fig["predicted"][name]), name
        if name in fig["d"]:
            assert row["d"] == _num(fig["d"][name], 3), name
            assert row["chance in limits"] == _chance(fig["chance"][name]), name
    sentence = next(m.value for m in at.markdown if m.value.startswith(f"**{chosen.label}**"))
    assert f"D = {fig['D']:.3f}" in sentence

    _what_if_is_one_recipe(at, study, fit)
    if upload:  # a component edited: the others follow, and the row follows them all
        rice = next(n for n in at.number_input if n.label.startswith("Rice flour"))
        rice.set_value(50.0).run()
        assert not at.exception and not at.error
        _what_if_is_one_recipe(at, study, fit)

    # the suggested next runs: predicted D at each run's own settings
    at.button(key="r_next_go").click().run()
    assert not at.exception, at.exception
    runs = _table(at, "predicted D")
    for _, row in runs.iterrows():
        settings = {f.name: row[f.display()] for f in study.factors}
        assert float(row["predicted D"]) == pytest.approx(
            _figures(study, fit, settings)["D"], abs=1e-6), row["run"]


def _what_if_is_one_recipe(at: AppTest, study, fit) -> None:
    """The what-if row: the boxes' settings give every figure shown beside them."""
    settings = {}
    for f in study.factors:
        boxes = (at.selectbox if f.is_categorical else at.number_input)
        box = next(b for b in boxes if b.label == f.display()
                   and str(b.key or "").startswith("w"))
        settings[f.name] = box.value
    comps = [f for f in study.factors if getattr(f, "is_component", False)]
    if comps:  # the blend shown adds up: the boxes are the recipe itself
        assert sum(settings[c.name] for c in comps) == pytest.approx(comps[0].total,
                                                                     abs=1e-9)
    fig = _figures(study, fit, settings)
    sentence = next(m.value for m in at.markdown if m.value.startswith("D = "))
    assert sentence.startswith(f"D = {fig['D']:.3f};")
    assert _chance(fig["chance_all"]) in sentence
    table = _table(at, "limits").set_index("response")
    for name in fit.models:
        row = table.loc[_label_of(study, name)]
        assert row["predicted"] == _num(fig["predicted"][name]), name
        if name in fig["d"]:
            assert row["d"] == _num(fig["d"][name], 3), name
            assert row["chance in limits"] == _chance(fig["chance"][name]), name


@pytest.mark.parametrize("upload", [(), FLOUR], ids=["snack bar", "flour blend"])
def test_the_best_settings_now_give_the_d_beside_them(upload):
    study, fit = _study(upload)
    at = _open(upload, "targets")
    panel = next(m.value for m in at.sidebar.markdown if "Best settings now" in m.value)
    shown_d = float(re.search(r"D = ([\d.]+)", panel).group(1))
    settings = {}
    for f in study.factors:
        value = re.search(rf"- {re.escape(f.label)}: \*\*([^*]+)\*\*", panel).group(1)
        value = value.replace("\\", "")  # Markdown escapes
        settings[f.name] = value if f.is_categorical else float(value.split()[0])
    # the panel prints 4 significant digits: D at the printed settings is D shown
    # to within what that rounding moves it
    assert _figures(study, fit, settings)["D"] == pytest.approx(shown_d, abs=2e-3)
