"""User text shown as text, never as markup.

Study names, descriptions, labels, units, level names, run ids, notes, file
names and the library's messages (which quote cells) come from files that
travel between labs. Streamlit renders titles, captions, messages and widget
labels as Markdown, so such text could otherwise show a link, pull an image
from anywhere (a tracking pixel) or format the page. Every piece of user
text passes through ``plain`` before it reaches one of those elements.
Elements that show text as it is (tables, select-box options, code blocks,
charts) need nothing.
"""
from __future__ import annotations

import re

__all__ = ["plain"]

# Characters that start inline markup anywhere: code, emphasis, links and
# images ([ ]), raw HTML and autolinks (< >), entities (&), strike-through
# (~), maths ($), tables (|) and the escape itself. A backslash before any
# ASCII punctuation shows it as typed (CommonMark 0.31, 2.4 "Backslash escapes").
_ANYWHERE = re.compile(r"([\\`*\[\]<>&~$|])")
# An underscore opens or closes emphasis only at the edge of a word, so
# names such as hardness_fresh are left readable.
_UNDERSCORE = re.compile(r"(?<![0-9A-Za-z])_|_(?![0-9A-Za-z])")
# Block markup starts a line: headings, quotes, lists, underlines.
_LINE_START = re.compile(r"^([ \t]*)(#|>|\+|-|=|\d+(?=[.)]))", re.M)
# Bare web addresses and e-mail addresses become links in GitHub-flavoured
# Markdown, and ":name:" becomes an emoji or icon, after the escapes are
# resolved; an invisible word joiner (U+2060) breaks each pattern without
# changing what is shown.
_JOIN = "\u2060"
_BARE = re.compile(r"(:)(?=\S)|(?<=www)(?=\.)|(?<=[-.\w+])(@)", re.I)


def plain(value) -> str:
    """``value`` as text to embed in Markdown: it shows as typed and builds
    nothing (no link, image, HTML, emphasis, heading, list, emoji or icon)."""
    text = "" if value is None else str(value)
    text = _ANYWHERE.sub(r"\\\1", text)
    text = _UNDERSCORE.sub(r"\\_", text)
    text = _LINE_START.sub(lambda m: m.group(1) + (
        m.group(2) + "\\" if m.group(2)[0].isdigit() else "\\" + m.group(2)), text)
    return _BARE.sub(lambda m: (m.group(0) or "") + _JOIN, text)
