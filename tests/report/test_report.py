"""The result sheet (HTML) and the workbook.

Checks: the report builds for the invented demo study and for the published
Derringer & Suich (1980) tire tread example (Journal of Quality Technology
12(4), 214-219; NIST/SEMATECH e-Handbook 5.5.3.2.2; table and published values
from memory, then checked: a quadratic fit reproduces the published optimum); it
fetches nothing from
the network; its numbers are those of ``tradeoff optimize --json``; the
workbook opens with pandas and its model numbers agree with statsmodels OLS.
"""
from __future__ import annotations

import datetime as dt
import hashlib
import json
import re
import shutil
from pathlib import Path

import numpy as np
import pandas as pd
import pytest

import tradeoff
from tradeoff.cli import main
from tradeoff.errors import StudyError
from tradeoff.model.study_fit import fit_study
from tradeoff.report.data import CAUTIONS, report_data
from tradeoff.report.html import build_report_html
from tradeoff.report.workbook import build_workbook
from tradeoff.report.write import write_report
from tradeoff.search.search import optimize

from conftest import page_json as _embedded

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "demo_data" / "snack_bar.toml"
TIRE = Path(__file__).resolve().parents[1] / "data" / "tire_tread_1980.toml"
NOW = dt.datetime(2026, 1, 15, 9, 30, tzinfo=dt.timezone.utc)
TOP, SEED = 3, 0


@pytest.fixture(scope="module")
def demo():
    study = tradeoff.load_study(DEMO)
    fit = fit_study(study)
    result = optimize(study, top=TOP, seed=SEED, fit=fit)
    data = report_data(study, top=TOP, seed=SEED, fit=fit, result=result, now=NOW)
    page = build_report_html(study, data=data).decode("utf-8")
    book = build_workbook(study, data=data)
    return study, result, page, book


@pytest.fixture(scope="module")
def tire():
    study = tradeoff.load_study(TIRE)
    data = report_data(study, top=TOP, seed=SEED, now=NOW)
    return study, build_report_html(study, data=data).decode("utf-8"), \
        build_workbook(study, data=data)


# --------------------------------------------------------------------------
# What the page holds


def test_demo_page_has_every_section(demo):
    study, result, page, _ = demo
    for section in ("summary", "recommended", "alternatives", "maps", "confirmation",
                    "targets", "models", "design", "warnings", "cautions", "reproduce"):
        assert f'<section id="{section}">' in page
    for caution in CAUTIONS:
        assert caution in page
    assert "does not replace a shelf-life study" in page
    # one curve per goal (5 responses + protein); the maps: the limits map and D's
    # lines, and the trace charts (one drawing, a chart per response and D); per
    # modelled response its effects and,
    # when it has a clear two-factor interaction, the model's interaction chart
    def section(key):
        start = page.index(f'<section id="{key}">')
        return page[start:page.index("</section>", start)]

    assert section("targets").count("<svg") == 6
    assert section("maps").count("<svg") == 2 + 1
    assert section("maps").count("How each response follows each factor") == 1
    models = section("models")
    clear = models.count("Largest clear interaction")
    assert models.count("<svg") == 5 + clear and clear >= 1
    # the exact study specification and the provenance block
    assert "[[responses]]" in page and 'name = &quot;hardness_fresh&quot;' in page
    sha = hashlib.sha256(DEMO.read_bytes()).hexdigest()
    data_sha = hashlib.sha256((DEMO.parent / "snack_bar_runs.csv").read_bytes()).hexdigest()
    prov = _embedded(page)["provenance"]
    assert prov["study_sha256"] == sha and sha in page
    assert prov["data_sha256"] == data_sha and data_sha in page
    assert prov["created"] == "2026-01-15T09:30:00Z" and prov["seed"] == SEED
    assert prov["version"] == tradeoff.__version__
    assert f"--top {TOP} --seed {SEED}" in page


def test_page_loads_nothing_from_the_network(demo, tire):
    for page in (demo[2], tire[1]):
        assert not re.search(r"""(?:src|href)\s*=\s*["']?\s*(?:https?:)?//""", page, re.I)
        assert not re.search(r"@import|url\(\s*['\"]?\s*(?:https?:)?//", page, re.I)
        assert not re.search(r"<(?:link|img|iframe|object|embed)\b", page, re.I)
        # the only script element is the inert JSON block
        scripts = re.findall(r"<script\b[^>]*>", page, re.I)
        assert scripts == ['<script type="application/json" id="tradeoff-data">']


def test_numbers_match_the_cli_json(demo, capsys):
    study, _, page, _ = demo
    assert main(["optimize", str(DEMO), "--json", "--top", str(TOP), "--seed",
                 str(SEED)]) == 0
    cli = json.loads(capsys.readouterr().out)
    shown = _embedded(page)["result"]
    assert shown["solutions"] == cli["solutions"]
    # the CLI's JSON carries the same provenance block (its date is today's)
    prov = _embedded(page)["provenance"]
    for key in ("version", "seed", "study_sha256", "data_sha256", "study_file"):
        assert cli["provenance"][key] == prov[key]
    assert shown["best"] == cli["best"]
    text = re.sub(r"<[^>]+>", " ", page)  # the visible text
    for sol in cli["solutions"]:
        assert f"{sol['desirability']:.3g}" in text
        for name, o in sol["responses"].items():
            assert f"{o['predicted']:.4g}" in text
            assert f"{o['pi'][0]:.4g} .. {o['pi'][1]:.4g}" in text
            assert tradeoff.chance_text(o["chance_in_limits"]) in text
        for name, value in sol["settings"].items():
            shown_value = value if isinstance(value, str) else f"{value:.4g}"
            assert shown_value in text


def test_demo_models_in_the_page_match_the_fit(demo):
    study, _, page, _ = demo
    rep = fit_study(study).models["hardness_fresh"].report()
    text = re.sub(r"<[^>]+>", " ", page)
    assert f"{rep['effects']['protein']:.4g}" in text
    assert f"{rep['anova']['lack_of_fit']['p']:.4f}" in text
    for run in rep["flagged_runs"]:
        assert run in text


def test_tire_tread_report_shows_the_published_optimum(tire):
    study, page, _ = tire
    best = _embedded(page)["result"]["best"]
    # Derringer & Suich (1980): D = 0.583 at x1 = -0.05, x2 = 0.145, x3 = -0.868,
    # searched over the cube |x| <= 1 (from memory).
    assert best["desirability"] == pytest.approx(0.583, abs=0.003)
    assert best["settings"]["x1"] == pytest.approx(-0.05, abs=0.03)
    assert best["settings"]["x2"] == pytest.approx(0.145, abs=0.03)
    assert best["settings"]["x3"] == pytest.approx(-0.868, abs=0.03)
    assert "Tire tread compound" in page


def test_workbook_sheets_and_numbers(tire):
    import statsmodels.formula.api as smf

    study, _, book = tire
    sheets = pd.read_excel(pd.io.common.BytesIO(book), sheet_name=None)
    for name in ("summary", "runs", "factors", "models", "terms", "goals", "solutions",
                 "warnings", "specification", "provenance"):
        assert name in sheets
    assert "confirmations" not in sheets  # the study lists none
    assert len(sheets["runs"]) == 20
    runs = pd.read_csv(Path(__file__).resolve().parents[1] / "data" / "tire_tread_1980.csv")
    models = sheets["models"].set_index("response")
    terms = sheets["terms"]
    for y in ("y1", "y3"):
        ref = smf.ols(f"{y} ~ x1 + x2 + x3 + I(x1**2) + I(x2**2) + I(x3**2) + x1:x2 + "
                      "x1:x3 + x2:x3", data=runs).fit()
        assert models.loc[y, "R2"] == pytest.approx(ref.rsquared, rel=1e-9)
        assert models.loc[y, "adjusted R2"] == pytest.approx(ref.rsquared_adj, rel=1e-9)
        ours = terms[terms["response"] == y].set_index("term")
        assert ours.loc["intercept", "coefficient"] == pytest.approx(ref.params["Intercept"])
        assert ours.loc["x1", "p value"] == pytest.approx(ref.pvalues["x1"], rel=1e-6)
        # the effect's margin alone: twice the coefficient's 95 % interval (an effect is
        # twice its coded coefficient; statsmodels' conf_int as the reference)
        ci = ref.conf_int(alpha=0.05)
        assert ours.loc["x1", "effect from (alone)"] == pytest.approx(2 * ci.loc["x1", 0])
        assert ours.loc["x1", "effect to (alone)"] == pytest.approx(2 * ci.loc["x1", 1])
        assert (ours.loc["x1", "margins say"] != "could be noise") == (ref.pvalues["x1"] < 0.05)
    # Published y1 coefficients (Derringer & Suich 1980, from memory): intercept
    # 139.12, x1 16.49.
    y1 = terms[terms["response"] == "y1"].set_index("term")["coefficient"]
    assert y1["intercept"] == pytest.approx(139.12, abs=0.01)
    assert y1["x1"] == pytest.approx(16.49, abs=0.01)
    sol = sheets["solutions"]
    assert set(sol["response"]) == {"y1", "y2", "y3", "y4"}
    prov = dict(zip(sheets["provenance"]["key"], sheets["provenance"]["value"]))
    assert prov["study_sha256"] == hashlib.sha256(TIRE.read_bytes()).hexdigest()


def test_demo_workbook_solutions_match_the_result(demo):
    _, result, _, book = demo
    sol = pd.read_excel(pd.io.common.BytesIO(book), sheet_name="solutions")
    best = result.to_dict()["best"]
    mine = sol[(sol["solution"] == best["label"])].set_index("response")
    for name, o in best["responses"].items():
        assert mine.loc[name, "predicted"] == pytest.approx(o["predicted"])
        assert mine.loc[name, "pi low"] == pytest.approx(o["pi"][0])


# --------------------------------------------------------------------------
# Escaping, confirmations in the report, writing


HOSTILE = """\
[study]
name = "Bars <script>alert(1)</script> & co"
description = "<img src=x onerror=alert(2)>"
data = "runs.csv"
model = "main"

[[factors]]
name = "protein"
label = "Protein <b>bold</b>"
unit = "%\\"><i>"
low = 20
high = 30

[[responses]]
name = "hardness"
label = "Hardness </table>"
goal = "minimize"
lower = 10
upper = 20

[[confirmations]]
run = "<C1>"
settings = { protein = 25 }
measured = { hardness = 30.0 }
"""


def test_user_text_is_escaped_and_confirmations_shown(tmp_path):
    (tmp_path / "runs.csv").write_text(
        "run,protein,hardness\n1,20,12.1\n2,30,17.9\n3,25,15.2\n4,20,11.8\n5,30,18.3\n"
        "6,25,14.7\n")
    (tmp_path / "s.toml").write_text(HOSTILE, encoding="utf-8")
    study = tradeoff.load_study(tmp_path / "s.toml")
    page = build_report_html(study, top=2, seed=1, now=NOW).decode("utf-8")
    assert "<script>alert" not in page and "<img" not in page and "<b>bold" not in page
    assert "Bars &lt;script&gt;alert(1)&lt;/script&gt; &amp; co" in page
    assert "Hardness &lt;/table&gt;" in page
    assert "&lt;C1&gt;" in page
    # 30 is far above the prediction near 15: the model is not confirmed there
    assert "not confirmed" in page
    data = _embedded(page)
    assert data["confirmation"]["verdicts"][0]["verdict"] == "not confirmed"
    sheets = pd.read_excel(pd.io.common.BytesIO(build_workbook(study, top=2, seed=1)),
                           sheet_name=None)
    assert {"confirmations", "verdicts"} <= set(sheets)
    assert sheets["verdicts"].loc[0, "verdict"] == "not confirmed"


def test_write_report_is_atomic_and_spares_the_study_files(tmp_path):
    shutil.copy(REPO / "tests" / "data" / "tire_tread_1980.csv", tmp_path / "runs.csv")
    source = TIRE.read_text().replace("tire_tread_1980.csv", "runs.csv")
    (tmp_path / "s.toml").write_text(source)
    study = tradeoff.load_study(tmp_path / "s.toml")
    before = {p.name: p.read_bytes() for p in tmp_path.iterdir()}
    out = write_report(study, tmp_path / "sheet.html", top=1, seed=0, now=NOW)
    assert out.read_bytes().startswith(b"<!DOCTYPE html>")
    write_report(study, tmp_path / "sheet.xlsx", top=1, seed=0, now=NOW)
    assert "solutions" in pd.read_excel(tmp_path / "sheet.xlsx", sheet_name=None)
    assert sorted(p.name for p in tmp_path.iterdir()) == sorted(
        list(before) + ["sheet.html", "sheet.xlsx"])  # no temporary files left
    for name, content in before.items():
        assert (tmp_path / name).read_bytes() == content
    with pytest.raises(StudyError, match=r"runs\.csv: a report is written as \.html"):
        write_report(study, tmp_path / "runs.csv")
    with pytest.raises(StudyError, match=r"no_such_folder.*does not exist"):
        write_report(study, tmp_path / "no_such_folder" / "r.html")


def test_write_report_refuses_an_excel_data_file(tmp_path):
    runs = pd.read_csv(REPO / "tests" / "data" / "tire_tread_1980.csv")
    runs.to_excel(tmp_path / "runs.xlsx", index=False)
    source = TIRE.read_text().replace("tire_tread_1980.csv", "runs.xlsx")
    (tmp_path / "s.toml").write_text(source)
    study = tradeoff.load_study(tmp_path / "s.toml")
    before = (tmp_path / "runs.xlsx").read_bytes()
    with pytest.raises(StudyError, match=r"runs\.xlsx: that is one of the study's own files"):
        write_report(study, tmp_path / "runs.xlsx")
    assert (tmp_path / "runs.xlsx").read_bytes() == before


def test_cli_report(tmp_path, capsys):
    out = tmp_path / "r.html"
    assert main(["report", str(TIRE), "--out", str(out), "--top", "2", "--seed", "0"]) == 0
    assert "wrote" in capsys.readouterr().out
    page = out.read_text(encoding="utf-8")
    assert len(_embedded(page)["result"]["solutions"]) <= 2
    assert main(["report", str(TIRE), "--out", str(tmp_path / "r.pdf")]) == 2
    err = capsys.readouterr().err
    assert err.startswith("error: r.pdf: a report is written as .html")
    assert main(["report", str(TIRE), "--out", str(tmp_path / "x.html"), "--top", "0"]) == 2
    assert "expected a whole number, 1 or more, found 0" in capsys.readouterr().err
    assert not (tmp_path / "x.html").exists()


def test_bad_top_is_refused():
    study = tradeoff.load_study(TIRE)
    with pytest.raises(StudyError, match="top must be a whole number of at least 1"):
        report_data(study, top=0)
