"""Take the README's pictures of the workbench, on the invented flour blend demo.

Run from the project folder (needs Debian's chromium, ``apt-get install chromium``,
and the test extras, which bring playwright; no browser is ever downloaded)::

    .venv/bin/python ui/screenshots/take_screenshots.py

It copies demo_data/ into a temporary folder (the demo itself is never written
to), starts ``tradeoff app`` on the copy with its session files in the same
temporary folder, walks through the workbench as a lab user would in a headless
chromium 1280 px wide (a laptop) and writes these pictures beside this script,
each cropped to the part the README talks about and kept under 150 KB:

- ``new_study.png``: the bare runs table uploaded on *New study*, the flours
  offered as blend components, the study file written beside the form;
- ``targets.png``: the goals and weights of *Targets and weights*;
- ``recommended.png``: the best balance on *Recommended settings*;
- ``batch_sheet.png``: the recommendation in grams on *Batch sheet*;
- ``confirmation.png``: two typed confirmation results against their
  prediction intervals on *Confirmation runs*;
- ``plan.png``: a design judged in plain words on *Plan the runs*.

The same walk gives the same pictures (the demo and every seed are fixed); run it
again after changing a view the README shows. To look at the views at another
width without touching the README's pictures::

    .venv/bin/python ui/screenshots/take_screenshots.py --width 1400 --out /tmp/shots
"""
from __future__ import annotations

import hashlib
import io
import tempfile
from pathlib import Path

from PIL import Image

from tradeoff.study.files import write_atomic
from tradeoff_ui.drive import (CHROMIUM, CONNECTED, launch_chromium, settle, start_workbench,
                               stop_workbench)

HERE = Path(__file__).resolve().parent
DEMO = HERE.parents[1] / "demo_data"
STUDY = "flour_blend.toml"
TABLE = "flour_blend_runs.csv"
WIDTH = 1280  # a laptop (--width to look at another)
OUT = HERE    # where the pictures go (--out to put them elsewhere)
TALL = 2400   # tall enough that each view is drawn whole, then cropped
LIMIT = 150_000  # bytes per picture: the README stays quick to load
MARGIN = 60   # of the main column's 80 px margins, the part cut off each side
FIRST_CELL = 60  # px from a table editor's left edge into its first column
ROW = 35      # px per row of a table, the header included
# two confirmation batches typed by hand: plausible values near the predictions
# (volume mL/g, hardness N, lightness L*), invented for the picture
MEASURED = (("2.76", "5.7", "57.4"), ("2.83", "5.3", "58.6"))
BATCH_G = "850"  # grams of blend per confirmation batch


# -- the workbench -------------------------------------------------------------------


def copy_demo(folder: Path) -> None:
    """The demo's files, copied into ``folder`` (the demo stays untouched)."""
    folder.mkdir(parents=True, exist_ok=True)
    for path in DEMO.iterdir():
        if path.is_file():
            write_atomic(folder / path.name, path.read_bytes())


# -- the browser ---------------------------------------------------------------------


def open_view(page, port: int, path: str, marker: str) -> None:
    """Go to a view by its address and wait for a text it shows once done."""
    page.goto(f"http://127.0.0.1:{port}/{path}", timeout=120_000)
    page.wait_for_selector(CONNECTED, timeout=120_000)
    page.get_by_text(marker).first.wait_for(timeout=120_000)
    settle(page)


def go(page, link: str, marker: str) -> None:
    """Follow a link of the menu, as a user clicks it (the session goes along)."""
    page.get_by_role("link", name=link).first.click()
    page.get_by_text(marker).first.wait_for(timeout=120_000)
    settle(page)


def main_box(page) -> dict:
    """The main column's box, the menu on the left and most of the margins left out."""
    box = page.locator('[data-testid="stMainBlockContainer"]').bounding_box()
    return {"x": box["x"] + MARGIN, "width": box["width"] - 2 * MARGIN}


def span(top, bottom, *, pad: int = 12, menu: bool = False) -> dict:
    """The part of the page from the top of one element to the bottom of another:
    the main column, or with ``menu`` the menu on the left as well."""
    first, last = top.bounding_box(), bottom.bounding_box()
    y = max(0.0, first["y"] - pad)
    across = main_box(top.page)
    if menu:
        across = {"x": 0, "width": across["x"] + across["width"]}
    return {**across, "y": y, "height": last["y"] + last["height"] + pad - y}


def picture(page, clip: dict) -> Image.Image:
    """What the browser shows inside ``clip``, as an image."""
    return Image.open(io.BytesIO(page.screenshot(clip=clip))).convert("RGB")


def stacked(parts: list[Image.Image], gap: int = 18) -> Image.Image:
    """Parts of one view one above the other, a thin grey line where a part was left out."""
    width = max(p.width for p in parts)
    height = sum(p.height for p in parts) + gap * (len(parts) - 1)
    out = Image.new("RGB", (width, height), "white")
    y = 0
    for i, part in enumerate(parts):
        if i:
            line = y - gap // 2
            out.paste((200, 200, 200), (MARGIN // 2, line, width - MARGIN // 2, line + 1))
        out.paste(part, (0, y))
        y += part.height + gap
    return out


def save(image: Image.Image, name: str) -> None:
    """Write one picture, as small as PNG allows, and check its size."""
    buffer = io.BytesIO()
    # 256 colours keep a screen of text and flat charts as the eye sees it
    image.quantize(colors=256, method=Image.Quantize.MEDIANCUT).save(
        buffer, format="PNG", optimize=True)
    data = buffer.getvalue()
    if len(data) > LIMIT:
        raise SystemExit(f"{name}: {len(data)} bytes, over {LIMIT}: crop it tighter")
    write_atomic(OUT / name, data)
    print(f"{OUT / name}: {image.width} x {image.height} px, "
          f"{len(data) / 1000:.0f} KB")


def no_toast(page) -> None:
    """Wait until a passing message (a pin's toast) has gone."""
    page.locator('[data-testid="stToast"]').first.wait_for(state="hidden", timeout=30_000)


def type_box(page, box, value: str) -> None:
    """Type into a text or number box, as a user does, and confirm with Enter."""
    box.fill(value)
    box.press("Enter")
    box.blur()  # no focus ring left in the picture
    settle(page)


def type_cell(page, table, row: int, column: int, value: str) -> None:
    """Type one cell of a table editor as a user does: select it, open it, type, confirm.

    The editor is drawn on a canvas, so the cell is reached from the first column
    of its row with the arrow keys. Each confirmed cell reruns the view, which
    draws the editor anew: the pauses let it take the keys.
    """
    box = table.bounding_box()
    page.keyboard.press("Escape")
    page.mouse.click(box["x"] + FIRST_CELL, box["y"] + ROW * (row + 1) + ROW / 2)
    page.wait_for_timeout(300)
    for _ in range(column):
        page.keyboard.press("ArrowRight")
    page.keyboard.press("Enter")
    page.wait_for_timeout(300)
    page.keyboard.type(value, delay=50)
    page.keyboard.press("Enter")
    settle(page)


# -- the pictures --------------------------------------------------------------------


def shoot_new_study(page, port: int, table: Path) -> None:
    """(a) the bare table uploaded: roles offered, the study file beside the form."""
    open_view(page, port, "new_study", "New study")
    page.locator(".st-key-ns_upload input[type=file]").set_input_files(str(table))
    page.get_by_text("1. What each column is").wait_for(timeout=120_000)
    settle(page)
    data = table.read_bytes()  # the view keys its widgets by the table's digest
    nonce = "ns_" + hashlib.sha256(table.name.encode() + b"\0" + data).hexdigest()[:8]

    def box(key: str):
        return page.locator(f".st-key-{nonce}_{key} input")

    type_box(page, box("name"), "Gluten-free flour blend (invented demo)")
    for column, label in (("rice_flour", "Rice flour"), ("sorghum_flour", "Sorghum flour"),
                          ("tapioca_starch", "Tapioca starch")):
        type_box(page, box(f"label_{column}"), label)
        type_box(page, box(f"unit_{column}"), "%")
    clip = span(page.locator(".st-key-ns_upload"), page.locator(f".st-key-{nonce}_total"))
    save(picture(page, clip), "new_study.png")


def shoot_targets(page, port: int) -> None:
    """(b) the goals and weights, with the best settings now in the menu."""
    open_view(page, port, "targets", "Best settings now")
    top = page.get_by_role("heading", name="Targets and weights")
    last = page.get_by_text("At the best settings:").nth(2)  # the third response's box
    save(picture(page, span(top, last, pad=40, menu=True)), "targets.png")


def shoot_recommended(page, port: int) -> None:
    """(c) the best balance and what is predicted there, then pin it."""
    open_view(page, port, "results", "What if I make it like this?")
    table = span(page.get_by_role("heading", name="Best settings and alternatives"),
                 page.locator(".st-key-r_chosen"))
    predictions = page.locator('[data-testid="stDataFrame"]').filter(has_text="one batch").first
    chosen = span(page.locator(".st-key-r_pin"), predictions)
    # the trade-off chart between them is left out: the README reads the tables
    save(stacked([picture(page, table), picture(page, chosen)]), "recommended.png")
    page.locator(".st-key-r_pin button").click()
    settle(page)


def shoot_batch(page) -> None:
    """(d) the pinned recommendation in grams."""
    go(page, "Batch sheet", "Make in this order")
    no_toast(page)
    # a batch size where rounding to the gram shows
    type_box(page, page.get_by_label("Batch size (g)"), BATCH_G)
    clip = span(page.get_by_role("heading", name="Batch sheet"),
                page.get_by_text("A random order, so a drift"))
    save(picture(page, clip), "batch_sheet.png")


def shoot_confirmation(page) -> None:
    """(e) two typed confirmation batches against their prediction intervals."""
    go(page, "Confirmation runs", "Keep them")
    no_toast(page)
    editor = page.locator('[data-testid="stDataFrame"]').first
    first = 1  # run id, then the results (the settings, from the sheet, are folded away)
    for row, results in enumerate(MEASURED):
        for i, value in enumerate(results):
            type_cell(page, editor, row, first + i, value)
    page.get_by_text("Measured against the prediction intervals").wait_for(timeout=60_000)
    page.mouse.move(0, 0)  # the table's tool bar shows only under the pointer
    settle(page)
    clip = span(page.get_by_role("heading", name="Confirmation runs"),
                page.locator('[data-testid="stDataFrame"]').nth(2))
    save(picture(page, clip), "confirmation.png")


def shoot_plan(page) -> None:
    """(f) a design judged in plain words."""
    go(page, "Plan the runs", "Run sheet")
    clip = span(page.get_by_role("heading", name="Plan the runs"),
                page.get_by_role("button", name="Its study file (.toml)"))
    save(picture(page, clip), "plan.png")


def main() -> None:
    import argparse

    from playwright.sync_api import sync_playwright

    global WIDTH, OUT
    parser = argparse.ArgumentParser(description="The README's pictures of the workbench.")
    parser.add_argument("--width", type=int, default=WIDTH, help="browser width in px")
    parser.add_argument("--out", type=Path, default=OUT, help="folder for the pictures")
    args = parser.parse_args()
    WIDTH, OUT = args.width, args.out
    OUT.mkdir(parents=True, exist_ok=True)

    if not Path(CHROMIUM).exists():
        raise SystemExit(f"needs Debian's chromium at {CHROMIUM}: apt-get install chromium")
    with tempfile.TemporaryDirectory(prefix="tradeoff_shots_") as tmp:
        work = Path(tmp)
        copy_demo(work / "lab")
        upload = work / "upload" / TABLE  # the bare table, alone in its folder
        upload.parent.mkdir()
        write_atomic(upload, (DEMO / TABLE).read_bytes())
        proc, port = start_workbench([str(work / "lab" / STUDY)], log=work / "server.log",
                                     env={"TRADEOFF_SESSIONS": str(work / "sessions")})
        try:
            with sync_playwright() as pw:
                browser = launch_chromium(pw)
                try:
                    page = browser.new_page(viewport={"width": WIDTH, "height": TALL})
                    shoot_new_study(page, port, upload)
                    shoot_targets(page, port)
                    shoot_recommended(page, port)
                    shoot_batch(page)
                    shoot_confirmation(page)
                    shoot_plan(page)
                finally:
                    browser.close()
        finally:
            stop_workbench(proc)


if __name__ == "__main__":
    main()
