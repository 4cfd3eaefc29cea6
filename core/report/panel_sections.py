"""The report's panel section: each attribute's panel ANOVA, least-squares means
with their alike-sets, the pairs that differ and the assessors to retrain."""
from __future__ import annotations

import math

from .data import _g
from .panel_text import retrain_lines
from .sections import _Sections, _table, esc

__all__ = ["_PanelSections"]


def _p(p) -> str:
    if p is None or not math.isfinite(p):
        return ""
    return "&lt;0.001" if p < 0.001 else f"{p:.3f}"


def _n(x, digits=3) -> str:
    return "" if x is None or (isinstance(x, float) and not math.isfinite(x)) \
        else _g(x, digits)


class _PanelSections(_Sections):
    """Renders ``report_data``'s ``panel`` entry."""

    def has_panel(self) -> bool:
        return bool(self.data.get("panel"))

    def panel(self) -> str:
        data = self.data["panel"]
        out = [f"<p>The panel table {esc(data['source'])} analysed as a sensory lab does: "
               "per attribute, a two-way analysis of variance of the scores with run and "
               "assessor (and their interaction when sessions repeat), assessors taken as "
               "random; least-squares means; every pair of runs by the Tukey-Kramer "
               "method. Runs sharing an alike-set number do not differ.</p>"]
        for name, res in data["attributes"].items():
            lo, hi = res["scale"]
            kind = "category scale" if res["kind"] == "category" else "line scale"
            out.append(f'<div class="response"><h3>{esc(name)}</h3><p class="note">'
                       f"{kind} {lo:g} to {hi:g}; {res['n_scores']} scores, "
                       f"{res['n_runs']} runs, {res['n_assessors']} assessors"
                       + (f", {len(res['sessions'])} sessions" if res["sessions"] else "")
                       + "</p>")
            rows = []
            for key, row in res["anova"].items():
                if key == "residual":
                    rows.append([esc(key), str(row["df"]), _n(row["ms"]), "", "", ""])
                else:
                    rows.append([esc(key), str(row["df"]), _n(row["ms"]), _n(row["f"]),
                                 _p(row["p"]), esc(f"{row['tested_against']} "
                                                   f"({row['df_denominator']} df)")])
            out.append(_table(["source", "df", "mean square", "F", "p", "tested against"],
                              rows, numeric={1, 2, 3, 4}, raw=True))
            alike = {}
            for k, g in enumerate(res["groups"]):
                for r in g:
                    alike.setdefault(r, []).append(str(k + 1))
            rows = [[esc(m["run"]), _n(m["mean"], 4), _n(m["se"]), str(m["n"]),
                     " ".join(alike.get(m["run"], []))]
                    for m in sorted(res["means"], key=lambda m: -m["mean"])]
            out.append('<div class="scroll">' + _table(
                ["run", "least-squares mean", "standard error", "scores", "alike-set"],
                rows, numeric={1, 2, 3}) + "</div>")
            differ = [p for p in res["pairs"] if p["differ"]]
            out.append(f'<p class="note">{len(differ)} of {len(res["pairs"])} pairs of '
                       f"runs differ (Tukey-Kramer, family confidence "
                       f"{100 * (1 - res['alpha']):g}%).</p>")
            rows = [[esc(a["assessor"]), _n(a["f_runs"]), _p(a["p_runs"]),
                     _n(a["agreement"], 2), _n(a["repeat_sd"]), _n(a["centre"]),
                     _n(a["range"])] for a in res["assessors"]]
            out.append('<div class="scroll">' + _table(
                ["assessor", "own F for runs", "p", "agreement r", "repeat SD",
                 "centre", "range"], rows, numeric={1, 2, 3, 4, 5, 6}, raw=True) + "</div>")
            lines = retrain_lines(res)
            out.append("<p><b>To retrain or check:</b></p><ul>"
                       + "".join(f"<li>{esc(x)}</li>" for x in lines) + "</ul>" if lines
                       else "<p>Every assessor scores in line with the panel.</p>")
            out.append("</div>")
        if data.get("notes"):
            out.append("<h3>Notes on the panel table</h3><ul class=\"warn\">"
                       + "".join(f"<li>{esc(n)}</li>" for n in data["notes"]) + "</ul>")
        return "".join(out)
