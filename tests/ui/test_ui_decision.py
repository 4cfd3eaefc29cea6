"""The recommendation's rows (AppTest): one recipe per row, factor goals as rows, and
the chance in production explained by them."""
from __future__ import annotations

import re
from importlib.resources import files

from streamlit.testing.v1 import AppTest

APP = str(files("tradeoff_ui") / "app.py")


def _percent(text: str) -> float:
    """A chance as shown ('> 99.9 %', '< 0.1 %', '80.3 %') as a number of percent."""
    value = float(re.search(r"[\d.]+", text).group())
    return 99.95 if text.startswith(">") else 0.05 if text.startswith("<") else value


def test_factor_goal_is_a_row_and_explains_the_chance_in_production():
    import tradeoff
    from tradeoff.inputs import with_production_sd
    from tradeoff.search.chance import chance_text

    at = AppTest.from_file(APP, default_timeout=240)
    at.run()
    at.session_state["spread"] = {"protein": 1.5}   # % protein, an SD in production
    at.switch_page("views/results.py")
    at.run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    table = next(d.value for d in at.dataframe if "chance in production" in d.value.columns
                 and "response" in d.value.columns)
    rows = table.set_index("response")
    factor = rows.loc["Protein content (%), factor goal"]
    assert factor["chance in production"] != ""
    # the same study and search, through the library (independent of the page)
    from tradeoff.study.demo import demo_study_path

    study = with_production_sd(tradeoff.load_study(demo_study_path()), "protein",
                               1.5)
    result = tradeoff.optimize(study, top=int(at.session_state["top"]), seed=study.seed)
    best = result.best
    assert factor["chance in production"] == chance_text(
        best.factor_chance_production["protein"])
    # one recipe per row: every response row is the recommendation's own prediction
    for name, o in best.responses.items():
        shown = rows.loc[study.response(name).display()]
        assert shown["predicted"] == f"{o.predicted:.4g}"
        assert shown["chance in production"] == chance_text(o.chance_in_production)
    # the chance of all at once never exceeds the least likely row (the same draws)
    joint = 100 * best.chance_all_production
    least = min(_percent(v) for v in table["chance in production"] if v)
    assert joint <= least + 0.05
    sentence = next(m.value for m in at.markdown if "in production:" in m.value)
    assert f"in production: **{chance_text(best.chance_all_production)}**" in sentence
