"""The result sheet: one HTML file or one Excel workbook to hand to colleagues.

``build_report_html`` returns a single self-contained HTML page (no scripts,
stylesheets, fonts or images fetched from anywhere; charts are inline SVG made
by vl-convert from Vega-Lite) holding the job summary, the recommendation and
its alternatives with intervals and chances, the confirmation runs, the
targets, each response's model, the design, the warnings, the food cautions
and the exact study specification with a provenance block. ``build_workbook``
returns the same content as an Excel workbook, one table per sheet (see
``WORKBOOK_SHEETS``). ``write_report`` writes either one atomically, choosing
by the file's suffix, and refuses to write over the study's own files.

Both read the numbers from the same objects as the command line
(``OptimizationResult.to_dict()`` for the search), so the report and
``tradeoff optimize --json`` agree to the digit.
"""
from __future__ import annotations

import html
import io
import json
import math
from pathlib import Path

import pandas as pd

from ..cautions import FOOD_CAUTIONS
from ..errors import StudyError, TradeoffError
from ..study.files import write_atomic
from .summary import model_label, study_summary

__all__ = ["build_report_html", "build_workbook", "write_report", "report_data",
           "REPORT_SUFFIXES", "WORKBOOK_SHEETS", "CAUTIONS"]

REPORT_SUFFIXES = (".html", ".htm", ".xlsx")

# Sheet names of the workbook, in order (confirmation sheets only when the
# study lists confirmation runs).
WORKBOOK_SHEETS = ("summary", "runs", "factors", "models", "terms", "goals", "solutions",
                   "confirmations", "verdicts", "warnings", "specification", "provenance")

CAUTIONS = FOOD_CAUTIONS


# --------------------------------------------------------------------------
# Gathering the content once (HTML and workbook draw from the same dict)


def report_data(study, *, top: int = 5, seed: int | None = None, fit=None, result=None,
                confirmation=None, now=None, study_bytes: bytes | None = None,
                data_bytes: bytes | None = None,
                files: dict[str, bytes] | None = None) -> dict:
    """Everything the report shows, computed once.

    Parameters
    ----------
    study : Study
        A loaded study with runs.
    top, seed : int
        As for ``tradeoff.optimize`` (seed defaults to the study's seed).
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    result : OptimizationResult, optional
        The search result (searched here when omitted and a goal exists).
    confirmation : ConfirmationCheck, optional
        Checked here when omitted and the study lists confirmation runs.
    now : datetime, optional
        Date recorded in the provenance block (default: now, UTC).
    study_bytes, data_bytes, files : bytes, optional
        File contents when they did not come from disk (workbench uploads).

    Returns
    -------
    dict
        Keys: ``study`` (the summary of ``tradeoff check``), ``runs``
        (DataFrame), ``models`` (response -> model report dict), ``skipped``,
        ``fitted`` (response -> ResponseModel), ``result`` (the dict of
        ``tradeoff optimize --json``, or None when no goal is set),
        ``search_note`` (why there is no result), ``confirmation``
        (ConfirmationCheck or None), ``curves`` (DataFrame of desirability
        curves), ``warnings`` (list of text), ``specification`` (TOML text),
        ``provenance`` (dict), ``top``, ``seed``.
    """
    import tomli_w

    from ..confirm.check import check_confirmations
    from ..study.confirmations import confirmation_files
    from .maps import desirability_curves, runs_table
    from ..model.fit import fit_study
    from .provenance import provenance
    from ..search.search import optimize
    from ..study.writer import study_to_dict

    if study.runs is None:
        raise StudyError(f"study '{study.name}' has no runs loaded: a report needs the "
                         "runs")
    if not isinstance(top, int) or isinstance(top, bool) or top < 1:
        raise StudyError(f"top must be a whole number of at least 1, found {top!r}")
    if seed is None:  # a result handed in already says which seed it used
        seed = int(result.seed) if result is not None else study.seed
    seed = int(seed)
    fit = fit_study(study) if fit is None else fit
    search_note = None
    if result is None:
        try:
            result = optimize(study, top=top, seed=seed, fit=fit)
        except TradeoffError as exc:  # no goal, no model: the rest still reports
            search_note = str(exc)
    # Every [[confirmations]] table yields at least one run (or an error), so a
    # study that lists any is checked; the check reads the tables itself.
    if confirmation is None and study.spec.get("confirmations"):
        confirmation = check_confirmations(study, fit=fit, files=files)
    block = provenance(study, seed=seed, now=now, study_bytes=study_bytes,
                       data_bytes=data_bytes, extra_files=confirmation_files(study))
    block["top"] = top

    models = {name: m.report() for name, m in fit.models.items()}
    warnings: list[str] = list(study.notes)
    for name, rep in models.items():
        warnings += [f"{name}: {w}" for w in rep.get("warnings", [])]
    warnings += [f"{name}: no model: {why}" for name, why in fit.skipped.items()]
    result_dict = result.to_dict() if result is not None else None
    if result_dict is not None:
        warnings += list(result_dict["warnings"])
        if result_dict["unreachable"]:
            warnings.append("no setting in the searched region brings these goals within "
                            "their limits: " + ", ".join(result_dict["unreachable"]))
        # The best solution's warnings repeat the search-wide ones: add only its own.
        warnings += [f"best settings: {w}" for w in result_dict["best"]["warnings"]
                     if w not in result_dict["warnings"]]
    elif search_note:
        warnings.append(f"no search: {search_note}")
    if confirmation is not None:
        warnings += [f"confirmation, {v['response']}: {v['advice']}"
                     for _, v in confirmation.verdicts.iterrows()
                     if v["verdict"] == "not confirmed"]
    seen: set[str] = set()
    warnings = [w for w in warnings if not (w in seen or seen.add(w))]

    return {
        "study": study_summary(study),
        "runs": runs_table(study, fit),
        "models": models,
        "skipped": dict(fit.skipped),
        "fitted": dict(fit.models),
        "result": result_dict,
        "search_note": search_note,
        "confirmation": confirmation,
        "curves": desirability_curves(study),
        "warnings": warnings,
        "specification": tomli_w.dumps(study_to_dict(study)),
        "provenance": block,
        "top": top,
        "seed": seed,
    }


# --------------------------------------------------------------------------
# Writing


def write_report(study, out: str | Path, *, top: int = 5, seed: int | None = None,
                 fit=None, result=None, now=None) -> Path:
    """Write the report (``.html``) or the workbook (``.xlsx``) atomically.

    Refuses to write over the study file, its data file or a confirmation
    table. Returns the path written.
    """
    out = Path(out)
    suffix = out.suffix.lower()
    if suffix not in REPORT_SUFFIXES:
        raise StudyError(f"{out.name}: a report is written as .html (a page) or .xlsx (a "
                         "workbook): change the file name's ending")
    from ..study.confirmations import confirmation_files

    protected = [p for p in (study.source, study.data_path) if p is not None]
    protected += list(confirmation_files(study).values())
    target = out.resolve()
    for path in protected:
        if Path(path).resolve() == target:
            raise StudyError(f"{out.name}: that is one of the study's own files; "
                             "choose another name for the report")
    if not target.parent.is_dir():
        raise StudyError(f"{out}: the folder {out.parent} does not exist: create it or "
                         "choose another folder")
    if suffix == ".xlsx":
        content = build_workbook(study, top=top, seed=seed, fit=fit, result=result, now=now)
    else:
        content = build_report_html(study, top=top, seed=seed, fit=fit, result=result,
                                    now=now)
    write_atomic(target, content, error=StudyError)
    return out


# --------------------------------------------------------------------------
# The workbook


def build_workbook(study, *, top: int = 5, seed: int | None = None, fit=None,
                   result=None, data: dict | None = None, **kwargs) -> bytes:
    """The report's tables as an Excel workbook (bytes).

    Sheets (see ``WORKBOOK_SHEETS``): summary, runs, factors, models (fit
    statistics per response), terms (coefficients per response and term),
    goals, solutions (one row per solution and response), confirmations and
    verdicts (when the study lists confirmation runs), warnings, specification
    (the study file, one line per row) and provenance. Further keywords go to
    ``report_data``; ``data`` may carry its result.
    """
    data = data if data is not None else report_data(
        study, top=top, seed=seed, fit=fit, result=result, **kwargs)
    sheets = _workbook_tables(study, data)
    buffer = io.BytesIO()
    with pd.ExcelWriter(buffer, engine="openpyxl") as writer:
        for name, frame in sheets.items():
            frame.to_excel(writer, sheet_name=name, index=False)
            sheet = writer.sheets[name]
            for column in sheet.columns:  # readable widths, capped
                width = max(len(str(c.value)) if c.value is not None else 0
                            for c in column)
                sheet.column_dimensions[column[0].column_letter].width = \
                    min(max(10, width + 2), 60)
    return buffer.getvalue()


def _workbook_tables(study, data: dict) -> dict[str, pd.DataFrame]:
    res = data["result"]
    summary = [("study", study.name), ("runs", data["study"]["runs"]),
               ("factors", ", ".join(study.factor_names)),
               ("responses", ", ".join(study.response_names)),
               ("confidence", study.confidence), ("seed", data["seed"]),
               ("solutions asked", data["top"])]
    if res is not None:
        best = res["best"]
        summary += [("best solution", best["label"]),
                    ("overall desirability D", best["desirability"]),
                    ("chance every response within limits", best["chance_all"])]
        summary += [(f"best setting: {k}", v) for k, v in best["settings"].items()]
    else:
        summary.append(("search", data["search_note"]))
    check = data["confirmation"]
    if check is not None:
        summary += [(f"confirmation: {v['response']}", v["verdict"])
                    for _, v in check.verdicts.iterrows()]
    summary += [("caution", c) for c in CAUTIONS]
    tables = {"summary": pd.DataFrame(summary, columns=["item", "value"]).astype(
        {"value": str})}

    runs = data["runs"].reset_index()
    tables["runs"] = runs

    factors = []
    for f in data["study"]["factors"]:
        row = {"factor": f["name"], "label": f["label"], "kind": f["kind"]}
        if f["kind"] == "categorical":
            (a, b) = list(f["coded"])
            row.update({"low (coded -1)": a, "high (coded +1)": b})
        else:
            row.update({"unit": f["unit"], "low (coded -1)": f["low"],
                        "high (coded +1)": f["high"], "tested min": f["tested"][0],
                        "tested max": f["tested"][1], "search min": f["search"][0],
                        "search max": f["search"][1]})
        factors.append(row)
    tables["factors"] = pd.DataFrame(factors)

    model_rows, term_rows = [], []
    alpha = 1 - study.confidence
    for name, rep in data["models"].items():
        anova = rep.get("anova") or {}
        lof, curv = anova.get("lack_of_fit") or {}, anova.get("curvature") or {}
        model_rows.append({
            "response": name, "model": model_label(rep["model"]),
            "transform": rep["transform"], "runs used": rep["n"],
            "terms": len(rep["terms"]), "residual df": rep["residual_df"],
            "R2": rep["r2"], "adjusted R2": rep["adj_r2"], "predicted R2": rep["pred_r2"],
            "residual sd": rep["residual_sd"], "lack of fit p": lof.get("p"),
            "curvature p": curv.get("p"),
            "flagged runs": ", ".join(rep["flagged_runs"]),
            "warnings": " | ".join(rep["warnings"])})
        for term in rep["terms"]:
            term_rows.append({
                "response": name, "term": term,
                "coefficient": _get(rep["coefficients"], term),
                "effect": _get(rep["effects"], term),
                "std error": _get(rep["std_errors"], term),
                "p value": _get(rep["p_values"], term),
                "clear": _is_clear(rep, term, alpha)})
    for name, why in data["skipped"].items():
        model_rows.append({"response": name, "model": "none", "warnings": why})
    tables["models"] = pd.DataFrame(model_rows)
    tables["terms"] = pd.DataFrame(term_rows, columns=["response", "term", "coefficient",
                                                       "effect", "std error", "p value",
                                                       "clear"])
    tables["goals"] = pd.DataFrame(_goal_rows(study))

    sol_rows = []
    if res is not None:
        for s in res["solutions"]:
            for rname, o in s["responses"].items():
                row = {"solution": s["label"], "rank": s["rank"],
                       "D": s["desirability"], "chance all within limits": s["chance_all"]}
                row.update(s["settings"])
                row.update({"response": rname, "goal": o["goal"],
                            "predicted": o["predicted"], "desirability": o["desirability"],
                            "pi low": o["pi"][0], "pi high": o["pi"][1],
                            "ci low": o["ci"][0], "ci high": o["ci"][1],
                            "chance within limits": o["chance_in_limits"]})
                sol_rows.append(row)
    tables["solutions"] = pd.DataFrame(sol_rows)
    if check is not None:
        tables["confirmations"] = check.table
        tables["verdicts"] = check.verdicts
    tables["warnings"] = pd.DataFrame({"warning": data["warnings"]})
    tables["specification"] = pd.DataFrame(
        {"study file line": data["specification"].splitlines()})
    tables["provenance"] = pd.DataFrame(_provenance_rows(data["provenance"]),
                                        columns=["key", "value"])
    return tables


def _provenance_rows(block: dict) -> list[tuple[str, str]]:
    rows = []
    for key, value in block.items():
        if isinstance(value, dict):
            for label, entry in value.items():
                rows.append((f"{label} file", entry["file"]))
                rows.append((f"{label} sha256", entry["sha256"] or ""))
        else:
            rows.append((key, "" if value is None else str(value)))
    return rows


def _goal_rows(study) -> list[dict]:
    rows = []
    for kind, items in (("response", study.responses), ("factor", study.factors)):
        for item in items:
            g = item.goal
            if not g.active:
                continue
            rows.append({"kind": kind, "name": item.name, "label": item.label,
                         "unit": item.unit, "goal": g.kind, "lower": g.lower,
                         "target": g.target, "upper": g.upper,
                         "shape": g.shape if g.kind in ("maximize", "minimize") else None,
                         "shape below": g.shape_below if g.kind == "target" else None,
                         "shape above": g.shape_above if g.kind == "target" else None,
                         "weight": g.weight})
    return rows


# --------------------------------------------------------------------------
# Small helpers shared by both outputs


def _get(mapping, key):
    if not mapping:
        return None
    return mapping.get(key)


def _is_clear(rep: dict, term: str, alpha: float) -> bool | None:
    """Is a term's effect clearly larger than the noise?

    p below 1 - confidence when the model has residual degrees of freedom;
    otherwise |effect| above Lenth's margin of error (saturated designs).
    """
    if term == "intercept":
        return None
    p = _get(rep.get("p_values"), term)
    if p is not None:
        return bool(p < alpha)
    lenth = rep.get("lenth")
    effect = _get(rep.get("effects"), term)
    if lenth and lenth.get("me") is not None and effect is not None:
        return bool(abs(effect) > lenth["me"])
    return None


def _g(x, digits: int = 4) -> str:
    """A number as the report shows it (4 significant digits, like the CLI text)."""
    if x is None:
        return "-"
    if isinstance(x, str):
        return x
    x = float(x)
    if not math.isfinite(x):
        return "-"
    return f"{x:.{digits}g}"


def _pct(x) -> str:
    return "-" if x is None else f"{float(x):.0%}"


def _r2(x) -> str:
    return "-" if x is None else f"{float(x):.3f}"


def _p(x) -> str:
    if x is None:
        return "-"
    return "< 0.0001" if x < 1e-4 else f"{x:.4f}"


# --------------------------------------------------------------------------
# The HTML page


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


def esc(value) -> str:
    """Any user-supplied text, escaped for HTML."""
    return html.escape("" if value is None else str(value), quote=True)


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
.scroll { overflow-x:auto; }
ul.warn li { margin-bottom:4px; }
.caution { background:#fff7ea; border:1px solid #e6cfa5; padding:10px 16px; }
pre { background:#f4f2ee; border:1px solid var(--line); padding:10px 12px;
  overflow-x:auto; font-size:12.5px; }
.response { border-top:1px dashed var(--line); padding-top:6px; }
@media print { header.band { background:#fff; color:var(--ink); }
  header.band p { color:var(--muted); } nav.toc { display:none; } }
"""


class _Page:
    """Renders the report's sections from ``report_data``'s dict."""

    def __init__(self, study, data: dict):
        self.study = study
        self.data = data
        self.res = data["result"]
        self.pct = f"{study.confidence:.0%}"

    # -- the page

    def render(self) -> str:
        sections = [
            ("summary", "Summary", self.summary()),
            ("recommended", "Recommended settings", self.recommended()),
            ("alternatives", "Alternatives", self.alternatives()),
            ("confirmation", "Confirmation runs", self.confirmation()),
            ("targets", "Targets", self.targets()),
            ("models", "What drives each response", self.models()),
            ("design", "The runs (design)", self.design()),
            ("warnings", "Warnings", self.warnings()),
            ("cautions", "Cautions", self.cautions()),
            ("reproduce", "Reproducing this result", self.reproduce()),
        ]
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

    # -- sections

    def summary(self) -> str:
        s = self.data["study"]
        study = self.study
        parts = []
        if study.description:
            parts.append(f"<p>{esc(study.description)}</p>")
        parts.append(
            f"<p>{s['runs']} runs varied {len(study.factors)} factor(s) "
            f"({esc(', '.join(f.label for f in study.factors))}) and measured "
            f"{len(study.responses)} response(s) "
            f"({esc(', '.join(r.label for r in study.responses))}). Each response was "
            "fitted with its own model; each goal became a desirability between 0 "
            "(unacceptable) and 1 (ideal); the search looked for the settings with the "
            "highest overall desirability D.</p>")
        cards = []
        if self.res is not None:
            best = self.res["best"]
            settings = ", ".join(f"{esc(k)} {esc(self._setting(k, v))}"
                                 for k, v in best["settings"].items())
            parts.append(f'<p class="lead"><b>Recommendation ({esc(best["label"])}):</b> '
                         f"{settings}.</p>")
            cards.append(("overall desirability D", _g(best["desirability"], 3),
                          "0 = some goal unmet, 1 = every goal ideal"))
            if best["chance_all"] is not None:
                cards.append(("chance every response within limits",
                              _pct(best["chance_all"]),
                              "for one batch made at these settings"))
            if not self.res["feasible"]:
                parts.append('<p><span class="tag bad">no setting meets every goal</span> '
                             "the settings shown come closest.</p>")
        else:
            parts.append(f"<p>No search was made: {esc(self.data['search_note'])}</p>")
        check = self.data["confirmation"]
        if check is not None:
            counts = check.verdicts["verdict"].value_counts()
            cards.append(("confirmation runs", f"{len(check.runs)}",
                          f"{counts.get('confirmed', 0)} response(s) confirmed, "
                          f"{counts.get('not confirmed', 0)} not confirmed"))
        else:
            cards.append(("confirmation runs", "none yet", "see Confirmation runs"))
        cards.append(("warnings", str(len(self.data["warnings"])), "see Warnings"))
        parts.append('<div class="cards">' + "".join(
            f'<div class="card"><div class="what">{esc(a)}</div><div class="big">'
            f'{esc(b)}</div><div class="what">{esc(c)}</div></div>'
            for a, b, c in cards) + "</div>")
        parts.append('<p class="note">Predictions are suggestions for what to make and '
                     'test next; read the <a href="#cautions">cautions</a>.</p>')
        return "".join(parts)

    def recommended(self) -> str:
        if self.res is None:
            return f"<p>No recommendation: {esc(self.data['search_note'])}</p>"
        best = self.res["best"]
        out = [f"<p>Best compromise found ({esc(best['label'])}): overall desirability "
               f"D = <b>{_g(best['desirability'], 3)}</b>"
               + (f", chance that every response lands within its limits "
                  f"<b>{_pct(best['chance_all'])}</b>" if best["chance_all"] is not None
                  else "") + ".</p>"]
        rows = []
        for f in self.study.factors:
            value = best["settings"][f.name]
            rows.append([esc(f.label), esc(f.name), esc(self._setting(f.name, value)),
                         esc(f.unit), _g(best["coded"][f.name], 3)])
        out.append(_table(["factor", "name", "setting", "unit", "coded"], rows,
                          numeric={4}))
        out.append(self._predictions(best))
        out.append(f'<p class="note">Prediction interval: where one new batch made at these '
                   f"settings should land, {self.pct} of the time. Mean interval: where the "
                   "long-run average should lie. Chance: Monte Carlo estimate that one "
                   "batch meets the goal's limits. d: the response's desirability.</p>")
        for w in best["warnings"]:
            if w not in self.res["warnings"]:
                out.append(f'<p class="note">Note: {esc(w)}</p>')
        return "".join(out)

    def _predictions(self, sol: dict) -> str:
        rows = []
        for name, o in sol["responses"].items():
            r = self.study.response(name)
            rows.append([esc(r.label), esc(r.unit), esc(self._goal_text(r.goal)),
                         _g(o["predicted"]),
                         f"{_g(o['pi'][0])} .. {_g(o['pi'][1])}",
                         f"{_g(o['ci'][0])} .. {_g(o['ci'][1])}",
                         _g(o["desirability"], 3), _pct(o["chance_in_limits"])])
        for name, d in sol["factor_desirability"].items():
            f = self.study.factor(name)
            rows.append([esc(f.label) + " (factor goal)", esc(f.unit),
                         esc(self._goal_text(f.goal)), _g(sol["settings"][name]), "-",
                         "-", _g(d, 3), "-"])
        return _table(["response", "unit", "goal", "predicted",
                       f"{self.pct} prediction interval", f"{self.pct} mean interval",
                       "d", "chance within limits"], rows, numeric={3, 6, 7})

    def alternatives(self) -> str:
        if self.res is None:
            return "<p>None.</p>"
        sols = self.res["solutions"]
        if len(sols) < 2:
            return ("<p>The search found no other distinct good setting: the best one "
                    "stands alone in the searched region.</p>")
        factors = self.study.factors
        head = ["", "rank", "D", "chance all"] + [esc(f.name) for f in factors]
        rows = [[esc(s["label"]), str(s["rank"]), _g(s["desirability"], 3),
                 _pct(s["chance_all"])]
                + [esc(self._setting(f.name, s["settings"][f.name])) for f in factors]
                for s in sols]
        out = ["<p>Other settings that score well, at least a little apart from each "
               "other. Useful when the best one is awkward to make or cost-sensitive.</p>",
               _table(head, rows, numeric={1, 2, 3})]
        names = list(sols[0]["responses"])
        head = ["response"] + [esc(s["label"]) for s in sols]
        rows = []
        for name in names:
            row = [esc(name)]
            for s in sols:
                o = s["responses"][name]
                row.append(f"{_g(o['predicted'])}<br><span class='small'>"
                           f"{_g(o['pi'][0])} .. {_g(o['pi'][1])}; "
                           f"{_pct(o['chance_in_limits'])}</span>")
            rows.append(row)
        out.append("<h3>Predicted responses at each solution</h3>"
                   f"<p class='note'>Each cell: predicted value, then its {self.pct} "
                   "prediction interval and the chance of meeting the goal's limits.</p>")
        out.append('<div class="scroll">' + _table(head, rows, raw=True) + "</div>")
        return "".join(out)

    def confirmation(self) -> str:
        check = self.data["confirmation"]
        if check is None:
            return self._no_confirmation()
        out = [f"<p>{len(check.runs)} confirmation run(s) were made at chosen settings. "
               "Each measured value (or the mean of the runs at the same settings) is "
               f"compared with the model's {_pct(check.confidence)} prediction interval "
               "for that many new runs. Inside the interval: the model predicted what "
               "was made. Outside: the model misses something there.</p>"]
        rows = []
        for _, v in check.verdicts.iterrows():
            cls = {"confirmed": "good", "not confirmed": "bad"}.get(v["verdict"], "none")
            rows.append([esc(v["label"]), f'<span class="tag {cls}">{esc(v["verdict"])}'
                         "</span>", f"{v['inside']} of {v['checked']}", esc(v["advice"])])
        out.append(_table(["response", "verdict", "inside", "what it means"], rows,
                          raw=True))
        names = [c for c in check.table.columns if c in self.study.factor_names]
        rows = []
        for _, row in check.table.iterrows():
            if row["predicted"] != row["predicted"]:
                inside = '<span class="tag none">no model</span>'
            elif row["pi_low"] != row["pi_low"]:
                inside = '<span class="tag none">no interval</span>'
            elif row["inside"]:
                inside = '<span class="tag good">inside</span>'
            else:
                inside = '<span class="tag bad">outside</span>'
            settings = ", ".join(f"{esc(n)} {esc(self._setting(n, row[n]))}"
                                 for n in names)
            rows.append([esc(row["group"]), esc(row["runs"]), settings,
                         esc(row["response"]), str(row["m"]), _g(row["measured"]),
                         _g(row["predicted"]),
                         f"{_g(row['pi_low'])} .. {_g(row['pi_high'])}", inside
                         + (' <span class="small">outside the tested region</span>'
                            if row["outside_region"] else "")])
        out.append("<h3>Each comparison</h3>")
        out.append('<div class="scroll">' + _table(
            ["group", "runs", "settings", "response", "runs averaged", "measured",
             "predicted", "prediction interval", ""], rows, raw=True,
            numeric={4, 5, 6}) + "</div>")
        out.append(f'<p class="note">Interval: {esc(_formula())}. With many comparisons, '
                   f"about one in {round(1 / (1 - check.confidence))} falls outside by "
                   "chance alone.</p>")
        return "".join(out)

    def _no_confirmation(self) -> str:
        out = ["<p>No confirmation runs are recorded yet. Before relying on the "
               "recommendation, make two or three batches at the recommended settings, "
               "measure them, and add them to the study file; the next report compares "
               "them with the predictions. For example:</p>"]
        if self.res is not None:
            settings = ", ".join(f"{k} = {json.dumps(v)}"
                                 for k, v in self.res["best"]["settings"].items())
            measured = ", ".join(f"{name} = ..." for name in self.res["best"]["responses"])
            snippet = ("[[confirmations]]\nrun = \"C1\"\n"
                       f"settings = {{ {settings} }}\nmeasured = {{ {measured} }}")
            out.append(f"<pre>{esc(snippet)}</pre>")
        return "".join(out)

    def targets(self) -> str:
        curves = self.data["curves"]
        if curves.empty:
            return "<p>No response or factor has a goal yet.</p>"
        out = ["<p>Each goal turned into a desirability curve: 1 where the value is "
               "ideal, 0 where it is unacceptable. The dot marks the best settings' "
               "prediction. Weights say how much each goal counts in D.</p>"]
        rows = []
        for g in _goal_rows(self.study):
            rows.append([esc(g["label"]), esc(g["kind"]), esc(g["goal"]),
                         _g(g["lower"]), _g(g["target"]), _g(g["upper"]),
                         _g(g["weight"], 3), esc(self._shape_text(g))])
        out.append(_table(["goal for", "kind", "goal", "lower", "target", "upper",
                           "weight", "curve shape"], rows, numeric={3, 4, 5, 6}))
        charts = []
        best = self.res["best"] if self.res is not None else None
        for name, part in curves.groupby("name", sort=False):
            marker = None
            if best is not None:
                if name in best["responses"]:
                    o = best["responses"][name]
                    marker = (o["predicted"], o["desirability"])
                elif name in best["factor_desirability"]:
                    marker = (best["settings"][name], best["factor_desirability"][name])
            charts.append(_chart_div(_curve_chart(self._item(name), part, marker)))
        out.append('<div class="charts">' + "".join(charts) + "</div>")
        return "".join(out)

    def models(self) -> str:
        out = [f"<p>For each response: which terms matter (effects), how well the model "
               f"fits, and whether anything looks off. A term is <b>clear</b> when its "
               f"p-value is below {_g(1 - self.study.confidence, 2)} (or, with no "
               "residual degrees of freedom, when its effect passes Lenth's margin of "
               "error).</p>"]
        alpha = 1 - self.study.confidence
        for r in self.study.responses:
            out.append(f'<div class="response"><h3>{esc(r.display())}</h3>')
            if r.name in self.data["skipped"]:
                out.append(f"<p>No model: {esc(self.data['skipped'][r.name])}</p></div>")
                continue
            if r.name not in self.data["models"]:
                out.append("<p>Not modelled.</p></div>")
                continue
            rep = self.data["models"][r.name]
            out.append(self._fit_stats(rep))
            out.append(_chart_div(_effects_chart(r, rep, alpha)))
            out.append(self._terms_table(rep, alpha))
            out.append(self._tests(rep))
            out.append(self._flagged(r.name, rep))
            for w in rep.get("warnings", []):
                out.append(f'<p class="note">Note: {esc(w)}</p>')
            out.append("</div>")
        return "".join(out)

    def _fit_stats(self, rep: dict) -> str:
        scale = {"log": " on the log scale", "sqrt": " on the square-root scale"}.get(
            rep["transform"], "")
        rows = [["model", esc(model_label(rep["model"])) + esc(scale)],
                ["runs used", str(rep["n"])],
                ["terms", str(len(rep["terms"]))],
                ["residual degrees of freedom", str(rep["residual_df"])],
                ["R2 (share of variation explained)", _r2(rep["r2"])],
                ["adjusted R2", _r2(rep["adj_r2"])],
                ["predicted R2 (how well it predicts runs left out)",
                 _r2(rep["pred_r2"])],
                ["residual standard deviation", _g(rep["residual_sd"])]]
        red = rep.get("reduction")
        if red and red.get("dropped"):
            rows.append(["terms dropped by reduction",
                         esc(", ".join(red["dropped"]))])
        return _table(["fit statistic", "value"], rows, raw=True, numeric={1})

    def _terms_table(self, rep: dict, alpha: float) -> str:
        rows = []
        blocks = set((rep.get("blocks") or {}).get("terms", ()))
        for term in rep["terms"]:
            clear = _is_clear(rep, term, alpha)
            if term in blocks or (term != "intercept" and not clear):
                continue
            rows.append([esc(term), _g(_get(rep["coefficients"], term)),
                         _g(_get(rep["effects"], term)),
                         _g(_get(rep["std_errors"], term)),
                         _p(_get(rep["p_values"], term))])
        hidden = len(rep["terms"]) - len(rows)
        note = (f'<p class="note">{hidden} other term(s) are within the noise; all terms '
                "are in the workbook's terms sheet.</p>" if hidden else "")
        return ("<p><b>Clear terms</b> (coefficients in coded units; effect = change from "
                "the low to the high setting)</p>"
                + _table(["term", "coefficient", "effect", "std error", "p"], rows,
                         numeric={1, 2, 3, 4}) + note)

    def _tests(self, rep: dict) -> str:
        anova = rep.get("anova") or {}
        lines = []
        lof = anova.get("lack_of_fit")
        pe = anova.get("pure_error")
        if lof and lof.get("p") is not None:
            verdict = ("the model misses a pattern the repeated runs show" if lof["p"] < 0.05
                       else "no sign that the model misses a pattern")
            lines.append(f"Lack of fit: F = {_g(lof['f'], 3)} on {lof['df']} and "
                         f"{pe['df'] if pe else '?'} degrees of freedom, p = {_p(lof['p'])}: "
                         f"{verdict}.")
        else:
            lines.append("Lack of fit: not tested (it needs repeated runs at the same "
                         "settings and spare degrees of freedom).")
        curv = anova.get("curvature")
        if curv and curv.get("p") is not None:
            verdict = ("the centre points sit off the plane of the corner runs: the "
                       "response bends" if curv["p"] < 0.05 else "no sign of curvature")
            lines.append(f"Curvature: centre mean {_g(curv['centre_mean'])} against corner "
                         f"mean {_g(curv['factorial_mean'])}, F = {_g(curv['f'], 3)}, "
                         f"p = {_p(curv['p'])}: {verdict}.")
        else:
            lines.append("Curvature: not tested (it needs centre points and corner runs, "
                         "and a model without squared terms).")
        lenth = rep.get("lenth")
        if lenth:
            lines.append(f"No residual degrees of freedom: effects judged against Lenth's "
                         f"margin of error ME = {_g(lenth['me'])} (pseudo standard error "
                         f"{_g(lenth['pse'])}).")
        return "<ul>" + "".join(f"<li>{esc(x)}</li>" for x in lines) + "</ul>"

    def _flagged(self, name: str, rep: dict) -> str:
        flagged = rep.get("flagged_runs") or []
        if not flagged:
            return '<p class="small">Flagged runs: none.</p>'
        model = self.data["fitted"].get(name)
        diag = getattr(model, "diagnostics_", None)
        rows = []
        for run in flagged:
            value = None
            if isinstance(diag, pd.DataFrame) and "studentized_deleted" in diag and \
                    run in diag.index:
                value = diag.loc[run, "studentized_deleted"]
            rows.append([esc(run), _g(value, 3)])
        return ("<p><b>Flagged runs</b> (studentized deleted residual beyond +-3: check "
                "them for a recording or making error)</p>"
                + _table(["run", "studentized residual"], rows, numeric={1}))

    def design(self) -> str:
        s = self.data["study"]
        rows = []
        for f in s["factors"]:
            if f["kind"] == "categorical":
                (a, b) = list(f["coded"])
                counts = f["levels"]
                rows.append([esc(f["label"]), esc(f["name"]), "categorical", "",
                             f"{esc(a)} (-1)", f"{esc(b)} (+1)",
                             f"{counts[a]} / {counts[b]} runs", "levels"])
            else:
                rows.append([esc(f["label"]), esc(f["name"]), "numeric", esc(f["unit"]),
                             f"{_g(f['low'])} (-1)", f"{_g(f['high'])} (+1)",
                             f"{_g(f['tested'][0])} .. {_g(f['tested'][1])} (coded "
                             f"{f['coded_tested'][0]:+.3g} .. {f['coded_tested'][1]:+.3g})",
                             f"{_g(f['search'][0])} .. {_g(f['search'][1])}"])
        out = ["<p>Coded units put every factor on the same scale: -1 at its low "
               "setting, +1 at its high, 0 at the centre.</p>",
               _table(["factor", "name", "kind", "unit", "low", "high", "tested",
                       "searched"], rows, raw=True)]
        if self.study.constraints:
            out.append("<p>Rules limiting the searched region: " + "; ".join(
                esc(c["label"]) for c in self.study.constraints) + "</p>")
        runs = self.data["runs"]
        # Coded settings are in the workbook's runs sheet; here they would make the
        # table too wide to read (the coded ranges are in the table above).
        cols = (["run"] + self.study.factor_names
                + [r for r in self.study.response_names if r in runs] + ["marks"])
        numeric = {i for i, c in enumerate(cols)
                   if c not in ("run", "marks") and pd.api.types.is_numeric_dtype(runs[c])}
        rows = [[esc(_g(v) if not isinstance(v, str) else v) for v in rec]
                for rec in runs[cols].itertuples(index=False)]
        head = [esc(c) for c in cols]
        out.append(f"<h3>{len(runs)} runs, in the order of the data file</h3>")
        out.append('<div class="scroll">' + _table(head, rows, numeric=numeric,
                                                    cls="runs") + "</div>")
        return "".join(out)

    def warnings(self) -> str:
        items = self.data["warnings"]
        if not items:
            return "<p>None.</p>"
        return '<ul class="warn">' + "".join(f"<li>{esc(w)}</li>" for w in items) + "</ul>"

    def cautions(self) -> str:
        return ('<div class="caution"><ul>' + "".join(f"<li>{esc(c)}</li>"
                                                      for c in CAUTIONS) + "</ul></div>")

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

    # -- small helpers

    def _item(self, name: str):
        if name in self.study.response_names:
            return self.study.response(name)
        return self.study.factor(name)

    def _setting(self, name: str, value) -> str:
        if isinstance(value, str):
            return value
        f = self.study.factor(name)
        return f"{_g(value)} {f.unit}".strip()

    @staticmethod
    def _goal_text(goal) -> str:
        if goal.kind == "maximize":
            return f"maximize ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "minimize":
            return f"minimize ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "target":
            return f"target {_g(goal.target)} ({_g(goal.lower)} .. {_g(goal.upper)})"
        if goal.kind == "range":
            return f"within {_g(goal.lower)} .. {_g(goal.upper)}"
        return "none"

    @staticmethod
    def _shape_text(g: dict) -> str:
        if g["goal"] == "target":
            return f"below {_g(g['shape below'], 3)}, above {_g(g['shape above'], 3)}"
        if g["goal"] in ("maximize", "minimize"):
            return _g(g["shape"], 3)
        return "step"


def _formula() -> str:
    from ..confirm.check import INTERVAL_FORMULA

    return INTERVAL_FORMULA


def _table(head: list[str], rows: list[list[str]], *, numeric: set[int] = frozenset(),
           raw: bool = False, cls: str = "") -> str:
    """An HTML table. Cells must already be escaped (``raw`` cells may hold markup)."""
    th = "".join(f'<th class="num">{h}</th>' if i in numeric else f"<th>{h}</th>"
                 for i, h in enumerate(head))
    body = "".join(
        "<tr>" + "".join(f'<td class="num">{c}</td>' if i in numeric else f"<td>{c}</td>"
                         for i, c in enumerate(row)) + "</tr>"
        for row in rows)
    klass = f' class="{cls}"' if cls else ""
    return f"<table{klass}><thead><tr>{th}</tr></thead><tbody>{body}</tbody></table>"


# --------------------------------------------------------------------------
# Charts: Vega-Lite specifications rendered to SVG without a browser


_CLEAR, _NOISE, _CURVE, _MARK = "#2d4a53", "#cbbfa9", "#b5651d", "#2d4a53"


def _svg(chart) -> str:
    """Render an Altair chart to inline SVG (vl-convert: no browser, no network)."""
    import vl_convert

    # The specification is built here from checked numbers: skip schema validation.
    svg = vl_convert.vegalite_to_svg(chart.to_json(validate=False))
    if svg.startswith("<?xml"):
        svg = svg[svg.index("?>") + 2:]
    return svg


def _chart_div(svg: str) -> str:
    return f'<div class="chart">{svg}</div>' if svg else ""


def _effects_chart(response, rep: dict, alpha: float) -> str:
    """Horizontal bars: each term's effect (coefficient for squared terms)."""
    import altair as alt

    rows = []
    blocks = set((rep.get("blocks") or {}).get("terms", ()))
    for term in rep["terms"]:
        if term == "intercept" or term in blocks:
            continue  # block shifts are not factor effects
        effect = _get(rep["effects"], term)
        size = effect if effect is not None else _get(rep["coefficients"], term)
        if size is None:
            continue
        clear = _is_clear(rep, term, alpha)
        rows.append({"term": term + ("" if effect is not None else " (coef.)"),
                     "size": size, "judged": {True: "clear", False: "within noise"}.get(
                         clear, "not judged")})
    if not rows:
        return ""
    frame = pd.DataFrame(rows)
    frame["order"] = -frame["size"].abs()
    height = max(60, 18 * len(frame))
    chart = alt.Chart(frame, title=f"Effects on {response.label}").mark_bar().encode(
        y=alt.Y("term:N", sort=alt.SortField("order"), title=None),
        x=alt.X("size:Q", title="effect (low to high setting)"
                + (f", {response.unit}" if response.unit else "")),
        color=alt.Color("judged:N", title=None,
                        scale=alt.Scale(domain=["clear", "within noise", "not judged"],
                                        range=[_CLEAR, _NOISE, "#9aa3ad"])),
    ).properties(width=420, height=height)
    return _svg(chart)


def _curve_chart(item, part: pd.DataFrame, marker) -> str:
    """One goal's desirability curve, with the best setting's prediction marked."""
    import altair as alt

    unit = f" ({item.unit})" if item.unit else ""
    title = f"{item.label}: {item.goal.kind}"
    line = alt.Chart(part[["value", "desirability"]], title=title).mark_line(
        color=_CURVE, strokeWidth=2.5).encode(
        x=alt.X("value:Q", title=f"{item.name}{unit}", scale=alt.Scale(zero=False)),
        y=alt.Y("desirability:Q", title="desirability d",
                scale=alt.Scale(domain=[0, 1])))
    layers = [line]
    if marker is not None and marker[0] is not None and marker[1] is not None:
        lo, hi = float(part["value"].min()), float(part["value"].max())
        x = min(max(float(marker[0]), lo), hi)
        dot = alt.Chart(pd.DataFrame({"value": [x], "desirability": [marker[1]]})
                        ).mark_point(size=90, filled=True, color=_MARK).encode(
            x="value:Q", y="desirability:Q")
        layers.append(dot)
    return _svg(alt.layer(*layers).properties(width=230, height=150))
