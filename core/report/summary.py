"""The study summary printed by ``tradeoff check``: runs, factors, responses, notes."""
from __future__ import annotations

import numpy as np

from ..model.terms import model_label
from ..study.coding import level_codes
from ..study.spec import Study
from ..study.whole_plots import whole_plot_counts
from .unused import unused_columns

__all__ = ["study_summary", "summary_text"]


def study_summary(study: Study) -> dict:
    """A JSON-ready summary of a loaded study."""
    runs = study.runs
    factors = []
    for f in study.factors:
        if f.is_categorical:
            counts = runs[f.name].value_counts()
            factors.append({"name": f.name, "label": f.label, "kind": "categorical",
                            "levels": {lv: int(counts.get(lv, 0)) for lv in f.levels},
                            # two levels: -1/+1; more: the level's position 0, 1, ...
                            "coded": {lv: int(c) for lv, c in zip(f.levels,
                                                                  level_codes(f))}})
        else:
            values = runs[f.name].to_numpy(float)
            coded = (values - f.centre) / f.half_range
            factors.append({
                "name": f.name, "label": f.label, "unit": f.unit, "kind": "numeric",
                "low": f.low, "high": f.high,
                "tested": [float(values.min()), float(values.max())],
                "coded_tested": [round(float(coded.min()), 4),
                                 round(float(coded.max()), 4)],
                "distinct_settings": int(len(np.unique(values))),
                "search": list(f.search_range),
            })
            if getattr(f, "is_component", False):  # a blend's component: bounds as given
                factors[-1] |= {"kind": "component", "given": [f.given_low, f.given_high]}
    responses = []
    for r in study.responses:
        values = runs[r.name].to_numpy(float)
        present = values[~np.isnan(values)]
        model = model_label(study.model_for(r))
        if study.mixture is not None and r.terms is None and study.terms is None:
            model = f"{study.mixture.model} mixture" + (
                "" if study.mixture.process == "none" else
                f" x process {study.mixture.process} ({model})")
        entry = {"name": r.name, "label": r.label, "unit": r.unit,
                 "measured": int(len(present)), "blank": int(np.isnan(values).sum()),
                 "goal": r.goal.kind, "model": model}
        if len(present):
            entry["min"], entry["max"] = float(present.min()), float(present.max())
        entry["pieces"] = _pieces(study, r.name)
        if r.is_derived:
            from ..derive.derived import describe_derivation  # late: derived reads Study

            entry["derived"] = {k: v for k, v in r.extra.items()}
            entry["derived_how"] = describe_derivation(study, r)
        reach = (getattr(study, "reach", {}) or {}).get(r.name)
        if reach is not None:  # a time from storage: how far it may be stated
            entry["storage_reach"] = reach.to_dict()
            entry["goal_warning"] = reach.goal_warning(r.goal, "the goal") or None
        responses.append(entry)
    out = {"study": study.name,
            "source": str(study.source) if study.source else None,
            "data": str(study.data_path) if study.data_path else None,
            "runs": int(len(runs)), "factors": factors, "responses": responses,
            "blocks": _blocks(study),
            "whole_plots": whole_plot_counts(study),
            "constraints": [c["rule"] for c in study.constraints],
            "mixture": None if study.mixture is None else {
                "total": study.mixture.total, "model": study.mixture.model,
                "process": study.mixture.process, "scale": study.mixture.scale,
                "tightened": list(study.mixture.notes)},
            # data columns the study leaves out, what each might be (report/unused.py)
            "unused_columns": unused_columns(study),
            "warnings": list(study.notes) + _single_plots(study)}
    if not study.factors:  # nothing varied: each product's derived values are the answer
        out["derived_values"] = _derived_values(study)
    return out


def _derived_values(study) -> dict:
    """Each derived response's value per run (product), with its interval where it
    has one: response -> list of {run, value, lower, upper, se, flag}."""
    from ..derive.derived import derivation_table  # late: derived reads Study

    def number(v):
        return None if v is None or v != v else float(v)

    out = {}
    for r in study.responses:
        if not r.is_derived:
            continue
        table = derivation_table(study, r.name)
        out[r.name] = [{"run": str(row["run"]), "value": number(row["value"]),
                        "lower": number(row.get("lower")), "upper": number(row.get("upper")),
                        "se": number(row.get("se")), "flag": str(row.get("flag") or "")}
                       for _, row in table.iterrows()]
    return out


def _pieces(study, name: str) -> dict | None:
    """Runs measured in several pieces and the pieces in all (None: one value a run)."""
    table = getattr(study, "pieces", None)
    if table is None:
        return None
    counts = table.loc[table["response"] == name, "run"].value_counts()
    if not (counts > 1).any():
        return None
    return {"runs_with_several": int((counts > 1).sum()), "pieces": int(counts.sum()),
            "most": int(counts.max()), "fewest": int(counts.min())}


def _single_plots(study) -> list[str]:
    w = whole_plot_counts(study)
    if not w or not w["single"]:
        return []
    names = ", ".join(f"'{p}'" for p in w["single"][:10])
    return [f"whole plot{'s' if len(w['single']) > 1 else ''} {names} "
            f"{'have' if len(w['single']) > 1 else 'has'} a single run: such a batch says "
            "nothing about the variation within batches and little about the variation "
            "between them"]


def _blocks(study) -> dict | None:
    """The runs per block when the runs fall in two or more blocks (models add block terms)."""
    labels = study.block_labels()
    if labels is None:
        return None
    from ..model.terms import block_terms

    levels = block_terms(labels, 0)[2]
    return {"column": study.block_column,
            "runs": {lev: int((labels == lev).sum()) for lev in levels}}


def _whole_plot_lines(w: dict | None) -> list[str]:
    """The whole plots in the check: how many, the runs in each, single-run ones."""
    if not w:
        return []
    sizes = sorted(set(w["runs"].values()))
    each = (f"{sizes[0]} runs each" if len(sizes) == 1
            else f"{sizes[0]} to {sizes[-1]} runs each")
    shown = ", ".join(f"{p}: {k}" for p, k in list(w["runs"].items())[:12])
    more = ", ..." if len(w["runs"]) > 12 else ""
    hard = (f"; set once per whole plot: {', '.join(w['hard_to_change'])}"
            if w["hard_to_change"] else "")
    return ["", f"Whole plots (column '{w['column']}'): {w['count']} whole plots, {each} "
            f"({shown}{more}){hard}; every model gets a random shift per whole plot"]


def summary_text(summary: dict) -> str:
    """The summary as readable text for the terminal."""
    none = not summary["factors"]
    data = summary["data"] or "none: the runs are those named in the storage or panel table"
    lines = [f"Study: {summary['study']}", f"Data:  {data}", f"Runs:  {summary['runs']}", "",
             "Factors: none (nothing is varied: the study gives each product's derived "
             "values; there is nothing to model or search)" if none else "Factors"]
    for f in summary["factors"]:
        if f["kind"] == "component":
            unit = f" {f['unit']}" if f["unit"] else ""
            given = "" if f["given"] == [f["low"], f["high"]] else \
                f" (given {f['given'][0]:g} .. {f['given'][1]:g})"
            lines.append(f"  {f['name']:<20} component, low {f['low']:g} .. high "
                         f"{f['high']:g}{unit}{given}; tested {f['tested'][0]:g} .. "
                         f"{f['tested'][1]:g}, {f['distinct_settings']} amounts")
        elif f["kind"] == "categorical":
            levels = ", ".join(
                f"{lv} (coded {f['coded'][lv]:+d}, {n} runs)" if len(f["levels"]) == 2
                else f"{lv} ({n} runs)" for lv, n in f["levels"].items())
            lines.append(f"  {f['name']:<20} categorical: {levels}")
        else:
            unit = f" {f['unit']}" if f["unit"] else ""
            lines.append(
                f"  {f['name']:<20} low {f['low']:g} .. high {f['high']:g}{unit} "
                f"(coded -1 .. +1); tested {f['tested'][0]:g} .. {f['tested'][1]:g} "
                f"(coded {f['coded_tested'][0]:+.3g} .. {f['coded_tested'][1]:+.3g}), "
                f"{f['distinct_settings']} settings")
    mix = summary.get("mixture")
    if mix:
        lines += ["", f"Blend: the components add up to {mix['total']:g} in every run; "
                  f"model {mix['model']} (Scheffe, no intercept), process terms "
                  f"{mix['process']}; coefficients for "
                  + ("proportions of the total" if mix["scale"] == "proportion"
                     else "L-pseudo-components (some low above 0)")]
    b = summary.get("blocks")
    if b:
        counts = ", ".join(f"{lev}: {n} runs" for lev, n in b["runs"].items())
        lines += ["", f"Blocks (column '{b['column']}'): {counts}; every model gets a "
                  "block term for each block after the first"]
    lines += _whole_plot_lines(summary.get("whole_plots"))
    lines += ["", "Responses"]
    for r in summary["responses"]:
        unit = f" {r['unit']}" if r["unit"] else ""
        span = (f", {r['min']:g} .. {r['max']:g}{unit}" if "min" in r else "")
        lines.append(f"  {r['name']:<20} {r['measured']} measured, {r['blank']} blank"
                     f"{span}; goal {r['goal']}; model {r['model']}" if not none else
                     f"  {r['name']:<20} a value for {r['measured']} of {summary['runs']} "
                     "product(s), listed under Derived values")
        if r.get("goal_warning"):
            lines.append(f"  {'':<20} goal warning: {r['goal_warning']}")
        pc = r.get("pieces")
        if pc:
            each = (f"{pc['most']} each" if pc["most"] == pc["fewest"]
                    else f"{pc['fewest']} to {pc['most']} each")
            lines.append(f"  {'':<20} pieces: {pc['runs_with_several']} runs measured in "
                         f"several pieces ({pc['pieces']} pieces, {each}); the model "
                         "uses each run's mean")
        if "derived" in r:
            lines.append(f"  {'':<20} derived: " + r.get("derived_how", ", ".join(
                f"{k} = {v}" for k, v in r["derived"].items())))
    if summary.get("derived_values"):
        lines += ["", "Derived values"]
        units = {r["name"]: r["unit"] for r in summary["responses"]}
        for name, rows in summary["derived_values"].items():
            for v in rows:
                lines.append(f"  {name:<20} {v['run']:<8} {_value_text(v, units[name])}")
    if summary["constraints"]:
        lines += ["", "Constraints"] + [f"  {c}" for c in summary["constraints"]]
    unused = summary.get("unused_columns") or []
    if unused:
        lines += ["", "Columns not used (kept in the table, not in any model)"]
        for u in unused:
            lines.append(f"  {u['column']:<20} might be {u['might_be']}"
                         + (f"; to use it: {u['key']}" if u["key"] else ""))
    lines += ["", "Warnings" if summary["warnings"] else "Warnings: none"]
    lines += [f"  - {w}" for w in summary["warnings"]]
    return "\n".join(lines)


def _value_text(v: dict, unit: str) -> str:
    """A derived value with its interval and standard error, as check prints it."""
    if v["value"] is None:
        return "left out" + (f": {v['flag']}" if v["flag"] else "")
    unit = f" {unit}" if unit else ""
    parts = []
    if v["lower"] is not None or v["upper"] is not None:
        lo = "-" if v["lower"] is None else f"{v['lower']:.4g}"
        hi = "not reached" if v["upper"] is None else f"{v['upper']:.4g}"
        parts.append(f"lower {lo}, upper {hi}")
    if v["se"] is not None:
        parts.append(f"standard error {v['se']:.3g}")
    text = f"{v['value']:.4g}{unit}" + (f" ({'; '.join(parts)})" if parts else "")
    return text + (f"; {v['flag']}" if v["flag"] else "")
