"""A study without factors: one product stored at 20, 30 and 40 degC, and a panel of
three products.

The storage data are built from a known rate (1 N a week at 20 degC, an
activation energy of 80 kJ/mol) plus seeded noise (tests/study_kinds.py): a
property-check study.
Every number the tool gives is checked against an independent computation
written out here:

- the one-step model value = v0 + k20 exp(-E/R (1/T - 1/T20)) t fitted with
  scipy.optimize.curve_fit (the reference library);
- the shelf life where the mean curve, and its one-sided 95 % confidence bound
  (delta method, t with n - 3 degrees of freedom), reach the limit, as in ICH
  Q1E (2003), Evaluation of stability data, section 2.4;
- Q10 = exp(10 Ea / (R T (T + 10))) and the two-step Arrhenius check (a
  straight line per temperature, then ln k regressed on 1/T), as in Labuza
  (1982), Shelf-life dating of foods (from memory).
"""
from __future__ import annotations

import io
import json
import math
import re
import sys
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from scipy import optimize, stats

from tradeoff import StudyError, load_study
from tradeoff.cli import main
from tradeoff.derive.derived import arrhenius_table
from tradeoff.errors import DataError

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from study_kinds import (ONE_PRODUCT_STUDY, R_GAS, STORAGE_WEEKS,  # noqa: E402
                         one_product_storage)

T20 = 293.15
LIMIT = 35.0
SCHEDULE = STORAGE_WEEKS
# the shared one-product study, with three more responses of the same fit
STUDY = ONE_PRODUCT_STUDY + """
[[responses]]
name = "life_mean"
unit = "weeks"
derive = "shelf_life"
property = "hardness"
limit = 35
direction = "up"
at_temperature = 20
estimate = "mean"

[[responses]]
name = "ea"
unit = "kJ/mol"
derive = "activation_energy"
property = "hardness"

[[responses]]
name = "q10"
derive = "q10"
property = "hardness"
at_temperature = 20
"""


@pytest.fixture(scope="module")
def one(tmp_path_factory):
    folder = tmp_path_factory.mktemp("one")
    (folder / "storage.csv").write_text(one_product_storage(), encoding="utf-8")
    (folder / "study.toml").write_text(STUDY, encoding="utf-8")
    return folder / "study.toml", pd.read_csv(folder / "storage.csv")


@pytest.fixture(scope="module")
def reference(one):
    """The one-step fit, its bounds and Q10, computed independently (scipy)."""
    _, data = one
    t = data["week"].to_numpy(float)
    T = np.where(data["temp_c"].isna(), T20 - 273.15, data["temp_c"]) + 273.15
    y = data["value"].to_numpy(float)

    def model(x, v0, k20, E):
        tt, TT = x
        return v0 + k20 * np.exp(-E / R_GAS * (1 / TT - 1 / T20)) * tt

    p, cov = optimize.curve_fit(model, (t, T), y, p0=[10, 0.5, 60e3])
    df = len(y) - 3
    c = stats.t.ppf(0.95, df)          # one-sided 95 % bound

    def sd(time):  # at 20 degC the rate's temperature factor is 1: gradient (1, t, 0)
        g = np.array([1.0, time, 0.0])
        return math.sqrt(g @ cov @ g)

    def reach(sign):
        return optimize.brentq(lambda s: p[0] + p[1] * s + sign * c * sd(s) - LIMIT, 0, 200)

    two = stats.t.ppf(0.975, df)
    factor = 10 / (T20 * (T20 + 10))
    q = math.exp(p[2] / R_GAS * factor)
    q_se = q * factor * math.sqrt(cov[2, 2]) / R_GAS
    # Q10's interval: Ea's interval carried through the exponential (it stays positive)
    q_lo, q_hi = (math.exp((p[2] + sign * two * math.sqrt(cov[2, 2])) / R_GAS * factor)
                  for sign in (-1, 1))
    return {"life": (reach(+1), reach(+1), reach(-1)),
            "life_mean": ((LIMIT - p[0]) / p[1], reach(+1), reach(-1)),
            "ea": (p[2] / 1e3, (p[2] - two * math.sqrt(cov[2, 2])) / 1e3,
                   (p[2] + two * math.sqrt(cov[2, 2])) / 1e3),
            "q10": (q, q_lo, q_hi), "q10_se": q_se,
            "ea_se": math.sqrt(cov[2, 2]) / 1e3}


def test_it_loads_and_check_gives_the_shelf_life_with_its_bounds(one, reference, capsys):
    path, _ = one
    study = load_study(path)
    assert study.factors == () and list(study.runs["run"]) == ["P1"]
    assert main(["check", str(path), "--json"]) == 0
    summary = json.loads(capsys.readouterr().out)
    for name in ("life", "life_mean", "ea", "q10"):
        value, lower, upper = reference[name]
        got = summary["derived_values"][name][0]
        assert got["run"] == "P1"
        assert got["value"] == pytest.approx(value, rel=1e-5)
        assert got["lower"] == pytest.approx(lower, rel=1e-5)
        assert got["upper"] == pytest.approx(upper, rel=1e-5)
    for name in ("ea", "q10"):
        assert summary["derived_values"][name][0]["se"] == pytest.approx(
            reference[f"{name}_se"], rel=1e-5)
    # the bound shelf life lies below the mean one, as a conservative bound must
    assert reference["life"][0] < reference["life_mean"][0]
    assert main(["check", str(path)]) == 0
    text = capsys.readouterr().out
    life, lower, upper = reference["life"]
    assert "Factors: none (nothing is varied" in text
    assert (f"life                 P1       {life:.4g} weeks (lower {lower:.4g}, upper "
            f"{upper:.4g}; standard error") in text


def test_the_two_step_arrhenius_way_agrees(one, reference):
    # Labuza (1982), from memory: a straight line per temperature (time 0 shared),
    # then ln k against 1/T; the slope is -Ea/R. A cruder estimate than the one-step
    # fit: it agrees within three of the one-step fit's standard errors.
    _, data = one
    zero = data[data["week"] == 0]
    inv, ln_k = [], []
    for T in SCHEDULE:
        part = pd.concat([zero, data[data["temp_c"] == T]])
        line = stats.linregress(part["week"], part["value"])
        inv.append(1 / (T + 273.15))
        ln_k.append(math.log(line.slope))
    ea = -stats.linregress(inv, ln_k).slope * R_GAS / 1e3
    assert ea == pytest.approx(reference["ea"][0], abs=3 * reference["ea_se"])
    assert ea == pytest.approx(80.0, abs=5.0)   # the rate the data were built from


def test_arrhenius_chart_points_carry_their_bounds(one):
    path, data = one
    points = arrhenius_table(load_study(path), "life")
    own = points[points["series"] == "own line"].set_index("temperature")
    zero = data[data["week"] == 0]
    for T in SCHEDULE:
        part = pd.concat([zero, data[data["temp_c"] == T]])
        line = stats.linregress(part["week"], part["value"])
        half = stats.t.ppf(0.975, len(part) - 2) * line.stderr / line.slope
        assert own.loc[T, "ln_rate"] == pytest.approx(math.log(line.slope), rel=1e-9)
        assert own.loc[T, "ln_low"] == pytest.approx(math.log(line.slope) - half, rel=1e-9)
        assert own.loc[T, "ln_high"] == pytest.approx(math.log(line.slope) + half,
                                                      rel=1e-9)
    line = points[points["series"] == "one-step fit"]
    assert len(line) >= 2 and (line["ln_low"] < line["ln_rate"]).all()
    assert (line["ln_rate"] < line["ln_high"]).all()
    asked = points[points["series"] == "asked"].iloc[0]
    assert asked["temperature"] == 20 and asked["ln_low"] < asked["ln_high"]


def test_fit_optimize_next_plan_and_confirm_say_there_is_nothing_to_model(one, capsys):
    path, _ = one
    for argv in (["fit", str(path)], ["fit", str(path), "--json"],
                 ["fit", str(path), "--response", "life"], ["optimize", str(path)],
                 ["optimize", str(path), "--json"], ["next", str(path), "--runs", "2"],
                 ["plan", str(path), "--out", str(path.parent / "plan.csv")],
                 ["confirm", str(path)]):
        assert main(argv) == 2, argv
        captured = capsys.readouterr()
        lines = captured.err.strip().splitlines()
        assert len(lines) == 1 and lines[0].startswith("error: "), (argv, captured.err)
        assert captured.out == "" and "Traceback" not in captured.err
    assert main(["fit", str(path)]) == 2
    assert "nothing to model or search: the study has no factors" in capsys.readouterr().err
    assert not (path.parent / "plan.csv").exists()


def test_report_shows_the_derived_values_and_arrhenius_chart(one, reference, capsys):
    path, _ = one
    page_path, book_path = path.parent / "r.html", path.parent / "r.xlsx"
    for out in (page_path, book_path):
        assert main(["report", str(path), "--out", str(out)]) == 0, capsys.readouterr().err
    page = page_path.read_text(encoding="utf-8")
    sections = re.findall(r'<section id="(\w+)">', page)
    assert sections == ["summary", "derived", "kinetics", "design", "warnings", "cautions",
                        "reproduce"]
    summary = page.split('<section id="summary">')[1].split("</section>")[0]
    assert "The study varies no factor, so there is nothing to model or search" in summary
    derived = page.split('<section id="derived">')[1].split("</section>")[0]
    for name in ("life", "life_mean", "ea", "q10"):
        value, lower, upper = reference[name]
        for x in (value, lower, upper):
            assert f'<td class="num">{x:.4g}</td>' in derived, (name, x)
    kinetics = page.split('<section id="kinetics">')[1].split("</section>")[0]
    assert kinetics.count("<svg") == 1 and "Arrhenius chart: hardness (zero order)" in kinetics
    assert "None" not in re.sub(r"<[^>]+>", " ", page)
    sheets = pd.read_excel(io.BytesIO(book_path.read_bytes()), sheet_name=None)
    assert not {"solutions", "models", "terms", "factors"} & set(sheets)
    values = sheets["derived values"].set_index("response")
    for name in ("life", "life_mean", "ea", "q10"):
        value, lower, upper = reference[name]
        assert values.loc[name, "value"] == pytest.approx(value, rel=1e-5)
        assert values.loc[name, "lower"] == pytest.approx(lower, rel=1e-5)
        assert values.loc[name, "upper"] == pytest.approx(upper, rel=1e-5)
    summary = dict(zip(sheets["summary"]["item"], sheets["summary"]["value"]))
    assert summary["search"].startswith("Nothing to model or search")


def test_a_panel_of_three_products_without_factors(tmp_path, capsys):
    # Panel means by hand (pandas groupby): the plain average of each product's scores.
    rng = np.random.default_rng(5)
    rows = [(p, f"A{a}", "liking", int(rng.integers(3, 9)))
            for p in ("cookie", "bar", "cake") for a in range(1, 7)]
    scores = pd.DataFrame(rows, columns=["run", "assessor", "attribute", "score"])
    scores.to_csv(tmp_path / "panel.csv", index=False)
    (tmp_path / "study.toml").write_text(
        '[study]\nname = "three products"\n\n[panel]\ndata = "panel.csv"\nscale = [1, 9]\n\n'
        '[[responses]]\nname = "liking"\nderive = "panel_mean"\nattribute = "liking"\n')
    assert main(["check", str(tmp_path / "study.toml"), "--json"]) == 0
    got = {v["run"]: v["value"] for v in
           json.loads(capsys.readouterr().out)["derived_values"]["liking"]}
    means = scores.groupby("run")["score"].mean()
    assert list(got) == ["cookie", "bar", "cake"]
    for product, value in got.items():
        assert value == pytest.approx(means[product], rel=1e-12)
    assert main(["report", str(tmp_path / "study.toml"), "--out",
                 str(tmp_path / "r.html")]) == 0


def test_refusals(tmp_path):
    (tmp_path / "plain.toml").write_text('[study]\nname = "x"\ndata = "runs.csv"\n\n'
                                         '[[responses]]\nname = "y"\n')
    with pytest.raises(StudyError, match=r"plain\.toml: no factors: add at least one "
                                         r"\[\[factors\]\] table .*a \[storage\] or \[panel\]"):
        load_study(tmp_path / "plain.toml")
    (tmp_path / "storage.csv").write_text("week,property,value\n0,hardness,12\n")
    (tmp_path / "s.toml").write_text(STUDY.replace('temperature = "temp_c"\n', ""))
    with pytest.raises(DataError, match=r"storage\.csv: no column 'run' .*id of the product"):
        load_study(tmp_path / "s.toml")
