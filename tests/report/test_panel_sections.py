"""The report's panel section shows the numbers of ``tradeoff panel`` (checked
against statsmodels in tests/model/test_panel_anova.py) and takes the panel
notes out of the warnings."""
from __future__ import annotations

from pathlib import Path

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
