"""The report as an Excel workbook: the same content as the page, one table per sheet.

``build_workbook`` returns the workbook's bytes; ``WORKBOOK_SHEETS`` lists
its sheets in order.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..model.terms import model_label
from ..model.transforms import power_advice
from ..study.safe_cells import workbook_bytes
from .data import (CAUTIONS, _get, _goal_rows, _is_clear, _provenance_rows, _pure_component,
                   report_data)
from .panel_workbook import panel_tables
from .sections import _withheld

__all__ = ["build_workbook", "WORKBOOK_SHEETS"]

# Sheet names of the workbook, in order (confirmation sheets only when the
# study lists confirmation runs).
# A study without factors has no factors, models, terms or solutions sheets, and a
# "derived values" sheet instead. A study with a panel table adds the panel sheets
# (panel_workbook.PANEL_SHEETS) after the goals.
WORKBOOK_SHEETS = ("summary", "runs", "factors", "models", "terms", "goals", "solutions",
                   "confirmations", "verdicts", "warnings", "specification", "provenance")




def _finite(v):
    """A number, or None where there is none (a blank cell)."""
    return float(v) if v is not None and np.isfinite(v) else None

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
    # the workbook has no frontier or steadiness sheet: not computed for it
    data = data if data is not None else report_data(
        study, top=top, seed=seed, fit=fit, result=result, trade=False, **kwargs)
    # text from the study (run ids, labels, level names) stays text, never a formula
    return workbook_bytes(_workbook_tables(study, data))


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
                    ("chance every response within limits",
                     "not stated" if _withheld(best) else best["chance_all"])]
        summary += [(f"best setting: {k}", v) for k, v in best["settings"].items()]
    else:
        summary.append(("search", data["search_note"]))
    check = data["confirmation"]
    if check is not None:
        summary += [(f"confirmation: {v['response']}", v["verdict"])
                    for _, v in check.verdicts.iterrows()]
    summary += [("caution", c) for c in data.get("cautions", CAUTIONS)]
    tables = {"summary": pd.DataFrame(summary, columns=["item", "value"]).astype(
        {"value": str})}

    runs = data["runs"].reset_index()
    # a factor of three or more levels is coded by position, a number that means
    # nothing to a reader: its level names stand alone
    tables["runs"] = runs.drop(columns=[f"{f.name} coded" for f in study.factors
                                        if f.is_categorical and len(f.levels) > 2])

    factors = []
    for f in data["study"]["factors"]:
        row = {"factor": f["name"], "label": f["label"], "kind": f["kind"]}
        if f["kind"] == "categorical":
            names = list(f["levels"])
            if len(names) == 2:
                row.update({"low (coded -1)": names[0], "high (coded +1)": names[1]})
            # every level named, with its runs (three or more: sum-to-zero columns)
            row.update({"levels": ", ".join(names),
                        "runs per level": ", ".join(f"{lv}: {n}"
                                                    for lv, n in f["levels"].items())})
        else:
            row.update({"unit": f["unit"], "low (coded -1)": f["low"],
                        "high (coded +1)": f["high"], "tested min": f["tested"][0],
                        "tested max": f["tested"][1], "search min": f["search"][0],
                        "search max": f["search"][1]})
        factors.append(row)
    tables["factors"] = pd.DataFrame(factors)

    model_rows, term_rows, scale_rows = [], [], []
    alpha = 1 - study.confidence
    for name, rep in data["models"].items():
        anova = rep.get("anova") or {}
        lof, curv = anova.get("lack_of_fit") or {}, anova.get("curvature") or {}
        smooth = rep["model"] == "smooth"  # a Gaussian process: no terms (model/smooth.py)
        if rep["model"] == "category":  # the scores' cumulative logit (model/category_model.py)
            model_rows.append(_category_row(name, rep))
            term_rows += _category_terms(name, rep, alpha)
            continue
        model_rows.append({
            "response": name, "model": model_label(rep["model"]),
            "transform": rep["transform"], "runs used": rep["n"],
            "terms": None if smooth else len(rep["terms"]),
            "residual df": rep.get("residual_df"),
            "R2": rep["r2"], "adjusted R2": rep.get("adj_r2"), "predicted R2": rep["pred_r2"],
            "residual sd": rep["residual_sd"], "lack of fit p": lof.get("p"),
            "curvature p": curv.get("p"),
            # runs sharing a batch (model/wholeplot.py): both variances
            "whole plots": (rep.get("whole_plots") or {}).get("count"),
            "sd between whole plots": (rep.get("whole_plots") or {}).get("sd"),
            "flagged runs": ", ".join(rep["flagged_runs"]),
            # the power-transform check, in the words of the fit text and the page
            "scale": (power_advice(rep["box_cox"], rep["transform"])[0]
                      if rep.get("box_cox") else None),
            "warnings": " | ".join(rep["warnings"])})
        if smooth:
            scale_rows += [{"response": name, "factor": f, "length scale (coded)": v,
                            "in its units": rep["length_scales_natural"].get(f)}
                           for f, v in rep["length_scales"].items()]
            continue
        # each effect with its margin, as the effects figure draws it
        from ..maps.estimates import effect_estimates

        model = data["fitted"].get(name)
        est = (effect_estimates(model).set_index("term") if model is not None
               else pd.DataFrame())
        for term in rep["terms"]:
            shown = term in est.index
            term_rows.append({
                "response": name, "term": term,
                "coefficient": _get(rep["coefficients"], term),
                "effect": _get(rep["effects"], term),
                "std error": _get(rep["std_errors"], term),
                "p value": None if _pure_component(rep, term) else _get(rep["p_values"], term),
                "clear": _is_clear(rep, term, alpha),
                "effect from (alone)": _finite(est.at[term, "alone_low"]) if shown else None,
                "effect to (alone)": _finite(est.at[term, "alone_high"]) if shown else None,
                "effect from (all terms)": (_finite(est.at[term, "together_low"]) if shown
                                            else None),
                "effect to (all terms)": (_finite(est.at[term, "together_high"]) if shown
                                          else None),
                "margins say": est.at[term, "verdict"] if shown else None})
    for name, why in data["skipped"].items():
        model_rows.append({"response": name, "model": "none", "warnings": why})
    tables["models"] = pd.DataFrame(model_rows)
    tables["terms"] = pd.DataFrame(term_rows, columns=[
        "response", "term", "coefficient", "effect", "std error", "p value", "clear",
        "effect from (alone)", "effect to (alone)", "effect from (all terms)",
        "effect to (all terms)", "margins say"])
    if scale_rows:
        tables["length scales"] = pd.DataFrame(scale_rows)
    if data.get("kinetics"):  # responses fitted across storage temperatures
        tables["storage kinetics"] = pd.concat(
            [k["table"].assign(response=name) for name, k in data["kinetics"].items()],
            ignore_index=True)[["response", "run", "value", "lower", "upper", "se",
                                "r_squared", "points", "per_temperature", "flag"]]
    tables["goals"] = pd.DataFrame(_goal_rows(study))
    tables.update(panel_tables(data.get("panel")))
    if data.get("derived"):  # no factors: each product's derived values are the results
        tables["derived values"] = pd.concat(
            [t.assign(response=name) for name, t in data["derived"].items()],
            ignore_index=True)[["response", "run", "value", "lower", "upper", "se",
                                "points", "r_squared", "flag"]]

    sol_rows = []
    if res is not None:
        for s in res["solutions"]:
            for rname, o in s["responses"].items():
                row = {"solution": s["label"], "rank": s["rank"],
                       "D": s["desirability"], "chance all within limits":
                       "not stated" if _withheld(s) else s["chance_all"]}
                row.update(s["settings"])
                row.update({"response": rname, "goal": o["goal"],
                            "predicted": o["predicted"], "desirability": o["desirability"],
                            "pi low": o["pi"][0], "pi high": o["pi"][1],
                            "ci low": o["ci"][0], "ci high": o["ci"][1],
                            "chance within limits": o["chance_in_limits"],
                            "storage study": {"beyond": "past the last storage time",
                                              "far": "too far past it: no chance stated"}
                            .get(o.get("extrapolated"), "")})
                if res.get("production_sd"):
                    row.update({"spread SD in production": o.get("transmitted_sd"),
                                "mean shift in production": o.get("mean_shift"),
                                "chance all in production": s.get("chance_all_production"),
                                "D given up": s.get("d_given_up")})
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
    if not study.factors:  # nothing modelled or searched: the summary says why
        for name in ("factors", "models", "terms", "solutions"):
            tables.pop(name, None)
    return tables


def _category_row(name: str, rep: dict) -> dict:
    """A category response's fit statistics (model/category_model.py)."""
    return {"response": name, "model": "category (cumulative logit)",
            "transform": "none", "runs used": rep["n_runs"],
            "terms": len(rep["effects"]), "R2": rep["r2"],
            "residual sd": rep["residual_sd"],
            "flagged runs": ", ".join(rep["flagged_runs"]),
            "warnings": " | ".join(rep["warnings"])}


def _category_terms(name: str, rep: dict, alpha: float) -> list[dict]:
    """Its effects and thresholds on the latent scale (no effect margins: not a
    least-squares model)."""
    rows = [{"response": name, "term": e["term"], "coefficient": e["estimate"],
             "std error": e["se"], "p value": e["p"],
             "clear": e["p"] is not None and e["p"] < alpha,
             "margins say": "latent scale, per coded unit"}
            for e in rep["effects"] + rep["assessors"]]
    rows += [{"response": name, "term": f"threshold {t['between']}",
              "coefficient": t["estimate"], "std error": t["se"],
              "margins say": "latent scale"} for t in rep["thresholds"]]
    return rows
