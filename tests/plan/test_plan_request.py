"""The workbench's plans are the command's plans; their evaluation in words and side by side."""
from __future__ import annotations

import math

import pytest
from scipy import stats

from tradeoff import PlanError
from tradeoff.cli import main
from tradeoff.plan.plan_compare import compare_plans
from tradeoff.plan.plan_request import design_choices, plan_request
from tradeoff.plan.plan_words import plan_measures, plan_words
from tradeoff.study.demo import demo_study_path

SNACK = demo_study_path()
BLEND = SNACK.parent / "flour_blend.toml"


def _cli_sheet(tmp_path, study, name, *options):
    out = tmp_path / name
    assert main(["plan", str(study), "--out", str(out), *options]) == 0
    return out.read_bytes()


@pytest.mark.parametrize("design, options, cli", [
    ("central-composite", {"seed": 11}, ["--design", "central-composite", "--seed", "11"]),
    ("optimal", {"seed": 5, "runs": 18}, ["--design", "optimal", "--seed", "5",
                                          "--runs", "18"]),
    ("optimal", {"seed": 5, "runs": 18, "criterion": "i"},
     ["--design", "optimal", "--seed", "5", "--runs", "18", "--criterion", "i"]),
])
def test_same_run_sheet_as_the_command(tmp_path, capsys, design, options, cli):
    # the reference is the command itself, run with the same seed
    planned = plan_request(SNACK, design=design, **options)
    assert planned.csv == _cli_sheet(tmp_path, SNACK, "a.csv", *cli)
    capsys.readouterr()
    assert len(planned.sheet) == planned.report["model"]["runs"]
    # the workbook holds the table the command's workbook holds, cell for cell
    import io

    import pandas as pd
    from openpyxl import load_workbook

    cli_book = _cli_sheet(tmp_path, SNACK, "a.xlsx", *cli)
    capsys.readouterr()

    def cells(data):
        sheet = load_workbook(io.BytesIO(data)).active
        return [[c.value for c in row] for row in sheet.iter_rows()]

    assert cells(planned.xlsx) == cells(cli_book)


def test_blend_plan_is_the_command_plan(tmp_path, capsys):
    planned = plan_request(BLEND, design="vertices", seed=3)
    assert planned.csv == _cli_sheet(tmp_path, BLEND, "b.csv", "--design", "vertices",
                                     "--seed", "3")
    capsys.readouterr()
    comps = ["rice_flour", "sorghum_flour", "tapioca_starch"]
    total = planned.sheet[comps].astype(float).sum(axis=1)
    assert (abs(total - 100) < 1e-9).all()  # the study's total (flour_blend.toml)


def test_the_command_message_comes_through():
    with pytest.raises(PlanError, match="not one I know"):
        plan_request(SNACK, design="bogus")
    with pytest.raises(TypeError, match="unknown option"):
        plan_request(SNACK, colour="red")


def test_design_choices_follow_the_study():
    from tradeoff import load_study

    assert design_choices(load_study(SNACK, with_data=False))[0] == "factorial"
    assert "optimal" not in design_choices(load_study(BLEND, with_data=False))
    # the flour blend's bounds cut into the simplex: the command's default is the
    # extreme vertices, and the workbench offers it first
    assert design_choices(load_study(BLEND, with_data=False))[0] == "vertices"


def test_half_fraction_words_name_its_aliases():
    # 2^(4-1) with I = ABCD: resolution IV, two-factor interactions aliased in
    # pairs AB = CD, AC = BD, AD = BC (Montgomery, Design and Analysis of
    # Experiments, the one-half fraction of the 2^4; from memory)
    planned = plan_request(SNACK, runs=8, seed=1)
    m = plan_measures(planned.report)
    assert m["resolution"] == 4 and m["aliased_pairs"] == 3
    words = " ".join(plan_words(planned.report))
    for pair in ("protein:glycerol with binder:mix_temp",
                 "protein:binder with glycerol:mix_temp",
                 "protein:mix_temp with glycerol:binder"):
        assert pair in words
    assert "no run is left over" in words  # 8 runs, 8 coefficients: 0 df


def test_power_in_words_is_the_noncentral_t():
    # full 2^4 with 4 centre points, interactions model: 11 coefficients from 20
    # runs leave 9 df; with coded +-1 columns (orthogonal) each coefficient's SE
    # is sigma / sqrt(16) ... the centre points add nothing to a +-1 column's
    # sum of squares: SE = sigma / sqrt(16). Power of the two-sided t test of
    # beta = effect / 2 is P(|T'| > t crit), T' noncentral t (common practice).
    planned = plan_request(SNACK, center=4, seed=1, effect=1.5, sd=1.0)
    m = plan_measures(planned.report)
    df = m["error_df"]
    assert df == 20 - 11
    delta = (1.5 / 2) / (1.0 / math.sqrt(16))
    t = stats.t.ppf(0.975, df)
    expected = stats.nct.sf(t, df, delta) + stats.nct.cdf(-t, df, delta)
    assert m["lowest_power"] == pytest.approx(expected, abs=1e-4)
    words = " ".join(plan_words(planned.report))
    assert f"at least {expected:.0%}" in words
    assert "largest variance inflation factor is 1 " in words  # orthogonal plan


def test_compare_names_the_better_plan_per_measure():
    fraction = plan_request(SNACK, runs=8, seed=1, model="interactions")
    full = plan_request(SNACK, center=4, seed=1, model="interactions")
    table = compare_plans(fraction.report, full.report).set_index("key")
    assert table.loc["runs", "first"] == 8 and table.loc["runs", "second"] == 20
    assert table.loc["runs", "better"] == "first"  # fewer runs
    assert table.loc["error_df", "better"] == "second"  # 0 against 9
    assert table.loc["not_estimable", "better"] == "second"
    assert table.loc["largest_vif", "better"] == "same"  # both orthogonal: VIF 1
    assert table.loc["resolution", "better"] == ""  # a full factorial has none
    # the order is fixed, whichever plan comes first
    swapped = compare_plans(full.report, fraction.report).set_index("key")
    flip = {"first": "second", "second": "first", "same": "same", "": ""}
    assert (swapped["better"] == table["better"].map(flip)).all()


def test_study_file_that_goes_with_the_sheet_opens_the_sheet(tmp_path):
    from tradeoff import load_study
    from tradeoff.plan.plan_request import plan_study_file

    study = load_study(SNACK, with_data=False)
    planned = plan_request(SNACK, design="box-behnken", seed=2)
    (tmp_path / "bb.csv").write_bytes(planned.csv)
    (tmp_path / "bb.toml").write_bytes(plan_study_file(study, "bb.csv"))
    again = load_study(tmp_path / "bb.toml", with_data=False)
    assert again.data_path.name == "bb.csv"
    assert again.factor_names == study.factor_names
    assert again.response_names == study.response_names


def test_blend_plan_words_ask_for_no_power_inputs():
    # a blend's plan is judged without power, and the plan view offers no box for
    # the change or the SD: the words must not ask for them (common practice: a
    # screen asks only for what it can take). The runs and the left-over runs are
    # still said: 15 quadratic-by-process terms from 36 runs leave 21.
    planned = plan_request(BLEND, design="vertices", centroids="overall", seed=0)
    words = plan_words(planned.report)
    assert not any(line.startswith("Power") for line in words)
    assert words[0] == "Runs: 36 to make."
    assert "Precision: 21 runs left over" in " ".join(words)
    # a plan that can be judged for power still asks
    assert any(line.startswith("Power: give") for line in plan_words(
        plan_request(SNACK, design="central-composite", seed=1).report))
