"""Closing the loop in the workbench, driven headless with AppTest: pin recipes and
compare them, a batch sheet, confirmation runs typed in, runs corrected. The
numbers are the library's (tests/maps/test_recipe_compare.py,
tests/confirm/test_batch_sheet.py, tests/confirm/test_entered.py,
tests/derive/test_edited_runs.py); here the views show exactly those."""
from __future__ import annotations

import json
import shutil
import sys
from importlib.resources import files

import pandas as pd
import pytest
from streamlit.testing.v1 import AppTest

from conftest import DEMO, reopened
from tradeoff import load_study
from tradeoff.cli import main
from tradeoff.maps.recipe_compare import compare_recipes
from tradeoff.model.study_fit import fit_study

APP = str(files("tradeoff_ui") / "app.py")


@pytest.fixture
def snack(tmp_path, monkeypatch):
    """A copy of the demo opened by path, as ``tradeoff app study.toml`` opens it."""
    for path in DEMO.parent.glob("snack_bar*"):
        shutil.copy(path, tmp_path / path.name)
    study = tmp_path / "snack_bar.toml"
    monkeypatch.setattr(sys, "argv", ["app.py", str(study)])
    return study


def _at(page: str | None = None) -> AppTest:
    at = AppTest.from_file(APP, default_timeout=120)
    at.run()
    if page:
        at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    return at


def _pin_two(at: AppTest) -> None:
    at.switch_page("views/results.py").run()
    at.button(key="r_pin").click().run()
    at.button(key="r_pin_whatif").click().run()
    assert list(at.session_state["pins"]) == ["S1", "what-if 1"]


def test_compare_shows_the_library_figures_for_each_pinned_recipe():
    at = _at()
    assert "No recipe pinned yet" in at.switch_page("views/compare.py").run().info[0].value
    _pin_two(at)
    at.switch_page("views/compare.py").run()
    assert not at.exception and not at.error
    shown = at.dataframe[0].value
    shown = shown.data if hasattr(shown, "data") else shown
    assert list(shown.columns) == ["what", "of", "unit", "S1", "what-if 1"]
    study = load_study(DEMO)
    pins = at.session_state["pins"]
    expected = compare_recipes(study, fit_study(study), dict(pins))
    d_row = expected.index[expected["part"] == "D"][0]
    assert shown.loc[shown["what"] == "D", "S1"].item() == f"{expected.loc[d_row, 'S1']:.3g}"
    # a prediction with its interval, both the library's
    p = expected.set_index(["part", "item"])["S1"]
    row = shown[shown["of"] == "Water activity"].iloc[0]
    assert row["S1"] == (f"{p[('predicted', 'water_activity')]:.4g}  "
                         f"({p[('interval low', 'water_activity')]:.4g} to "
                         f"{p[('interval high', 'water_activity')]:.4g})")
    # unpinning takes the column away
    at.button(key="c_unpin_what-if 1").click().run()
    shown = at.dataframe[0].value
    shown = shown.data if hasattr(shown, "data") else shown
    assert list(shown.columns) == ["what", "of", "unit", "S1"]


def test_batch_sheet_adds_up_to_the_batch():
    at = _at("batch")
    # no pin: the best balance, protein and glycerol read as % of the batch (unit %)
    weigh = at.dataframe[0].value
    assert weigh.groupby("recipe")["weigh (g)"].sum().tolist() == [1000.0]
    next(n for n in at.number_input if n.label == "Batch size (g)").set_value(750.0).run()
    weigh = at.dataframe[0].value
    assert weigh["weigh (g)"].sum() == 750.0
    assert set(weigh["ingredient"]) == {"protein", "glycerol", "rest of the recipe"}
    assert len(at.dataframe[2].value) == 2  # two confirmation batches of the one recipe
    assert len(at.get("download_button")) == 3
    _pin_two(at)
    at.switch_page("views/batch.py").run()
    assert not at.error
    assert sorted(at.dataframe[0].value["recipe"].unique()) == ["S1", "what-if 1"]


def test_confirmation_runs_typed_give_the_command_numbers(snack, capsys):
    at = _at("confirm")
    typed = pd.DataFrame({"run": ["K1", "K2"], "protein": [27.0, 27.0],
                          "glycerol": [6.0, 6.0], "binder": ["date paste", "date paste"],
                          "mix_temp": [45.0, 45.0], "hardness_fresh": [17.4, 18.1]}
                         ).reindex(columns=at.session_state["confirm_typed"].columns
                                   ).astype(object)
    at.session_state["confirm_typed"] = typed
    at.run()
    assert not at.exception and not at.error, [e.value for e in at.error]
    shown = at.dataframe[2].value  # editor, verdicts, then the checks
    assert not (snack.parent / "snack_bar_confirmations.csv").exists()  # not saved yet
    at.button(key="cf_save").click().run()
    assert not at.error, [e.value for e in at.error]
    capsys.readouterr()
    assert main(["confirm", str(snack), "--json"]) == 0
    told = pd.DataFrame(json.loads(capsys.readouterr().out)["checks"])
    for column in ("measured", "predicted", "pi_low", "pi_high"):
        assert shown[column if column in shown else {
            "pi_low": "interval low (95%)", "pi_high": "interval high (95%)"}[column]
        ].tolist() == pytest.approx(told[column].tolist())


def test_a_wrong_cell_is_named_and_a_saved_correction_is_used(snack):
    at = _at("data")
    table = at.session_state["data_typed"].copy()
    first = table.index[0]
    protein = table.loc[first, "protein"]
    table.loc[first, "protein"] = "twenty"
    at.session_state["data_typed"] = table
    at.run()
    assert [e.value for e in at.error] == [
        "snack_bar_runs.csv, row 2, column 'protein': expected a number, found 'twenty': "
        "type a number or leave the cell blank"]
    assert at.button(key="dv_save").disabled
    table.loc[first, "protein"] = protein
    table.loc[first, "liking"] = "1.5"
    at.session_state["data_typed"] = table
    at.run()
    assert not at.error
    changes = at.dataframe[1].value
    assert changes["column"].tolist() == ["liking"] and changes["after"].tolist() == ["1.5"]
    runs = snack.parent / "snack_bar_runs.csv"
    before = runs.read_bytes()
    at.button(key="dv_save").click().run()
    assert not at.exception and not at.error
    assert runs.read_bytes() != before
    assert load_study(snack).runs["liking"].iloc[0] == 1.5
    # the views read the saved runs
    at.switch_page("views/study.py").run()
    assert not at.error


def test_a_reload_keeps_pins_batch_choices_and_typed_tables():
    """What is pinned, chosen for the batch sheet and typed but not saved comes back
    in a new browser session at the same address (a reload, a new tab)."""
    at = _at()
    _pin_two(at)
    at.switch_page("views/batch.py").run()
    next(n for n in at.number_input if n.label == "Batch size (g)").set_value(750.0).run()
    order = at.dataframe[2].value
    # the confirm table starts from the batch sheet's batches, in its run order
    at.switch_page("views/confirm.py").run()
    typed = at.session_state["confirm_typed"]
    assert typed["run"].tolist() == order["run"].tolist()
    pins = at.session_state["pins"]
    for run, recipe, (_, row) in zip(order["run"], order["recipe"], typed.iterrows()):
        assert {n: row[n] for n in pins[recipe]} == pins[recipe], run
    typed = typed.copy()
    typed.loc[0, "hardness_fresh"] = 17.5
    at.session_state["confirm_typed"] = typed
    at.run()
    at.switch_page("views/data.py").run()
    runs = at.session_state["data_typed"].copy()
    runs.loc[runs.index[0], "liking"] = "1.5"
    at.session_state["data_typed"] = runs
    at.run()
    again = reopened(at)
    assert again.session_state["pins"] == pins
    assert again.session_state["batch"]["size_g"] == 750.0
    back = again.session_state["confirm_typed"]
    assert back.loc[0, "hardness_fresh"] == "17.5"  # typed as text, read as a number
    assert back["run"].tolist() == order["run"].tolist()
    assert again.session_state["data_typed"].loc[0, "liking"] == "1.5"
    again.switch_page("views/batch.py").run()
    assert next(n for n in again.number_input if n.label == "Batch size (g)").value == 750.0
    assert again.dataframe[0].value["weigh (g)"].groupby(
        again.dataframe[0].value["recipe"]).sum().tolist() == [750.0, 750.0]


def test_a_wrong_confirmation_cell_is_traced_to_its_line(snack):
    at = _at("confirm")
    typed = pd.DataFrame({"run": ["K1", "K2", "K3"], "protein": [27.0] * 3,
                          "glycerol": [6.0] * 3, "binder": ["date paste"] * 3,
                          "mix_temp": [45.0] * 3,
                          "hardness_fresh": ["17.4", "", "soft"]}
                         ).reindex(columns=at.session_state["confirm_typed"].columns
                                   ).astype(object)
    at.session_state["confirm_typed"] = typed
    at.run()
    assert "row 3" in at.error[0].value and "'soft'" in at.error[0].value
    captions = [c.value for c in at.caption]
    assert "Row 3 of the saved table is line 3 of the table above (run K3)." in captions
    assert any(c.startswith("Nothing measured yet in K2") for c in captions)


def test_a_reload_keeps_the_what_if_settings():
    at = _at("results")
    box = next(n for n in at.number_input if str(n.key).startswith("w"))
    start = box.value
    box.set_value(round(start + 0.5, 3)).run()
    assert not at.exception, at.exception
    typed = dict(at.session_state["whatif"])
    again = reopened(at, "results")
    assert again.session_state["whatif"] == typed
    shown = next(n for n in again.number_input if str(n.key).startswith("w"))
    assert shown.value == round(start + 0.5, 3)
