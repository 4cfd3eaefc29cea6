"""The run sheet: the plan as a table to print, fill in and load back unchanged.

Columns: ``run`` (id), ``std_order``, ``run_order``, ``block``, ``point``, one
column per factor in natural units (level names for categorical factors) and
one empty column per measured response, rows in the order to make the runs.
The study loader reads ``run``, the factors and the responses and keeps the
other columns as they are, so the filled-in sheet is the study's data file.
"""
from __future__ import annotations

from pathlib import Path

import pandas as pd

from ..errors import PlanError
from ..study.files import write_atomic
from ..study.safe_cells import table_bytes

__all__ = ["run_sheet", "write_run_sheet", "SHEET_SUFFIXES"]

SHEET_SUFFIXES = (".csv", ".xlsx")


def run_sheet(plan, study) -> pd.DataFrame:
    """The plan's runs plus one empty column per measured response of the study.

    Derived responses (computed from storage or panel tables) get no column.
    """
    table = plan.runs.copy()
    for r in study.responses:
        if not r.is_derived and r.name not in table.columns:
            table[r.name] = pd.Series([None] * len(table), dtype=object)
    return table


def _same_file(a: Path, b: Path) -> bool:
    try:
        return a.resolve() == b.resolve()
    except OSError:
        return False


def write_run_sheet(table: pd.DataFrame, path: str | Path, *, study=None,
                    response_names=()) -> Path:
    """Write the run sheet as CSV or Excel (by suffix), atomically.

    Refuses to write over the study file or its existing data file, and over a
    file that already holds measurements in a response column.
    """
    path = Path(path)
    suffix = path.suffix.lower()
    if study is not None:
        if study.source is not None and _same_file(path, Path(study.source)):
            raise PlanError(f"{path.name} is the study file itself: choose another --out "
                            "name, for example runs_plan.csv")
        if (study.data_path is not None and Path(study.data_path).exists()
                and _same_file(path, Path(study.data_path))):
            raise PlanError(f"{path.name} is the study's data file, which already exists: "
                            "choose another --out name so your runs are not overwritten")
        response_names = [r.name for r in study.responses if not r.is_derived]
    if suffix not in SHEET_SUFFIXES:
        raise PlanError(f"{path.name}: a run sheet is written as .csv or .xlsx: change "
                        "the --out name's ending")
    if path.is_file():
        _refuse_if_measured(path, response_names)
    folder = path.parent if str(path.parent) else Path(".")
    if not folder.is_dir():
        raise PlanError(f"{path}: the folder {folder} does not exist: create it first")
    # text such as a level name "=1+2" is written as text, never as a formula
    write_atomic(path, table_bytes(table, suffix, sheet="runs"), error=PlanError)
    return path


def _refuse_if_measured(path: Path, response_names) -> None:
    """Refuse to replace an existing sheet that already has measurements in it."""
    from ..errors import DataError
    from ..study.intake import read_table

    try:
        raw = read_table(path)
    except DataError:
        if path.stat().st_size == 0:
            return
        # A file that cannot be read may still hold someone's measurements
        # (a repeated header, an unsaved formula): keep it rather than guess.
        raise PlanError(f"{path.name} already exists and cannot be read as a run sheet: "
                        "choose another --out name so it is not overwritten") from None
    columns = {name: i for i, name in enumerate(raw.header)}
    for name in response_names:
        i = columns.get(name)
        if i is None:
            continue
        if any(i < len(cells) and cells[i] not in (None, "") for _, cells in raw.rows):
            raise PlanError(f"{path.name} already holds measurements in column '{name}': "
                            "choose another --out name so they are not overwritten")


_RESOLUTION_MEANING = {
    3: "main effects are clear of each other but aliased with two-factor interactions",
    4: "main effects are clear of two-factor interactions; two-factor interactions "
       "are aliased with each other",
    5: "main effects and two-factor interactions are all clear of each other",
}


def plan_command(args) -> tuple[dict, str]:
    """Carry out ``tradeoff plan``: build the plan, write the sheet, describe it.

    Returns the JSON report and the text for the terminal.
    """
    from .augment import augment_study
    from .designs import plan_runs
    from .evaluation import evaluate_design, evaluate_plan
    from ..derive.load import load_study

    design = getattr(args, "design", None) or "factorial"
    model_arg = _model_option(getattr(args, "model", None))
    kept = None
    if getattr(args, "extra", 0) and design != "definitive-screening":
        raise PlanError("--extra adds runs to a definitive screening design only: use "
                        "--design definitive-screening, or leave it out")
    if design != "factorial" or getattr(args, "keep", False):
        from .layouts import plan_design

        clash = [name for name, given in (("--augment", bool(args.augment)),
                                          ("--resolution", args.resolution is not None),
                                          ("--foldover", args.foldover),
                                          ("--replicates", args.replicates != 1)) if given]
        if clash:
            raise PlanError(f"{', '.join(clash)} belong to factorial plans, not to "
                            f"--design {design}: leave {'them' if len(clash) > 1 else 'it'}"
                            " out")
        keep = bool(getattr(args, "keep", False))
        study = load_study(args.study, with_data=False)
        if keep and study.data_path is None:
            raise PlanError("--keep keeps the study's measured runs, but the study names "
                            "no data file ([study] data = ...): add it, or leave out --keep")
        if keep:
            study = load_study(args.study, with_data=True)
        plan = plan_design(study, design, alpha=args.alpha or "rotatable",
                           center=args.center, blocks=args.blocks, runs=args.runs,
                           criterion=getattr(args, "criterion", "d"), model=model_arg,
                           keep=keep, seed=args.seed, extra=getattr(args, "extra", 0) or 0)
        model = model_arg or (("main" if design == "definitive-screening" else None)
                              or ("quadratic" if design != "optimal" else None)
                              or (study.terms if study.terms is not None else study.model))
        kept = plan.kept
        if kept is not None:
            import numpy as np

            evaluation = evaluate_design(study.factors, np.vstack(
                [kept, plan.coded.to_numpy(float)]), model, effect=args.effect,
                sd=args.sd, alpha=1 - study.confidence)
        else:
            evaluation = evaluate_plan(plan, model, effect=args.effect, sd=args.sd,
                                       alpha=1 - study.confidence)
    elif args.augment:
        clash = [name for name, given in (("--runs", args.runs is not None),
                                          ("--resolution", args.resolution is not None),
                                          ("--blocks", args.blocks != 1),
                                          ("--foldover", args.foldover)) if given]
        if clash:
            raise PlanError(f"--augment adds axial runs to the runs already measured, so "
                            f"{', '.join(clash)} cannot be used with it: leave "
                            f"{'them' if len(clash) > 1 else 'it'} out")
        study = load_study(args.study, with_data=True)
        plan = augment_study(study, args.augment, center=args.center,
                             replicates=args.replicates, seed=args.seed)
        old = study.coded().to_numpy(float)
        # the runs' blocks as the models read them ([study] blocks or 'block')
        column = study.block_column
        old_block = (study.runs[column].astype(str).to_numpy() if column is not None
                     else ["1"] * len(old))
        import numpy as np
        coded = np.vstack([old, plan.coded.to_numpy(float)])
        block = np.concatenate([np.asarray(old_block, dtype=object),
                                plan.runs["block"].astype(str).to_numpy(dtype=object)])
        kept = old
        model = "quadratic"
        evaluation = evaluate_design(study.factors, coded, model, block=block,
                                     effect=args.effect, sd=args.sd,
                                     alpha=1 - study.confidence)
    else:
        study = load_study(args.study, with_data=False)
        plan = plan_runs(study, runs=args.runs, resolution=args.resolution,
                         center=args.center or 0, replicates=args.replicates,
                         blocks=args.blocks, foldover=args.foldover, seed=args.seed)
        model = model_arg or (study.terms if study.terms is not None else study.model)
        if model == "smooth":  # no terms to judge: the plan is judged for main effects and pairs
            model = "interactions"
        evaluation = evaluate_plan(plan, model, effect=args.effect, sd=args.sd,
                                   alpha=1 - study.confidence)
    sheet = run_sheet(plan, study)
    if design != "factorial" and kept is not None:
        sheet = _with_kept(sheet, study)
    path = write_run_sheet(sheet, args.out, study=study)
    report = plan.summary()
    if args.augment:
        report["runs"] = int(len(plan.runs))
        report["existing_runs"] = int(len(study.runs))
    report["layout"] = design
    if kept is not None:
        report["kept_runs"] = int(len(kept))
    report["model"] = evaluation.summary()
    from .layouts import prediction_figures

    report["prediction_variance"] = prediction_figures(study, plan, model, kept=kept)
    if design == "definitive-screening":
        from .definitive import screening_properties

        report["screening"] = screening_properties(study, plan.coded.to_numpy(float))
    report["run_sheet"] = str(path)
    return report, plan_text(report, sheet, path)


def _model_option(text):
    """``--model``: a model name, or terms joined by commas (``a,b,a:b``)."""
    if text is None:
        return None
    text = text.strip()
    if "," in text or ":" in text or "^" in text:
        return [t.strip() for t in text.split(",") if t.strip()]
    return text


def _with_kept(sheet: pd.DataFrame, study) -> pd.DataFrame:
    """The kept (measured) runs first, as they are, marked ``kept``; then the new runs."""
    runs = study.runs
    column = study.block_column
    kept = pd.DataFrame({"run": runs["run"].astype(str).to_numpy(),
                         "std_order": pd.array([pd.NA] * len(runs), dtype="Int64"),
                         "run_order": pd.array([pd.NA] * len(runs), dtype="Int64"),
                         "block": (runs[column].to_numpy() if column is not None
                                   else [1] * len(runs)),
                         "point": ["kept"] * len(runs)})
    for name in sheet.columns:
        if name not in kept.columns:
            kept[name] = runs[name].to_numpy() if name in runs.columns else None
    return pd.concat([kept[sheet.columns], sheet], ignore_index=True)


def plan_text(report: dict, sheet: pd.DataFrame, path: Path) -> str:
    """The plan described in plain words for the terminal."""
    from .designs import _roman

    lines = []
    letters = report["letters"]
    if report.get("layout", "factorial") != "factorial":
        counts = sheet["point"].value_counts()
        parts = [f"{int(counts[k])} {k}" for k in ("factorial", "axial", "edge", "optimal",
                                                   "fold-over", "centre") if k in counts]
        lines.append(f"Plan: {report['design']}: {' + '.join(parts)} = "
                     f"{sum(int(v) for k, v in counts.items() if k != 'kept')} new runs in "
                     f"{report['blocks_count']} block"
                     f"{'s' if report['blocks_count'] > 1 else ''}"
                     + (f", around {report['kept_runs']} kept runs"
                        if report.get("kept_runs") else ""))
    elif report.get("alpha") is not None:
        lines.append(f"Plan: {report['design']} added to {report['existing_runs']} "
                     f"measured runs: {report['axial_runs']} axial + "
                     f"{report['centre_runs']} centre = {report['total_runs']} new runs "
                     f"(axial distance alpha = {report['alpha']:.4g} in coded units)")
    else:
        parts = [f"{report['factorial_runs']} factorial"]
        if report["centre_runs"]:
            parts.append(f"{report['centre_runs']} centre")
        lines.append(f"Plan: {report['design']}, {' + '.join(parts)} = "
                     f"{report['total_runs']} runs in {report['blocks_count']} "
                     f"block{'s' if report['blocks_count'] > 1 else ''}")
        res = report["resolution"]
        if res is None:
            lines.append("Resolution: full factorial, nothing is aliased")
        else:
            meaning = _RESOLUTION_MEANING.get(res, _RESOLUTION_MEANING[5])
            lines.append(f"Resolution {_roman(res)}: {meaning}")
        lines.append("Letters: " + ", ".join(f"{k} = {v}" for k, v in letters.items()))
        if report["generators"]:
            lines.append("Generators:")
            lines += [f"  {g}   ({n})" for g, n in zip(report["generators"],
                                                      report["generators_named"])]
            lines.append(f"Defining relation: {report['defining_relation']}")
        if report["aliases"]:
            lines.append("Aliases (up to two-factor interactions; aliased terms cannot "
                         "be told apart):")
            lines += [f"  {k} = {' = '.join(v)}" for k, v in report["aliases"].items()]
    if report["blocks"] and report.get("alpha") is None:
        lines.append("Blocks (each block contrast is confounded with):")
        lines += [f"  {b['generator']} ({b['word']}): {', '.join(b['confounded_with'])}"
                  for b in report["blocks"]]
    m = report["model"]
    lines.append(f"Model '{m['model']}': {len(m['estimable'])} terms estimable, "
                 f"{m['error_df']} run(s) left to estimate the run-to-run variation")
    for term, with_ in m["not_estimable"].items():
        lines.append(f"  not estimable: {term} (aliased with {', '.join(with_) or '-'})")
    power = m.get("power")
    head = "  term                          VIF" + ("    power" if power else "")
    lines.append(head)
    for term, vif in m["vif"].items():
        row = f"  {term:<28} {vif:5.2f}"
        if power:
            p = power["by_term"].get(term)
            row += "      -" if p is None else f"  {p:7.2f}"
        lines.append(row)
    if power:
        lines.append(f"  power: chance of finding a change of {power['effect']:g} "
                     f"(low to high) significant at {power['alpha']:g} when the "
                     f"run-to-run SD is {power['sd']:g}")
    pv = report.get("prediction_variance") or {}
    if pv:
        q = pv["spv_quantiles"]
        lines.append(f"Prediction over the region (scaled variance, {pv['region_points']} "
                     f"points): average (I) {pv['i_average_spv']:.4g}, largest (G) "
                     f"{pv['g_max_spv']:.4g}; 10/50/90 % of the region below "
                     f"{q['10%']:.4g} / {q['50%']:.4g} / {q['90%']:.4g}; D-efficiency "
                     f"{pv['d_efficiency']:.4g} %")
    if report.get("screening"):
        from .definitive import screening_lines

        lines += screening_lines(report["screening"])
    notes = report["notes"] + m["notes"]
    if notes:
        lines.append("Notes:")
        lines += [f"  - {n}" for n in notes]
    lines.append(f"Run sheet: {path} ({len(sheet)} runs in run order). Make the runs in "
                 "that order, fill in the response columns, and use the file as the "
                 "study's data file.")
    return "\n".join(lines)
