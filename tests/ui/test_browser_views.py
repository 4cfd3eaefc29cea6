"""Every view of the workbench in a real browser: nothing cut off, nothing leaves the machine.

Starts ``tradeoff app`` on the demo, opens each view in Debian's chromium at
1400 px and again at 1280 px, and checks what the AppTest suite cannot see:

- no request to any host but 127.0.0.1 / localhost (the tool must work, and
  leak nothing, on a lab network with no internet);
- no element wider than its column, no table with a column or row hidden
  behind an inner scroll;
- bar charts keep at least 60 px of plotting area per 3 bars;
- no "None" text anywhere;
- one rounding rule for chances (``tradeoff.chance_text``): the chosen
  solution's chance reads the same in the table and in the sentence;
- the study view marks the runs the report flags as unusual;
- the what-if panel follows the solution chosen to look closer at.

The report is opened from file:// and must make no request at all.
Needs /usr/bin/chromium and the playwright package (see test_browser.py).
"""
from __future__ import annotations

import os
import re
from pathlib import Path
from urllib.parse import urlparse

import pytest

from conftest import DEMO
from test_browser import _require_browser
from tradeoff_ui.drive import (CONNECTED, launch_chromium, settle, start_workbench,
                               stop_workbench)

# view -> (path, a text the view shows once it has run to its end)
VIEWS = {"study": ("", "The same runs in coded units"),
         "models": ("models", "Coefficients, analysis of variance"),
         "targets": ("targets", "Best settings now"),
         "results": ("results", "What if I make it like this?"),
         "downloads": ("downloads", "The report")}
LOCAL = {"127.0.0.1", "localhost"}
CHANCE = re.compile(r"^(?:> 99\.9|< 0\.1|\d{1,2}\.\d) %$")

# Layout problems in the page as it stands: one text per problem.
_PROBLEMS = """() => {
  const out = [];
  const name = e => (e.innerText || '').trim().split('\\n')[0].slice(0, 60);
  for (const s of document.querySelectorAll('[data-testid="stDataFrame"] .dvn-scroller')) {
    if (s.scrollWidth > s.clientWidth + 1)
      out.push(`table cut off on the right (${s.scrollWidth} > ${s.clientWidth} px)`);
    if (s.scrollHeight > s.clientHeight + 1)
      out.push(`table rows hidden behind a scroll (${s.scrollHeight} > ${s.clientHeight} px)`);
  }
  for (const c of document.querySelectorAll('[data-testid="stElementContainer"]')) {
    const col = c.parentElement.closest('[data-testid="stColumn"], [data-testid="stMain"] [data-testid="stVerticalBlock"]');
    if (!col) continue;
    const r = c.getBoundingClientRect(), p = col.getBoundingClientRect();
    if (r.width > 0 && r.right > p.right + 1)
      out.push(`element wider than its column: ${name(c)} (${r.right} > ${p.right})`);
    for (const v of c.querySelectorAll('.vega-embed svg, .vega-embed canvas')) {
      const q = v.getBoundingClientRect();
      if (q.right > p.right + 1) out.push(`chart wider than its column (${q.right} > ${p.right})`);
    }
  }
  for (const svg of document.querySelectorAll('.vega-embed svg')) {
    const bars = svg.querySelectorAll('g.mark-rect.role-mark path');
    const axes = [...svg.querySelectorAll('g.role-axis-domain')].map(
      a => a.getBoundingClientRect().height);
    if (bars.length >= 1 && bars.length < 60 && axes.length) {
      const height = Math.max(...axes);
      if (height < 20 * bars.length)
        out.push(`bar chart squashed: ${bars.length} bars in ${Math.round(height)} px`);
    }
  }
  const text = document.body.innerText;
  if (/\\bNone\\b/.test(text)) out.push('"None" shown');
  if (/0\\.0000000/.test(text)) out.push('a tiny number printed in full');
  return out;
}"""


def _check(page, where: str) -> None:
    errors = page.locator('[data-testid="stException"]')
    assert errors.count() == 0, f"{where}: {errors.first.inner_text()[:600]}"
    problems = page.evaluate(_PROBLEMS)
    assert not problems, f"{where}: {problems}"


def _shoot(page, name: str) -> None:
    shots = os.environ.get("TRADEOFF_SCREENSHOTS")
    if shots:  # keep a copy to look at (developers)
        page.screenshot(path=str(Path(shots) / f"{name}.png"), full_page=True)


@pytest.fixture(scope="module")
def server(tmp_path_factory):
    _require_browser()
    proc, port = start_workbench([], log=tmp_path_factory.mktemp("app") / "server.log")
    try:
        yield f"http://127.0.0.1:{port}"
    finally:
        stop_workbench(proc)


@pytest.fixture(scope="module")
def browser():
    _require_browser()
    from playwright.sync_api import sync_playwright

    with sync_playwright() as pw:
        b = launch_chromium(pw)
        try:
            yield b
        finally:
            b.close()


def _open(browser, url: str, requests: list, ready: str):
    page = browser.new_page(viewport={"width": 1400, "height": 2400})
    page.on("request", lambda r: requests.append(r.url))
    page.goto(url, timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text(ready).first.wait_for(timeout=120_000)
    settle(page)
    return page


def _outside(requests: list) -> list:
    return [u for u in requests if urlparse(u).scheme in ("http", "https", "ws", "wss")
            and urlparse(u).hostname not in LOCAL]


def _table_text(page, index: int) -> str:
    """The text of the index-th table of the view (its accessible copy)."""
    return page.locator('[data-testid="stDataFrame"]').nth(index).locator(
        "table").inner_text(timeout=60_000)


def _results_checks(page, study, result) -> None:
    """One rule for chances; the what-if panel follows the solution chosen."""
    import tradeoff

    text = page.locator('[data-testid="stMain"]').inner_text()
    sentence = re.search(r"lands within its limits: (.+? %)", text).group(1)
    best = tradeoff.chance_text(result.best.chance_all)
    # the same rule (tradeoff.chance_text) in the sentence and the table
    assert sentence == best and best in _table_text(page, 0)  # solutions
    # every chance on the page (a clause that speaks of a chance or the limits);
    # other percentages are settings or amounts in their own unit
    clauses = [c for c in re.split(r"[,;\n]", text) if re.search(r"chance|limits", c, re.I)]
    for cell in re.findall(r"[<>]? ?\d+(?:\.\d+)? %", "\n".join(clauses)):
        assert CHANCE.match(cell.strip()), cell
    second = result.solutions[1]
    page.locator(".st-key-r_chosen").click()
    page.get_by_role("option", name=second.label, exact=True).click()
    page.get_by_role("button", name=f"Start from {second.label}").wait_for(timeout=120_000)
    settle(page)
    for f in study.factors:
        if not f.is_categorical:
            box = page.locator(f'input[aria-label="{f.display()}"]').last
            assert float(box.input_value()) == pytest.approx(second.settings[f.name],
                                                             rel=1e-3), f.name


def _study_checks(page, study) -> None:
    """The runs the report flags as unusual carry the same mark here."""
    import tradeoff

    fit = tradeoff.fit_study(study)
    flagged = {(run, name) for name, model in fit.models.items()
               for run in model.report()["flagged_runs"]}
    assert flagged, "the demo has an unusual run (invented to show the mark)"
    text = page.locator('[data-testid="stMain"]').inner_text()
    for run, name in flagged:
        assert re.search(rf"{re.escape(run)}: [^\n]*unusual "
                         rf"{re.escape(study.response(name).label)}", text), \
            (run, name)


def test_every_view_fits_and_stays_local(server, browser):
    import tradeoff

    study = tradeoff.load_study(DEMO)
    result = tradeoff.optimize(study, top=5, seed=study.seed)
    requests: list[str] = []
    for name, (path, ready) in VIEWS.items():
        page = _open(browser, f"{server}/{path}", requests, ready)
        try:
            for width in (1400, 1280):
                page.set_viewport_size({"width": width, "height": 2400})
                settle(page)
                _check(page, f"{name} at {width} px")
                _shoot(page, f"workbench_{name}_{width}")
            if name == "study":
                _study_checks(page, study)
            elif name == "results":
                _results_checks(page, study, result)
                _check(page, "results after choosing another solution")
        finally:
            page.close()
    assert requests, "no request was recorded"
    assert not _outside(requests), f"requests left the machine: {_outside(requests)}"


def test_report_makes_no_request(tmp_path, browser):
    import tradeoff

    out = tmp_path / "report.html"
    tradeoff.write_report(tradeoff.load_study(DEMO), out, top=3)
    requests: list[str] = []
    for width in (1400, 1280):
        page = browser.new_page(viewport={"width": width, "height": 1200})
        page.on("request", lambda r: requests.append(r.url))
        try:
            page.goto(out.as_uri())
            page.wait_for_load_state("load")
            # the marks of the runs table wrap: nothing is cut off on the right
            cut = page.evaluate("""() => [...document.querySelectorAll('.scroll')]
                .filter(e => e.scrollWidth > e.clientWidth + 1).length""")
            assert cut == 0, f"a table scrolls sideways at {width} px"
            _shoot(page, f"report_{width}")
        finally:
            page.close()
    assert [u for u in requests if not u.startswith("file://")] == []
