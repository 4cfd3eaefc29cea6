"""The limits map in a real browser: its labels never sit on each other, and the
map, its labels and its legend stay whole at 1400 and 1280 px.

Starts ``tradeoff app`` on each demo that draws a limits map (the snack bar over
two factors, its shelf-life twin, the flour blend in its triangle), opens the
results view in Debian's chromium and measures the bounding box of every limit
label the page drew (the SVG text elements of the map's label layer, named
``limit_labels``). Needs /usr/bin/chromium and playwright (see test_browser.py).
"""
from __future__ import annotations

from pathlib import Path

import pytest

from test_browser_views import _shoot, browser  # noqa: F401 (the shared fixture)
from tradeoff_ui.drive import settle, start_workbench, stop_workbench

DEMOS = Path(__file__).resolve().parents[2] / "demo_data"

# Every limits map on the page: its label boxes, its plotting frame, the whole
# drawing and the legend, in page pixels.
_LABELS = """() => [...document.querySelectorAll('.vega-embed svg')]
  .filter(svg => svg.querySelector('g.limit_labels_marks'))
  .map(svg => {
    const box = e => { const r = e.getBoundingClientRect();
      return [r.left, r.top, r.right, r.bottom]; };
    const texts = [...svg.querySelectorAll('g.limit_labels_marks text')]
      .filter(t => (t.textContent || '').trim().length);
    const legends = [...svg.querySelectorAll('g.role-legend')].map(box);
    const shortened = [...svg.querySelectorAll('g.role-legend text')]
      .map(t => t.textContent).filter(t => t.endsWith('\u2026'));
    const column = svg.closest('[data-testid="stColumn"], [data-testid="stMain"] [data-testid="stVerticalBlock"]');
    return {labels: texts.map(t => ({text: t.textContent, box: box(t)})),
            svg: box(svg), legends: legends, shortened: shortened, column: box(column)};
  })"""


def _overlap(a, b, tol=0.5) -> bool:
    # two boxes overlap when they overlap on both axes (by more than half a pixel)
    return (a[0] < b[2] - tol and b[0] < a[2] - tol and a[1] < b[3] - tol
            and b[1] < a[3] - tol)


@pytest.mark.parametrize("demo", ["snack_bar.toml", "snack_bar_shelf.toml",
                                  "flour_blend.toml"])
def test_limit_labels_do_not_overlap(browser, demo, tmp_path):
    proc, port = start_workbench([str(DEMOS / demo)], log=tmp_path / "server.log")
    try:
        page = browser.new_page(viewport={"width": 1400, "height": 2400})
        page.goto(f"http://127.0.0.1:{port}/results", timeout=120_000)
        page.get_by_text("What if I make it like this?").first.wait_for(timeout=120_000)
        settle(page)
        for width in (1400, 1280):
            page.set_viewport_size({"width": width, "height": 2400})
            settle(page)
            _shoot(page, f"labels_{demo.split('.')[0]}_{width}")
            maps = page.evaluate(_LABELS)
            assert maps, f"{demo}: no limits map with labels on the results view"
            for m in maps:
                labels = m["labels"]
                assert labels, f"{demo}: a limits map without labels"
                for i, a in enumerate(labels):
                    for b in labels[i + 1:]:
                        assert not _overlap(a["box"], b["box"]), \
                            f"{demo} at {width} px: '{a['text']}' overlaps '{b['text']}'"
                    # inside the drawing
                    s = m["svg"]
                    box = a["box"]
                    assert box[0] >= s[0] - 0.5 and box[2] <= s[2] + 0.5, (demo, width, a)
                # the legend whole: inside the drawing and its column, no label shortened
                for legend in m["legends"]:
                    assert legend[2] <= min(m["svg"][2], m["column"][2]) + 0.5, \
                        (demo, width, legend, m["svg"], m["column"])
                assert m["svg"][2] <= m["column"][2] + 0.5, (demo, width, "map cut off")
                assert not m["shortened"], (demo, width, m["shortened"])
        page.close()
    finally:
        stop_workbench(proc)
