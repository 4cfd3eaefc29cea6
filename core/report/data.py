"""Gathering the report's content once: the page and the workbook draw from one dict.

``report_data`` fits, searches and checks as needed and collects everything
the report shows; it reads the numbers from the same objects as the command
line (``OptimizationResult.to_dict()`` for the search), so the report and
``tradeoff optimize --json`` agree to the digit. Also the small helpers both
outputs share: number formats, the judgement of a term, and the goal and
provenance rows.
"""
from __future__ import annotations

import math

from ..cautions import ACCELERATED_CAUTIONS, FOOD_CAUTIONS
from ..errors import StudyError, TradeoffError
from .summary import study_summary

__all__ = ["report_data", "CAUTIONS", "_get", "_is_clear", "_g", "_pct", "_r2", "_p",
           "_goal_rows", "_provenance_rows"]

CAUTIONS = FOOD_CAUTIONS


def report_data(study, *, top: int = 5, seed: int | None = None, fit=None, result=None,
                confirmation=None, now=None, study_bytes: bytes | None = None,
                data_bytes: bytes | None = None,
                files: dict[str, bytes] | None = None, trade: bool = True) -> dict:
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
    trade : bool
        Compute the trade-off frontier and the steadiness (``trade`` key; None
        when False: the workbook shows neither).

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
        ``provenance`` (dict), ``top``, ``seed``, ``kinetics`` (response ->
        {"table": derivation table, "points": Arrhenius table} for the
        responses fitted across storage temperatures), ``panel`` (the panel
        analysis of ``model.panel_summary`` with its ``notes``, or None) and
        ``cautions`` (the
        food cautions, plus the accelerated-storage ones when storage at
        several temperatures was fitted) and ``derived`` (a study without
        factors: response -> its derivation table, the study's results; empty
        otherwise), ``trade`` (``frontier_data.trade_data``: the frontier of
        the two goals in greatest conflict and the recommendation's
        steadiness; None without factors).
    """
    import tomli_w

    from ..confirm.check import check_confirmations
    from ..derive.derived import derivation_table, kinetic_tables
    from ..study.confirmations import confirmation_files
    from ..maps.tables import desirability_curves, runs_table
    from ..model.study_fit import fit_study
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
    search_note = None
    if not study.factors:
        # nothing varied: no model, no search; the derived values are the results
        from ..model.study_fit import StudyFit
        from ..study.spec import NOTHING_TO_MODEL

        fit = StudyFit(study=study, models={}, skipped={})
        search_note = NOTHING_TO_MODEL[0].upper() + NOTHING_TO_MODEL[1:] + "."
    fit = fit_study(study) if fit is None else fit
    if result is None and search_note is None:
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
    elif search_note and study.factors:
        warnings.append(f"no search: {search_note}")
    if confirmation is not None:
        warnings += [f"confirmation, {v['response']}: {v['advice']}"
                     for _, v in confirmation.verdicts.iterrows()
                     if v["verdict"] == "not confirmed"]
    seen: set[str] = set()
    warnings = [w for w in warnings if not (w in seen or seen.add(w))]

    panel = None
    if study.spec.get("panel") is not None:
        from ..model.panel_summary import panel_analysis

        panel = panel_analysis(study)
        # notes about assessors belong with the panel's own analysis, not the warnings
        panel["notes"] = [w for w in warnings if w.startswith("panel '")]
        warnings = [w for w in warnings if not w.startswith("panel '")]
    kinetics = kinetic_tables(study)
    derived = ({r.name: derivation_table(study, r.name) for r in study.responses
                if r.is_derived} if not study.factors else {})
    several = any((k["points"]["series"] == "one-step fit").any() for k in kinetics.values())
    from .frontier_data import trade_data

    trade = trade_data(study, fit, result, seed) if trade and study.factors else None
    return {
        "trade": trade,
        "kinetics": kinetics,
        "panel": panel,
        "derived": derived,
        "cautions": list(CAUTIONS) + (list(ACCELERATED_CAUTIONS) if several else []),
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


def _get(mapping, key):
    if not mapping:
        return None
    return mapping.get(key)


def _pure_component(rep: dict, term: str) -> bool:
    """A blend's component alone: its coefficient is the prediction for the pure
    component, not an effect, so it gets no test (every term of a blend's model
    names a component; one without ':' is a component alone)."""
    return rep.get("mixture_scale") is not None and ":" not in term


def _is_clear(rep: dict, term: str, alpha: float) -> bool | None:
    """Is a term's effect clearly larger than the noise?

    p below 1 - confidence when the model has residual degrees of freedom;
    otherwise |effect| above Lenth's margin of error (saturated designs).
    """
    if term == "intercept" or _pure_component(rep, term):
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
    """A chance, by the one rule every view and command uses (``chance_text``)."""
    from ..search.chance import chance_text

    return chance_text(x)


def _r2(x) -> str:
    return "-" if x is None else f"{float(x):.3f}"


def _p(x) -> str:
    if x is None:
        return "-"
    return "< 0.0001" if x < 1e-4 else f"{x:.4f}"
