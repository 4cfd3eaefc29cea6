"""The report and the workbook show the production spread next to today's figures.

The figures themselves are checked against closed forms in
tests/search/test_spread.py and test_production.py; here only that the report
carries them, on the published tire study (Derringer & Suich 1980; the table
recalled from memory, then checked: a quadratic fit reproduces the published
optimum).
"""
from __future__ import annotations

import io
from pathlib import Path

import pandas as pd

from tradeoff.derive.load import load_study
from tradeoff.report.html import build_report_html
from tradeoff.report.workbook import build_workbook

DATA = Path(__file__).resolve().parents[1] / "data"


def _tire(tmp_path) -> Path:
    text = (DATA / "tire_tread_1980.toml").read_text(encoding="utf-8")
    text = text.replace('name = "x1"\n', 'name = "x1"\nproduction_sd = 0.2\n')
    (tmp_path / "tire_tread_1980.csv").write_bytes((DATA / "tire_tread_1980.csv").read_bytes())
    path = tmp_path / "tire.toml"
    path.write_text(text, encoding="utf-8")
    return path


def test_report_and_workbook_show_spread_and_production_chance(tmp_path):
    study = load_study(_tire(tmp_path))
    html = build_report_html(study, top=2).decode("utf-8")
    assert "In production" in html and "spread SD" in html and "x1 0.2" in html
    book = pd.read_excel(io.BytesIO(build_workbook(study, top=2)), sheet_name="solutions")
    assert {"spread SD in production", "chance all in production"} <= set(book.columns)
    assert book["spread SD in production"].gt(0).all()
