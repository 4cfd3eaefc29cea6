"""The plan view, driven headless with AppTest: the plans are the plan command's
plans (same options, same seed, same run sheet), judged in words, side by side."""
from __future__ import annotations

import io
from importlib.resources import files

import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

from conftest import DEMO, reopened
from tradeoff import load_study
from tradeoff.cli import main

APP = str(files("tradeoff_ui") / "app.py")


def _plan_view() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    at.run()
    at.switch_page("views/plan.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def _select(at: AppTest, label: str, value, nth: int = 0):
    box = [s for s in at.selectbox if s.label == label][nth]
    box.set_value(value).run()
    assert not at.exception, at.exception


def _cli(tmp_path, capsys, *options) -> pd.DataFrame:
    out = tmp_path / "cli.csv"
    assert main(["plan", str(DEMO), "--out", str(out), *options]) == 0
    capsys.readouterr()
    return pd.read_csv(io.BytesIO(out.read_bytes()), dtype=str, keep_default_na=False)


@pytest.mark.parametrize("design, cli", [
    ("central-composite", ["--design", "central-composite"]),
    ("optimal", ["--design", "optimal", "--runs", "16"]),
])
def test_workbench_plan_is_the_command_plan(tmp_path, capsys, design, cli):
    at = _plan_view()
    next(n for n in at.number_input if n.label == "Seed of the run order").set_value(
        17).run()
    _select(at, "Design", design)
    sheet = at.dataframe[0].value
    expected = _cli(tmp_path, capsys, *cli, "--seed", "17")
    # the view shows the sheet without its empty response columns
    pd.testing.assert_frame_equal(sheet.reset_index(drop=True),
                                  expected[list(sheet.columns)])
    assert set(expected.columns) - set(sheet.columns) == {
        r.name for r in load_study(DEMO).responses if not r.is_derived}
    words = " ".join(m.value for m in at.markdown)
    assert "What can be estimated" in words and "Precision" in words
    assert len(at.get("download_button")) == 3


def test_power_appears_when_asked_and_plans_compare():
    at = _plan_view()
    words = " ".join(m.value for m in at.markdown)
    assert "give the smallest change worth finding" in words
    next(n for n in at.number_input if n.label == "Smallest change worth finding").set_value(
        2.0).run()
    next(n for n in at.number_input if n.label == "Expected run-to-run SD").set_value(1.0).run()
    words = " ".join(m.value for m in at.markdown)
    assert "Power: the chance of finding a change of 2" in words
    at.toggle[0].set_value(True).run()
    assert not at.exception and not at.error
    assert "Side by side" in [s.value for s in at.subheader]
    table = at.dataframe[-1].value
    shown = table.data if hasattr(table, "data") else table
    assert "Runs to make" in list(shown["measure"])
    assert len(at.get("download_button")) == 6


def test_a_plan_the_study_cannot_take_says_why():
    at = _plan_view()
    _select(at, "Runs in the two-level part", 4)
    # four runs cannot hold four factors' main effects: the command's message, one
    # line, and the page carries on
    assert [e.value for e in at.error] == [
        "4 runs cannot separate 4 factors (it needs more runs than factors): for 4 "
        "factors: 8 (resolution IV), 16 (full factorial)"]
    _select(at, "Runs in the two-level part", 8)
    assert not at.error


def test_a_blend_starts_from_the_command_default(monkeypatch, tmp_path, capsys):
    import shutil
    import sys

    for path in DEMO.parent.glob("flour_blend*"):
        shutil.copy(path, tmp_path / path.name)
    study = tmp_path / "flour_blend.toml"
    monkeypatch.setattr(sys, "argv", ["app.py", str(study)])
    at = _plan_view()
    assert [s for s in at.selectbox if s.label == "Design"][0].value == "vertices"
    # no power for a blend plan: no boxes asking for it
    assert not [n for n in at.number_input if n.label == "Expected run-to-run SD"]
    out = tmp_path / "cli.csv"
    assert main(["plan", str(study), "--out", str(out), "--seed", "0"]) == 0
    capsys.readouterr()
    expected = pd.read_csv(out, dtype=str, keep_default_na=False)
    shown = at.dataframe[0].value.reset_index(drop=True)
    pd.testing.assert_frame_equal(shown, expected[list(shown.columns)])
    _select(at, "Design", "lattice")
    # the command's refusal, with its option named as the view's choice
    assert "the design 'vertices'" in at.error[0].value and "--" not in at.error[0].value


def test_plan_choices_survive_another_view_and_a_reload():
    """The design chosen is still chosen after a visit to another view and in a new
    browser session at the same address (ui/remembered.py, the session file)."""
    at = _plan_view()
    _select(at, "Design", "central-composite")
    _select(at, "Axial distance", "face")
    at.switch_page("views/targets.py").run()
    at.switch_page("views/plan.py").run()
    assert [s.value for s in at.selectbox if s.label == "Axial distance"] == ["face"]
    again = reopened(at, "plan")
    assert [s.value for s in again.selectbox if s.label == "Design"] == ["central-composite"]
    assert [s.value for s in again.selectbox if s.label == "Axial distance"] == ["face"]
    assert not again.warning, [w.value for w in again.warning]  # no doubled-value warning
