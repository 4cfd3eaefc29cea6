"""The workbench shows text from a shared study as text (AppTest and a real browser).

Every element that Streamlit renders as Markdown (titles, captions, messages,
widget labels) is read back from the app and rendered with markdown-it-py, a
CommonMark reference implementation, here with GitHub's bare-link extension
(CommonMark spec 0.31; GitHub Flavored Markdown spec, "Autolinks (extension)").
No link, image or raw HTML may come out of it, and each payload must read
exactly as typed. In the real browser, no request may leave 127.0.0.1.
"""
from __future__ import annotations

import html
import re
from importlib.resources import files

import markdown_it
import pytest
from streamlit.testing.v1 import AppTest

from security_payloads import (BINDER_LABEL, DESCRIPTION, FACTOR_LABEL,
                               FACTOR_UNIT, FILE_NAME, HOST, LEVELS, PAYLOAD_STUDY,
                               RESPONSE_LABEL, RESPONSE_UNIT, SHOWN_AS_TYPED, STUDY_NAME,
                               payload_runs)

APP = str(files("tradeoff_ui") / "app.py")
MARKUP = {"image", "link_open", "html_inline", "html_block"}


def _markdown():
    md = markdown_it.MarkdownIt("gfm-like", {"linkify": True})
    # GitHub links bare addresses that start with www. or a scheme, not any domain
    md.linkify.set({"fuzzy_link": False})
    return md


MD = _markdown()


def markup(text: str) -> list[str]:
    """Links, images and raw HTML that ``text`` builds when rendered as Markdown."""
    found = []

    def walk(tokens):
        for token in tokens:
            if token.type in MARKUP:
                found.append(f"{token.type}: {token.content or token.attrs}")
            walk(token.children or [])

    walk(MD.parse(text))
    return found


def reads(text: str) -> str:
    """What a reader sees once ``text`` is rendered: tags dropped, entities read."""
    rendered = re.sub(r"<[^>]+>", "", MD.render(text))
    return html.unescape(rendered).replace("\u2060", "").strip()


def rendered_texts(at: AppTest) -> list[str]:
    """Every string the app hands to Streamlit as Markdown: element bodies,
    widget labels and help, expander and tab labels, in the page and sidebar."""
    texts: list[str] = []

    def collect(message):
        for field, value in message.ListFields():
            if field.type == field.TYPE_MESSAGE:
                for item in ([value] if hasattr(value, "ListFields") else value):
                    collect(item)
            elif field.name in ("body", "label", "help", "caption") and isinstance(value,
                                                                                   str):
                texts.append(value)

    def visit(node):
        proto = getattr(node, "proto", None)
        if proto is not None and hasattr(proto, "ListFields"):
            collect(proto)
        for child in getattr(node, "children", {}).values():
            visit(child)

    visit(at._tree)
    return texts


def test_the_checker_sees_markup_in_raw_payloads():
    # the check itself can fail: unescaped, the payloads build links, images, HTML
    raw = " ".join(SHOWN_AS_TYPED)
    kinds = {m.split(":")[0] for m in markup(raw)}
    assert kinds >= {"image", "link_open", "html_inline"}


def test_plain_shows_each_payload_as_typed_and_builds_nothing():
    from tradeoff_ui.text import plain

    for payload in [*SHOWN_AS_TYPED, *LEVELS, FILE_NAME, "# head\n1. one\n- two\n===",
                    "`code` ~~s~~ $x$ a|b &amp; :smile: mail me@x.example"]:
        assert markup(plain(payload)) == [], payload
        assert reads(plain(payload)) == reads_as_typed(payload), payload


def reads_as_typed(payload: str) -> str:
    # Markdown joins a paragraph's lines; nothing else may change
    return "\n".join(line.strip() for line in payload.strip().splitlines())


@pytest.fixture(scope="module")
def opened() -> AppTest:
    at = AppTest.from_file(APP, default_timeout=60)
    at.run()
    at.file_uploader[0].set_value([(FILE_NAME, PAYLOAD_STUDY.encode(), "application/toml"),
                                   ("runs.csv", payload_runs(), "text/csv")]).run()
    assert not at.exception, at.exception
    return at


@pytest.mark.parametrize("page", ["study", "models", "targets", "results", "downloads"])
def test_every_view_renders_user_text_inertly(opened, page):
    at = opened
    at.switch_page(f"views/{page}.py").run()
    assert not at.exception, at.exception
    assert not at.error, [e.value for e in at.error]
    texts = rendered_texts(at)
    assert {t: markup(t) for t in texts if markup(t)} == {}
    shown = "\n".join(reads(t) for t in texts)
    assert "![n](n.png) _up_.toml" in shown  # the uploaded file's name, in the sidebar
    factor = f"{FACTOR_LABEL} ({FACTOR_UNIT})"
    expected = {"study": [STUDY_NAME, DESCRIPTION],
                "targets": [f"{RESPONSE_LABEL} ({RESPONSE_UNIT})", factor, BINDER_LABEL],
                "results": [factor, BINDER_LABEL]}.get(page, [])
    if page == "targets":  # the best level, in the sidebar
        assert any(f"{BINDER_LABEL}: {level}" in shown for level in LEVELS)
    for text in expected:
        assert text in shown, text


def test_no_request_leaves_this_computer_with_a_payload_study_open(tmp_path):
    """A real browser on every view of the payload study: every request goes to
    127.0.0.1 (or stays inside the page: data:, blob:), none to the payloads' host."""
    import os
    from pathlib import Path
    from urllib.parse import urlsplit

    from test_browser import _require_browser
    from tradeoff_ui.drive import CONNECTED, launch_chromium, start_workbench, stop_workbench

    _require_browser()
    from playwright.sync_api import sync_playwright

    study = tmp_path / "study.toml"
    study.write_text(PAYLOAD_STUDY, encoding="utf-8")
    (tmp_path / "runs.csv").write_bytes(payload_runs())
    proc, port = start_workbench([str(study)], log=tmp_path / "server.log")
    requests: list[str] = []
    try:
        with sync_playwright() as pw:
            browser = launch_chromium(pw)
            try:
                page = browser.new_page(viewport={"width": 1400, "height": 1100})
                page.on("request", lambda request: requests.append(request.url))
                # nothing may leave; stop it if it tries (and keep the record)
                page.route(re.compile(r"^(?!https?://127\.0\.0\.1[:/]).*"),
                           lambda route: route.abort())
                for view in ["", "models", "targets", "results", "downloads"]:
                    page.goto(f"http://127.0.0.1:{port}/{view}", timeout=60_000)
                    page.wait_for_selector(CONNECTED, timeout=60_000)
                    page.get_by_text("Open study:").first.wait_for(timeout=60_000)
                    page.wait_for_timeout(2_000)  # let every element and chart arrive
                    assert page.locator('[data-testid="stException"]').count() == 0
                    assert page.locator(f'img[src*="{HOST}"], a[href*="{HOST}"]').count() == 0
                    if view in ("", "targets"):
                        name = "study" if view == "" else view
                        page.screenshot(path=str(tmp_path / f"payload_{name}.png"),
                                        full_page=True)
                        shots = os.environ.get("TRADEOFF_SCREENSHOTS")
                        if shots:
                            page.screenshot(path=str(Path(shots) / f"payload_{name}.png"),
                                            full_page=True)
                page.get_by_text(STUDY_NAME).count()  # noqa: B018 (shown on the first view)
            finally:
                browser.close()
    finally:
        stop_workbench(proc)
    assert requests, "the browser made no request at all"
    away = [url for url in requests if urlsplit(url).scheme not in ("data", "blob")
            and urlsplit(url).hostname != "127.0.0.1"]
    assert away == [], away
