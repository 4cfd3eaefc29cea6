"""The report's panel section shows the numbers of ``tradeoff panel`` (checked
against statsmodels in tests/model/test_panel_anova.py) and takes the panel
notes out of the warnings."""
from __future__ import annotations

from pathlib import Path

import pytest

from tradeoff.derive.load import load_study
from tradeoff.model.panel_summary import panel_analysis
from tradeoff.report.data import report_data
from tradeoff.report.html import build_report_html
from tradeoff.report.panel_text import panel_text

DEMO = Path(__file__).resolve().parents[2] / "demo_data"


def test_report_panel_section_matches_the_panel_command():
    study = load_study(DEMO / "snack_bar_raw.toml")
    data = report_data(study, top=2, seed=1)
    page = build_report_html(study, data=data).decode()
    assert '<section id="panel"><h2>The panel</h2>' in page
    ours = panel_analysis(study)
    for name, res in ours["attributes"].items():
        assert f"<h3>{name}</h3>" in page
        run = res["anova"]["run"]
        assert f"<td class=\"num\">{run['f']:.3g}</td>" in page
    assert "run x assessor" in page  # crunch has two sessions
    assert not any(w.startswith("panel '") for w in data["warnings"])
    text = panel_text(ours)
    assert "== crunch  (category points 1 to 5; 480 scores" in text


def test_workbook_panel_sheets_match_statsmodels():
    # The workbook's panel sheets: liking (one session) has run F on (19, 209) df
    # equal to statsmodels OLS score ~ C(run) + C(assessor), type II ANOVA (reference
    # library); every pair of runs once; the crunch response's effects and thresholds
    # on the terms sheet.
    import io

    import pandas as pd
    import statsmodels.api as sm
    import statsmodels.formula.api as smf

    from tradeoff.report.workbook import build_workbook

    study = load_study(DEMO / "snack_bar_raw.toml")
    data = report_data(study, top=1, seed=1)
    sheets = pd.read_excel(io.BytesIO(build_workbook(study, data=data)), sheet_name=None)
    anova = sheets["panel anova"].set_index(["attribute", "source"])
    scores = pd.read_csv(DEMO / "snack_bar_panel.csv")
    liking = scores[scores["attribute"] == "liking"]
    ref = sm.stats.anova_lm(smf.ols("score ~ C(run) + C(assessor)", liking).fit(), typ=2)
    row = anova.loc[("liking", "run")]
    assert row["F"] == pytest.approx(ref.loc["C(run)", "F"], rel=1e-9)
    assert row["df"] == ref.loc["C(run)", "df"] and row["denominator df"] == ref.loc[
        "Residual", "df"]
    assert row["p"] == pytest.approx(ref.loc["C(run)", "PR(>F)"], rel=1e-6, abs=1e-300)
    pairs = sheets["panel pairs"]
    assert len(pairs[pairs["attribute"] == "liking"]) == 20 * 19 // 2
    means = sheets["panel means"]
    assert set(means["attribute"]) == {"liking", "crunch"}
    terms = sheets["terms"]
    crunch = terms[terms["response"] == "crunch_expected"]
    assert list(crunch["term"])[:4] == ["protein", "glycerol", "binder", "mix_temp"]
    assert crunch["term"].str.startswith("threshold").sum() == 4
