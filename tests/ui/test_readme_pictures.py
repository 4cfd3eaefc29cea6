"""The README's pictures and the pictures in ui/screenshots/ stay in step (no browser).

Every image the README links exists, is a PNG (its first eight bytes are the PNG
signature, PNG specification / RFC 2083 section 3.1) and is under 150 KB, so the
README stays quick to load; every PNG in ui/screenshots/ is linked from the
README, so no picture is left behind when a view leaves the walk-through
(common practice: docs and images change together).
"""
from __future__ import annotations

import re
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
README = REPO / "README.md"
SHOTS = REPO / "ui" / "screenshots"
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # RFC 2083, 3.1
LIMIT = 150_000  # bytes
# a Markdown image: ![alt text](relative/path)
IMAGE = re.compile(r"!\[([^\]]*)\]\(([^)\s]+)\)")


def _linked() -> list[tuple[str, str]]:
    return IMAGE.findall(README.read_text(encoding="utf-8"))


def test_the_pattern_reads_a_markdown_image():
    # the check below is only as good as the pattern: it must find a plain image
    # and skip an ordinary link
    text = "see ![A view](ui/screenshots/a.png) and [a link](ui/x.png)"
    assert IMAGE.findall(text) == [("A view", "ui/screenshots/a.png")]


def test_every_linked_image_exists_is_a_png_and_is_small():
    linked = _linked()
    assert linked, "the README links no picture of the workbench"
    for alt, link in linked:
        assert alt.strip(), f"{link}: a picture needs alt text (what it shows, in words)"
        assert not re.match(r"^[a-z]+://|^/", link), f"{link}: link pictures relatively"
        path = REPO / link
        assert path.is_file(), f"the README links {link}, which does not exist"
        data = path.read_bytes()
        assert data[:8] == PNG_SIGNATURE, f"{link} is not a PNG"
        assert len(data) < LIMIT, f"{link} is {len(data)} bytes, over {LIMIT}"


def test_every_screenshot_is_linked_from_the_readme():
    linked = {(REPO / link).resolve() for _, link in _linked()}
    unlinked = [p.name for p in sorted(SHOTS.glob("*.png")) if p.resolve() not in linked]
    assert not unlinked, f"pictures the README never shows: {unlinked}"
    assert len(list(SHOTS.glob("*.png"))) >= 5  # the walk-through's pictures are there
