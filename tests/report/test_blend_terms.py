"""A blend's component alone gets no t test in the fit text, the report or the workbook.

Scheffe's linear blending coefficient is the predicted response of the pure
component (Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 2.2), not
a change of the response, so its t test against 0 says nothing about the
blend; a binary blending term's test (nonlinear blending) does. Checked on
Cornell's yarn blends (tests/data, values from memory).
"""
from __future__ import annotations

from pathlib import Path

from tradeoff import fit_study, load_study
from tradeoff.report.data import _is_clear
from tradeoff.report.fit_text import fit_text

YARN = Path(__file__).resolve().parents[1] / "data" / "yarn_elongation_cornell.toml"


def test_no_test_for_a_component_alone():
    study = load_study(YARN)
    fit = fit_study(study)
    report = fit.models["elongation"].report()
    lines = fit_text(fit.report()).splitlines()
    pure = [ln for ln in lines if ln.split()[:1] == ["polyethylene"]]
    assert pure and pure[0].split()[-2:] == ["-", "-"]
    pair = next(ln for ln in lines if ln.split()[:1] == ["polyethylene:polystyrene"])
    assert pair.split()[-1] != "-"  # the blending term keeps its p-value
    assert any("a component alone has no t or p" in ln for ln in lines)
    assert _is_clear(report, "polyethylene", 0.05) is None
    assert _is_clear(report, "polyethylene:polystyrene", 0.05) is not None


def test_the_report_reads_a_blend_along_cox_directions(tmp_path):
    """The page draws each component's Cox effect (no bar of a blending coefficient)
    and writes the equation in amounts, whose coefficients are those in proportions
    divided by total ** degree (Cornell (2002), sec. 2.1): for the yarn blends the
    total is 1, so they are the fitted proportions' coefficients."""
    import re

    from tradeoff import write_report

    study = load_study(YARN)
    out = tmp_path / "report.html"
    write_report(study, out, top=1)
    page = out.read_text("utf-8")
    assert "What each part of the recipe does" in page
    assert "(coef.)" not in page
    eq = page[page.index("The equation in amounts"):]
    fit = fit_study(study)
    b = fit.models["elongation"].proportion_coefficients_
    first = re.search(r"<td>polyethylene</td><td[^>]*>([^<]+)</td>", eq).group(1)
    assert float(first) == float(f"{b['polyethylene']:.4g}")
