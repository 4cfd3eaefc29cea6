"""Every report section on every kind of study the study file allows.

For each generated study (tests/study_kinds.py: categorical factors of 2 to 5
levels alone, with numeric factors and with blend components; blends with a
numeric process factor; blocks; a smooth model; a log transform; storage- and
panel-derived responses) the command line writes the HTML page and the
workbook without a traceback, and their numbers are those of
``tradeoff optimize --json`` and ``tradeoff fit --json`` (the same objects
the command line prints: the report must not compute them a second way).
The statistics themselves are checked against statsmodels in
tests/maps/test_level_slices.py.
"""
from __future__ import annotations

import io
import json
import re
import sys
from pathlib import Path

import pandas as pd
import pytest

from tradeoff.cli import main
from tradeoff.search.chance import chance_text

sys.path.insert(0, str(Path(__file__).resolve().parents[1]))
from study_kinds import KINDS, write_study  # noqa: E402

from conftest import page_json as _embedded  # noqa: E402

TOP, SEED = 3, 0


def _section(page: str, key: str) -> str:
    start = page.index(f'<section id="{key}">')
    return page[start:page.index("</section>", start)]


def _visible(html: str) -> str:
    return re.sub(r"\s+", " ", re.sub(r"<[^>]+>", " ", html))


def _cli_json(capsys, *argv) -> dict:
    assert main(list(argv)) == 0, capsys.readouterr().err
    return json.loads(capsys.readouterr().out)


@pytest.fixture(scope="module")
def folder(tmp_path_factory):
    return tmp_path_factory.mktemp("kinds")


@pytest.mark.parametrize("kind", KINDS)
def test_report_of_every_kind_agrees_with_the_command_line(kind, folder, capsys):
    path = write_study(folder / kind, kind)
    page_path, book_path = folder / kind / "r.html", folder / kind / "r.xlsx"
    for out in (page_path, book_path):
        code = main(["report", str(path), "--out", str(out), "--top", str(TOP),
                     "--seed", str(SEED)])
        captured = capsys.readouterr()
        assert code == 0 and "Traceback" not in captured.err, captured.err
    best = _cli_json(capsys, "optimize", str(path), "--json", "--top", str(TOP),
                     "--seed", str(SEED))
    fits = _cli_json(capsys, "fit", str(path), "--json")["responses"]
    page = page_path.read_text(encoding="utf-8")
    shown = _embedded(page)["result"]
    assert shown["solutions"] == best["solutions"]

    # the page's visible numbers are the JSON's, in the page's formats
    text = _visible(_section(page, "recommended"))
    sol = best["best"]
    for name, o in sol["responses"].items():
        assert f"{o['predicted']:.4g}" in text
        assert f"{o['pi'][0]:.4g} .. {o['pi'][1]:.4g}" in text
        assert chance_text(o["chance_in_limits"]) in text
    for name, value in sol["settings"].items():
        assert (value if isinstance(value, str) else f"{value:.4g}") in text
    assert "None" not in _visible(page)
    alternatives = _visible(_section(page, "alternatives"))
    for s in best["solutions"][1:]:
        assert f"{s['desirability']:.3g}" in alternatives

    # the workbook: solutions, terms and models equal the command line's JSON
    sheets = pd.read_excel(io.BytesIO(book_path.read_bytes()), sheet_name=None)
    solutions = sheets["solutions"]
    for s in best["solutions"]:
        rows = solutions[solutions["solution"] == s["label"]].set_index("response")
        for name, o in s["responses"].items():
            assert rows.loc[name, "predicted"] == pytest.approx(o["predicted"], rel=1e-12)
            assert rows.loc[name, "D"] == pytest.approx(s["desirability"], rel=1e-12)
            assert rows.loc[name, "pi low"] == pytest.approx(o["pi"][0], rel=1e-12)
            for factor, value in s["settings"].items():
                if isinstance(value, str):
                    assert rows.loc[name, factor] == value
                else:
                    assert rows.loc[name, factor] == pytest.approx(value, rel=1e-12)
    terms, models = sheets["terms"], sheets["models"].set_index("response")
    for name, rep in fits.items():
        assert models.loc[name, "R2"] == pytest.approx(rep["r2"], rel=1e-12)
        if rep["model"] == "smooth":
            continue
        mine = terms[terms["response"] == name].set_index("term")["coefficient"]
        assert list(mine.index) == rep["terms"]
        for term, coef in rep["coefficients"].items():
            assert mine[term] == pytest.approx(coef, rel=1e-12, abs=1e-12)

    # a factor of three or more levels: named levels, never a coded position
    factors = sheets["factors"].set_index("factor")
    study_text = path.read_text()
    for match in re.finditer(r'name = "(\w+)"\nlevels = \[([^\]]*)\]', study_text):
        name, levels = match.group(1), re.findall(r'"([^"]+)"', match.group(2))
        assert factors.loc[name, "levels"] == ", ".join(levels)
        design = _visible(_section(page, "design"))
        assert all(f"{lv}: " in design for lv in levels) or len(levels) == 2
        if len(levels) > 2:
            assert f"{name} coded" not in sheets["runs"].columns
            # the recommended table names the level and shows no coded number for it
            row = re.search(rf"<td>{name}</td><td>{name}</td><td>([^<]*)</td><td>[^<]*</td>"
                            r'<td class="num">([^<]*)</td>', _section(page, "recommended"))
            assert row and row.group(1) == sol["settings"][name] and row.group(2) == "-"
