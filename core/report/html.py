"""The result sheet as one HTML page to hand to colleagues.

``build_report_html`` returns a single self-contained HTML page (no scripts,
stylesheets, fonts or images fetched from anywhere; charts are inline SVG made
by vl-convert from Vega-Lite) holding the job summary, the recommendation and
its alternatives with intervals and chances, the confirmation runs, the
targets, each response's model, the design, the warnings, the food cautions
and the exact study specification with a provenance block. ``build_workbook``
(workbook.py) returns the same content as an Excel workbook, and
``write_report`` (write.py) writes either one.

Both read the numbers from the same objects as the command line
(``OptimizationResult.to_dict()`` for the search), so the report and
``tradeoff optimize --json`` agree to the digit.
"""
from __future__ import annotations

import json

from .data import CAUTIONS, _provenance_rows, report_data
from .evidence import _EvidenceSections
from .frontier_sections import _FrontierSections
from .map_sections import _MapSections
from .panel_sections import _PanelSections
from .product_sections import _ProductSections
from .sections import _AnswerSections, _table, esc
from .ternary_sections import _TernarySections

__all__ = ["build_report_html"]


def build_report_html(study, *, top: int = 5, seed: int | None = None, fit=None,
                      result=None, data: dict | None = None, **kwargs) -> bytes:
    """The report as one self-contained HTML page (UTF-8 bytes).

    Parameters
    ----------
    study : Study
    top, seed : int
        As for ``tradeoff.optimize``.
    fit, result : optional
        Already fitted models and search result (computed when omitted).
    data : dict, optional
        The output of ``report_data`` (computed when omitted).
    **kwargs
        Passed to ``report_data`` (``confirmation``, ``now``, ``study_bytes``,
        ``data_bytes``, ``files``).

    Returns
    -------
    bytes
        The page. It loads nothing from anywhere: charts are inline SVG, the
        style sheet is inline, and a JSON copy of the numbers sits in an inert
        ``<script type="application/json" id="tradeoff-data">`` block.
    """
    data = data if data is not None else report_data(
        study, top=top, seed=seed, fit=fit, result=result, **kwargs)
    page = _Page(study, data)
    return page.render().encode("utf-8")


_STYLE = """
:root { --ink:#23262b; --muted:#5f6670; --line:#d9d4cb; --paper:#fcfbf8;
  --band:#2d4a53; --accent:#b5651d; --good:#2e7d4f; --bad:#a8322d; --soft:#f1ede4; }
* { box-sizing: border-box; }
body { margin:0; background:var(--paper); color:var(--ink);
  font: 15px/1.5 system-ui, -apple-system, "Segoe UI", Roboto, Helvetica, Arial, sans-serif; }
header.band { background:var(--band); color:#fff; padding:22px 32px 18px; }
header.band h1 { margin:0 0 4px; font-size:24px; font-weight:600; }
header.band p { margin:0; color:#d8e3e6; font-size:13px; }
main { max-width:1080px; margin:0 auto; padding:8px 32px 48px; }
nav.toc { font-size:13px; margin:14px 0 4px; color:var(--muted); }
nav.toc a { color:var(--band); margin-right:14px; text-decoration:none; }
section { margin-top:30px; }
h2 { font-size:19px; border-bottom:2px solid var(--accent); padding-bottom:4px;
  margin:0 0 12px; color:var(--band); }
h3 { font-size:16px; margin:22px 0 8px; }
p.lead { font-size:16px; }
p.note, .small { color:var(--muted); font-size:13px; }
table { border-collapse:collapse; margin:8px 0 14px; font-size:13.5px; }
th, td { border-bottom:1px solid var(--line); padding:4px 10px; text-align:left;
  vertical-align:top; }
th { background:var(--soft); font-weight:600; }
td.num, th.num { text-align:right; font-variant-numeric: tabular-nums; }
.cards { display:flex; flex-wrap:wrap; gap:12px; margin:10px 0; }
.card { background:#fff; border:1px solid var(--line); border-left:5px solid var(--accent);
  padding:10px 14px; min-width:180px; }
.card .big { font-size:22px; font-weight:600; }
.card .what { color:var(--muted); font-size:12.5px; }
.tag { display:inline-block; white-space:nowrap; padding:1px 8px; border-radius:9px; font-size:12.5px;
  font-weight:600; }
.tag.good { background:#e3f1e8; color:var(--good); }
.tag.bad { background:#f6e1df; color:var(--bad); }
.tag.none { background:var(--soft); color:var(--muted); }
.charts { display:flex; flex-wrap:wrap; gap:14px; }
.chart { background:#fff; border:1px solid var(--line); padding:6px; display:inline-block; }
table.runs td { white-space:nowrap; }
table.runs { font-size:12.5px; }
table.runs td, table.runs th { padding:3px 6px; }
table.runs td:last-child { white-space:normal; min-width:11em; }
.scroll { overflow-x:auto; }
ul.warn li { margin-bottom:4px; }
.caution { background:#fff7ea; border:1px solid #e6cfa5; padding:10px 16px; }
pre { background:#f4f2ee; border:1px solid var(--line); padding:10px 12px;
  overflow-x:auto; font-size:12.5px; }
.response { border-top:1px dashed var(--line); padding-top:6px; }
@media print { header.band { background:#fff; color:var(--ink); }
  header.band p { color:var(--muted); } nav.toc { display:none; } }
"""


class _Page(_AnswerSections, _EvidenceSections, _MapSections, _TernarySections,
            _ProductSections, _PanelSections, _FrontierSections):
    """Renders the report's sections from ``report_data``'s dict."""

    # -- the page

    def render(self) -> str:
        sections = self._product_page() if not self.study.factors else [
            ("summary", "Summary", self.summary()),
            ("recommended", "Recommended settings", self.recommended()),
            ("alternatives", "Alternatives", self.alternatives()),
            ("maps", "Maps around the recommendation", self.maps()),
            *([("blend", "Blend triangle", self.ternary())] if self.has_triangle() else []),
            *([("frontier", "What one goal costs in another", self.tradeoff()),
               ("steadiness", "How steady the recommendation is", self.steadiness())]
              if self.has_trade() else []),
            ("confirmation", "Confirmation runs", self.confirmation()),
            ("targets", "Targets", self.targets()),
            ("models", "What drives each response", self.models()),
            *([("kinetics", "Storage kinetics", self.kinetics())]
              if self.data.get("kinetics") else []),
            *([("panel", "The panel", self.panel())] if self.has_panel() else []),
            ("design", "The runs (design)", self.design()),
            ("warnings", "Warnings", self.warnings()),
            ("cautions", "Cautions", self.cautions()),
            ("reproduce", "Reproducing this result", self.reproduce()),
        ]
        return self._wrap(sections)

    def _product_page(self) -> list[tuple[str, str, str]]:
        """A study without factors: its derived values, kinetics and products; no
        models, search or maps (the summary says why in one sentence)."""
        return [
            ("summary", "Summary", self.product_summary()),
            ("derived", "Derived values", self.derived_values()),
            *([("kinetics", "Storage kinetics", self.kinetics())]
              if self.data.get("kinetics") else []),
            *([("panel", "The panel", self.panel())] if self.has_panel() else []),
            ("design", "The products", self.products()),
            ("warnings", "Warnings", self.warnings()),
            ("cautions", "Cautions", self.cautions()),
            ("reproduce", "Reproducing this result", self.reproduce()),
        ]

    def _wrap(self, sections: list[tuple[str, str, str]]) -> str:
        toc = "".join(f'<a href="#{key}">{title}</a>' for key, title, _ in sections)
        body = "".join(f'<section id="{key}"><h2>{title}</h2>{content}</section>'
                       for key, title, content in sections)
        prov = self.data["provenance"]
        sub = (f"Result sheet made by tradeoff {esc(prov['version'])} on "
               f"{esc(prov['created'][:10])} from {esc(prov['study_file'] or 'a study')}")
        return ("<!DOCTYPE html>\n<html lang=\"en\"><head><meta charset=\"utf-8\">"
                "<meta name=\"viewport\" content=\"width=device-width, initial-scale=1\">"
                f"<title>{esc(self.study.name)}: result sheet</title>"
                f"<style>{_STYLE}</style></head><body>"
                f"<header class=\"band\"><h1>{esc(self.study.name)}</h1><p>{sub}</p>"
                "</header><main>"
                f"<nav class=\"toc\">{toc}</nav>{body}"
                f"{self.embedded_json()}</main></body></html>\n")
    def warnings(self) -> str:
        items = self.data["warnings"]
        if not items:
            return "<p>No warnings.</p>"
        return '<ul class="warn">' + "".join(f"<li>{esc(w)}</li>" for w in items) + "</ul>"

    def cautions(self) -> str:
        return ('<div class="caution"><ul>' + "".join(f"<li>{esc(c)}</li>"
                                                      for c in self.data.get(
                                                          "cautions", CAUTIONS))
                + "</ul></div>")

    def reproduce(self) -> str:
        prov = self.data["provenance"]
        study_file = prov["study_file"] or "study.toml"
        command = (f"tradeoff report {study_file} --top {self.data['top']} "
                   f"--seed {self.data['seed']} --out report.html")
        rows = [[esc(k), esc(v)] for k, v in _provenance_rows(prov)]
        return ("<p>The same tool version, the same files (same SHA-256 fingerprints) and "
                "the same seed give the same result. The command:</p>"
                f"<pre>{esc(command)}</pre>"
                + _table(["provenance", "value"], rows, raw=True)
                + "<h3>The study specification</h3><p class='note'>The study file as "
                  "used (goals and model choices as they stood when this report was made)."
                  "</p>"
                + f"<pre>{esc(self.data['specification'])}</pre>")

    def embedded_json(self) -> str:
        """A machine-readable copy of the numbers, inert (no code runs)."""
        check = self.data["confirmation"]
        payload = {"result": self.data["result"],
                   "confirmation": check.to_dict() if check is not None else None,
                   "provenance": self.data["provenance"]}
        text = json.dumps(payload, ensure_ascii=True, allow_nan=False, default=str)
        # No '<', '>' or '&' inside the block: it can never close the element early.
        text = text.replace("<", "\\u003c").replace(">", "\\u003e").replace("&", "\\u0026")
        return f'<script type="application/json" id="tradeoff-data">{text}</script>'
