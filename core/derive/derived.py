"""Derived responses: per-run responses computed from a storage or panel table.

A response with ``derive = "..."`` in the study file is not read from the runs
table; it is computed per run from the long-form table declared in
``[storage]`` or ``[panel]`` and merged into ``study.runs`` by run id. From
then on it is a response like any other (model, goal, search). Every run left
out, every interpolated or extrapolated value and every panel warning is
added to ``study.notes``, together with one line saying how the response was
computed.
"""
from __future__ import annotations

from dataclasses import replace

import numpy as np
import pandas as pd

from ..errors import DataError, StudyError, did_you_mean, where
from ..study.intake import RawTable
from .panel import adjusted_means, assessor_agreement, run_means
from .panel_input import attribute_info, describe_category, read_scores
from .shelf import (TEMPERATURE_KINDS, arrhenius_points, derive_kinetic, describe_kinetic,
                    rows_at_temperature)
from .reach import TIME_KINDS, storage_reach
from .storage import fit_kinetics, fitted_value, interpolate_at, piece_spread, read_storage
from .table import flag_notes as _flag_notes, name_list as _list, run_table as _table
from ..study.spec import Response, Study
from ..study.runs import read_study_table

__all__ = ["DERIVE_KINDS", "DERIVED_COLUMNS", "check_derived", "add_derived_responses",
           "derivation_table", "describe_derivation", "arrhenius_table", "kinetic_tables"]

from .options import (DERIVE_KINDS, DERIVED_COLUMNS, _POOR_FIT_R2, _options, _section,
                      check_derived)


# --------------------------------------------------------------------------
# Reading the tables


def _tables(study: Study, storage: RawTable | None, panel: RawTable | None,
            wanted: set[str]) -> dict:
    run_ids = list(study.runs["run"]) if study.runs is not None else None
    out = {}
    if "storage" in wanted:
        sec = _section(study, "storage")
        raw = storage if storage is not None else read_study_table(study, sec["data"],
                                                                   sheet=sec["sheet"])
        out["storage"] = (sec, raw.source.name,
                          read_storage(raw, time=sec["time"], temperature=sec["temperature"],
                                       run_ids=run_ids))
    if "panel" in wanted:
        sec = _section(study, "panel")
        raw = panel if panel is not None else read_study_table(study, sec["data"],
                                                               sheet=sec["sheet"])
        out["panel"] = (sec, raw.source.name,
                        read_scores(raw, sec, run_ids=run_ids))
    return out


def _subset(frame: pd.DataFrame, column: str, name: str, fname: str,
            r: Response) -> pd.DataFrame:
    sub = frame[frame[column] == name]
    if sub.empty:
        found = sorted(set(frame[column]))
        raise DataError(f"{fname}: no rows with {column} '{name}' for response "
                        f"'{r.name}': the table has {found}{did_you_mean(name, found)}")
    return sub


# --------------------------------------------------------------------------
# Storage responses


def _storage_gaps(study: Study, sub: pd.DataFrame, prop: str, sec: dict,
                  fname: str) -> list[str]:
    """Per-run notes on missing time points (once per property).

    The schedule is every time measured in at least half the runs, so one
    run's extra time point does not make all the others look incomplete.
    """
    per_time = sub.dropna(subset=["value"]).groupby("time")["run"].nunique()
    n_runs = max(sub["run"].nunique(), 1)
    times = per_time.index[per_time >= n_runs / 2].to_numpy()
    notes = []
    tname = sec["time"]
    for run in study.runs["run"]:
        mine = sub[sub["run"] == run]
        if mine.empty:
            notes.append(f"storage '{prop}': run {run} has no rows in {fname}")
            continue
        blank = mine[mine["value"].isna()]
        missing = [t for t in times if t not in set(mine["time"])]
        parts = []
        if missing:
            parts.append(f"no row at {tname} {_list(f'{t:g}' for t in missing)}")
        if not blank.empty:
            parts.append("blank value at " + _list(
                f"{tname} {t:g} (row {row})" for t, row in zip(blank["time"], blank["row"])))
        if parts:
            notes.append(f"storage '{prop}': run {run} has " + "; ".join(parts))
    return notes


def _value_at_time(sub: pd.DataFrame, at: float, opts: dict, tname: str):
    """Values at ``at`` per run: (values, flags, reasons, points) dicts by run."""
    res = interpolate_at(sub["run"], sub["time"], sub["value"], at).set_index("run")
    fits = None
    values, flags, reasons, points = {}, {}, {}, {}
    for run, row in res.iterrows():
        points[run] = int(row["n_points"])
        if row["status"] in ("measured", "interpolated"):
            values[run] = row["value"]
            if row["status"] == "interpolated":
                flags[run] = (f"interpolated (no measurement at {tname} {at:g})",
                              f"between {row['time_before']:g} and {row['time_after']:g}")
        elif row["status"] == "no_data":
            reasons[run] = "no measured values"
        else:
            side = ("after its last measurement" if row["status"] == "after_last"
                    else "before its first measurement")
            edge = row["last_time"] if row["status"] == "after_last" else row["first_time"]
            if not opts["extrapolate"]:
                reasons[run] = (f"{tname} {at:g} is {side} ({tname} {edge:g}); set "
                                "extrapolate = true to extend the fitted curve (flagged)")
                continue
            if fits is None:
                fits = fit_kinetics(sub["run"], sub["time"], sub["value"],
                                    order=opts["order"]).set_index("run")
            fit = fits.loc[run]
            if fit["n_points"] < opts["min_points"] or np.isnan(fit["rate"]):
                reasons[run] = (f"{tname} {at:g} is {side} and only "
                                f"{int(fit['n_points'])} point(s) to extend (min_points "
                                f"= {opts['min_points']})")
                continue
            values[run] = float(fitted_value(fit["start"], fit["rate"], at,
                                             order=opts["order"]))
            flags[run] = (f"extrapolated to {tname} {at:g}, {side}, by a "
                          f"{opts['order']}-order fit", f"measured to {tname} {edge:g}")
    return values, flags, reasons, points


def _check_positive(sub: pd.DataFrame, fname: str, r: Response) -> None:
    bad = sub[sub["value"] <= 0]
    if not bad.empty:
        row = bad.iloc[0]
        raise DataError(f"{where(fname, int(row['row']), 'value')}response '{r.name}' "
                        f"uses a first-order (log-linear) fit, which needs values above 0, "
                        f"found {row['value']:g}: use order = 'zero' or check the value")


def _derive_storage(study, r, opts, sec, fname, sub):
    tname = sec["time"]
    runs = list(study.runs["run"])
    kind = opts["kind"]
    if kind in TEMPERATURE_KINDS:
        if opts["order"] == "first":
            _check_positive(sub, fname, r)
        table, notes = derive_kinetic(study, r, opts, sec, fname, sub)
        pieces, piece_notes = _storage_pieces(r, kind, sub, tname)
        table["pieces"] = table["run"].map(pieces).astype(object).fillna("")
        return table, notes + piece_notes
    sub = rows_at_temperature(study, sub, opts, fname, r, sec["temperature"] is not None)
    values, flags, reasons, points, se, r2 = {}, {}, {}, {}, {}, {}
    notes = []
    if kind == "value_at":
        if opts["extrapolate"] and opts["order"] == "first":
            _check_positive(sub, fname, r)
        values, flags, reasons, points = _value_at_time(sub, opts["at"], opts, tname)
    elif kind == "change":
        if opts["extrapolate"] and opts["order"] == "first":
            _check_positive(sub, fname, r)
        t0 = opts.get("from", float(sub["time"].min()))
        v1, f1, r1, points = _value_at_time(sub, opts["at"], opts, tname)
        v0, f0, r0, _ = _value_at_time(sub, t0, opts, tname)
        for run in points:
            if run in r0 or run in r1:
                reasons[run] = "; ".join(x for x in (r0.get(run), r1.get(run)) if x)
                continue
            if opts["relative"]:
                if v0[run] == 0:
                    reasons[run] = f"its value at {tname} {t0:g} is 0, so no relative change"
                    continue
                values[run] = 100.0 * (v1[run] - v0[run]) / v0[run]
            else:
                values[run] = v1[run] - v0[run]
            for fl in (f0.get(run), f1.get(run)):
                if fl:  # the end point needing the stronger flag wins
                    if run not in flags or fl[0].startswith("extrapolated"):
                        flags[run] = fl
    else:
        if opts["order"] == "first":
            _check_positive(sub, fname, r)
        fits = fit_kinetics(sub["run"], sub["time"], sub["value"],
                            order=opts["order"]).set_index("run")
        for run, fit in fits.iterrows():
            points[run] = int(fit["n_points"])
            if fit["n_points"] < opts["min_points"] or np.isnan(fit["rate"]):
                reasons[run] = (f"only {int(fit['n_points'])} measured point(s), "
                                f"{opts['min_points']} needed for a fitted line "
                                "(min_points)")
                continue
            r2[run] = fit["r_squared"]
            values[run], se[run] = fit["rate"], fit["rate_se"]
        if r2:
            vals = np.array([v for v in r2.values() if not np.isnan(v)])
            scale = " (on the log scale)" if opts["order"] == "first" else ""
            if len(vals):
                notes.append(f"response '{r.name}': {opts['order']}-order fit quality "
                             f"R-squared{scale} {vals.min():.3f} to {vals.max():.3f} "
                             f"(median {np.median(vals):.3f}) over {len(vals)} runs")
            poor = [run for run, v in r2.items() if v < _POOR_FIT_R2]
            if poor:
                notes.append(f"response '{r.name}': poor {opts['order']}-order fit "
                             f"(R-squared below {_POOR_FIT_R2}) for run(s) {_list(poor)}: "
                             "look at the curves; the other order may fit better, or "
                             "the property may hardly change")
    for run in runs:
        if run not in points and run not in reasons:
            reasons[run] = "no rows in the storage table"
    flags = {run: fl for run, fl in flags.items() if run not in reasons}
    pieces, piece_notes = _storage_pieces(r, kind, sub, tname)
    return _table(runs, values, flags, reasons, points, se, r2, pieces), \
        _flag_notes(r.name, flags) + notes + piece_notes


def _storage_pieces(r, kind: str, sub: pd.DataFrame, tname: str) -> tuple[dict, list[str]]:
    """Per run, the pieces at each time and their SD (text), and what was done with them."""
    spread = piece_spread(sub["run"], sub["time"], sub["value"],
                          sub["temperature"] if "temperature" in sub else None)
    if not (spread["pieces"] > 1).any():
        return {}, []
    text = {}
    for run, part in spread.groupby("run", sort=False):
        lo, hi = int(part["pieces"].min()), int(part["pieces"].max())
        each = f"{lo}" if lo == hi else f"{lo} to {hi}"
        sds = part["sd"].dropna()
        sd = ("" if sds.empty else f", SD {sds.min():.3g}" if len(sds) == 1 or
              sds.min() == sds.max() else f", SD {sds.min():.3g} to {sds.max():.3g}")
        text[run] = f"{each} per {tname}{sd}"
    several = spread[spread["pieces"] > 1]
    head = (f"response '{r.name}': {int(several['pieces'].sum())} pieces at "
            f"{len(several)} run-{tname} pairs")
    if kind in ("value_at", "change"):
        return text, [head + ": each time's value is the mean of its pieces"]
    return text, [head + f": the {kind} line is fitted to every piece, and its "
                  "standard error uses the pieces' scatter around each run's line (not "
                  f"the scatter of pieces at one {tname}, which understates it when the "
                  "pieces of one time share a pack history)"]


# --------------------------------------------------------------------------
# Panel responses


def _panel_checks(study, sub, attr, sec, fname) -> list[str]:
    notes = []
    blank = sub[sub["score"].isna()]
    for run, g in blank.groupby("run", sort=False):
        notes.append(f"panel '{attr}': run {run} has {len(g)} blank score(s) (row(s) "
                     f"{_list(g['row'])}), left out")
    scored = sub.dropna(subset=["score"])
    pairs = scored[["run", "assessor"]].drop_duplicates()
    nr, na = scored["run"].nunique(), scored["assessor"].nunique()
    if len(pairs) < nr * na:
        notes.append(f"panel '{attr}': not every assessor scored every run ({len(pairs)} "
                     f"of {nr * na} run-assessor pairs): plain run means then depend on "
                     "who tasted what; derive = 'panel_adjusted' corrects for it")
    agree = assessor_agreement(scored["run"], scored["assessor"], scored["score"])
    for _, a in agree.iterrows():
        if a["n_runs"] >= 3 and a["spread"] == 0:
            notes.append(f"panel '{attr}': assessor {a['assessor']} gave the same score "
                         f"to all {a['n_runs']} runs they scored: check their scoring")
        elif not np.isnan(a["correlation"]) and a["correlation"] < sec["min_agreement"]:
            notes.append(f"panel '{attr}': assessor {a['assessor']} disagrees with the "
                         f"rest of the panel (correlation {a['correlation']:.2f} with the "
                         f"others' run means over {a['n_runs']} runs, below "
                         f"{sec['min_agreement']:g}): check their scores or training")
    return notes


def _category_values(scored: pd.DataFrame, opts: dict, info: dict) -> pd.DataFrame:
    """Each run's observed summary of a category attribute: its mean category, or
    the percent of its scores in the top (bottom) ``boxes`` categories, with the
    standard error of a mean (sd / sqrt(n)) or of a proportion (sqrt(p(1-p)/n))."""
    lo, hi = info["scale"]
    score = scored["score"].to_numpy(float)
    if opts["summary"] == "top_box":
        score = 100.0 * (score >= hi - opts["boxes"] + 1)
    elif opts["summary"] == "bottom_box":
        score = 100.0 * (score <= lo + opts["boxes"] - 1)
    res = run_means(scored["run"].to_numpy(object), score).set_index("run")
    if opts["summary"] != "expected":
        p = res["mean"] / 100.0
        res["se"] = 100.0 * np.sqrt(p * (1 - p) / res["n_scores"])
    return res


def _derive_panel(study, r, opts, sec, fname, sub):
    runs = list(study.runs["run"])
    scored = sub.dropna(subset=["score"])
    values, flags, reasons, points, se = {}, {}, {}, {}, {}
    if opts["kind"] == "panel_mean":
        res = run_means(scored["run"], scored["score"]).set_index("run")
        col = "mean"
    elif opts["kind"] == "panel_category":
        res = _category_values(scored, opts, attribute_info(sec, opts["attribute"]))
        col = "mean"
    else:
        try:
            res = adjusted_means(scored["run"], scored["assessor"],
                                 scored["score"]).set_index("run")
        except DataError as exc:  # the panel functions know no file: name it here
            raise DataError(f"{fname}: response '{r.name}': {exc}") from None
        col = "adjusted_mean"
    notes = []
    for run, row in res.iterrows():
        points[run] = int(row["n_scores"])
        if row["n_scores"] < opts["min_points"]:
            reasons[run] = (f"only {int(row['n_scores'])} score(s), {opts['min_points']} "
                            "needed (min_points)")
            continue
        values[run], se[run] = row[col], row["se"]
    if opts["kind"] == "panel_adjusted" and len(res) and res["df"].iloc[0] == 0:
        notes.append(f"response '{r.name}': no residual degrees of freedom in the run + "
                     "assessor model, so no standard errors")
    for run in runs:
        if run not in points:
            reasons[run] = f"no '{opts['attribute']}' scores in the panel table"
    ses = np.array([v for v in se.values() if not np.isnan(v)])
    if len(ses):
        span = (f"{ses.min():.3g}" if f"{ses.min():.3g}" == f"{ses.max():.3g}"
                else f"{ses.min():.3g} to {ses.max():.3g}")
        notes.append(f"response '{r.name}': standard error of each run's value {span}")
    return _table(runs, values, flags, reasons, points, se, {}), notes


# --------------------------------------------------------------------------
# Public entry points


def _derive_all(study: Study, storage, panel, only: str | None = None):
    derived = [r for r in study.responses if r.is_derived and (only is None or
                                                                r.name == only)]
    if study.runs is None:
        raise StudyError(f"study '{study.name}' has no runs loaded yet")
    opts = {r.name: _options(study, r) for r in derived}
    wanted = {o["section"] for o in opts.values()}
    tables = _tables(study, storage, panel, wanted)
    results, notes, seen, reach = {}, [], set(), {}
    for r in derived:
        o = opts[r.name]
        sec, fname, frame = tables[o["section"]]
        if o["section"] == "storage":
            sub = _subset(frame, "property", o["property"], fname, r)
            if ("storage", o["property"]) not in seen:
                seen.add(("storage", o["property"]))
                notes += _storage_gaps(study, sub, o["property"], sec, fname)
            table, extra = _derive_storage(study, r, o, sec, fname, sub)
            if o["kind"] in TIME_KINDS:
                values = table.set_index("run")["value"].dropna().to_dict()
                reach[r.name] = storage_reach(r.name, sub, o, sec, values)
        else:
            if sec.get("layout") == "wide" and o["attribute"] not in set(frame["attribute"]):
                found = sorted(set(frame["attribute"]))
                raise DataError(f"{fname}: no column '{o['attribute']}' in the wide panel "
                                f"table for response '{r.name}': its attribute columns are "
                                f"{found}{did_you_mean(o['attribute'], found)}")
            sub = _subset(frame, "attribute", o["attribute"], fname, r)
            if ("panel", o["attribute"]) not in seen:
                seen.add(("panel", o["attribute"]))
                notes += _panel_checks(study, sub, o["attribute"], sec, fname)
            table, extra = _derive_panel(study, r, o, sec, fname, sub)
        kept = int(table["value"].notna().sum())
        if kept == 0:
            why = table["flag"].iloc[0] if len(table) else "no runs"
            raise DataError(f"{fname}: response '{r.name}' could not be derived for any "
                            f"run (run {table['run'].iloc[0]}: {why}): check the table "
                            "and the response's keys")
        notes.append(f"response '{r.name}' is derived ({kept} of {len(table)} runs): "
                     f"{describe_derivation(study, r)}")
        for _, row in table.iterrows():
            if row["flag"].startswith("left out"):
                notes.append(f"response '{r.name}': run {row['run']} {row['flag']}")
        notes += extra
        results[r.name] = table
    return results, list(dict.fromkeys(notes)), reach  # each note once, first kept


def add_derived_responses(study: Study, *, storage: RawTable | None = None,
                          panel: RawTable | None = None) -> Study:
    """Compute every derived response and merge it into ``study.runs`` by run id.

    ``storage`` and ``panel`` may carry already-read tables (uploads);
    otherwise the files named in ``[storage]`` and ``[panel]`` are read.
    Returns a copy of the study with one float column per derived response
    (NaN for runs left out) and the derivation notes appended to ``notes``.
    """
    if not any(r.is_derived for r in study.responses):
        notes = [f"[{s}] is declared but no response derives from it"
                 for s in ("storage", "panel") if study.spec.get(s) is not None]
        return replace(study, notes=study.notes + tuple(notes)) if notes else study
    results, notes, reach = _derive_all(study, storage, panel)
    runs = study.runs.copy()
    for r in study.responses:
        if r.name not in results:
            continue
        values = results[r.name].set_index("run")["value"]
        runs[r.name] = runs["run"].map(values).astype(float)
        present = runs[r.name].dropna()
        if r.transform == "log" and (present <= 0).any() or \
                r.transform == "sqrt" and (present < 0).any():
            raise DataError(f"response '{r.name}': transform = '{r.transform}' needs "
                            "positive derived values: remove the transform or check "
                            "the derivation")
    return replace(study, runs=runs, notes=study.notes + tuple(notes),
                   reach={**study.reach, **reach})


def derivation_table(study: Study, name: str, *, storage: RawTable | None = None,
                     panel: RawTable | None = None) -> pd.DataFrame:
    """Per-run detail of one derived response, for reports and the workbench.

    Returns
    -------
    DataFrame
        ``DERIVED_COLUMNS``: ``run``, ``value`` (NaN when left out),
        ``points`` (measured points or scores used), ``se`` (standard error
        of the value where there is one; NaN otherwise), ``r_squared`` (fit
        quality of the fitted kinds), ``flag`` (empty, or why the run was
        interpolated, extrapolated, flagged or left out), ``lower`` and
        ``upper`` (the interval of the temperature-aware storage kinds, see
        ``derive.shelf``; NaN otherwise) and ``per_temperature`` (storage
        times at each temperature behind those fits) and ``pieces`` (storage:
        the pieces at each time and their SD, such as "3 per week, SD 0.2 to
        0.5"; empty with one value a time).
    """
    r = study.response(name)
    if not r.is_derived:
        raise StudyError(f"response '{name}' is read from the runs table, not derived")
    results, _, _ = _derive_all(study, storage, panel, only=name)
    return results[name]


def arrhenius_table(study: Study, name: str, *,
                    storage: RawTable | None = None) -> pd.DataFrame:
    """ln k against 1000 / T for each run of a temperature-aware storage response.

    The tidy table behind the Arrhenius chart of the workbench and the report;
    columns ``shelf.ARRHENIUS_COLUMNS`` (see ``shelf.arrhenius_points``).
    """
    r = study.response(name)
    o = _options(study, r) if r.is_derived else {}
    if o.get("kind") not in TEMPERATURE_KINDS:
        raise StudyError(f"response '{name}' is not fitted across storage temperatures "
                         f"(derive = one of {', '.join(TEMPERATURE_KINDS)})")
    sec, fname, frame = _tables(study, storage, None, {"storage"})["storage"]
    return arrhenius_points(_subset(frame, "property", o["property"], fname, r), o,
                            confidence=study.confidence)


def kinetic_tables(study: Study) -> dict:
    """Every response fitted across storage temperatures: name -> {"table":
    its derivation table, "points": its Arrhenius table}, in study order (none
    when the storage table has no temperature column: one temperature, no
    Arrhenius fit to show)."""
    sec = _section(study, "storage")
    if sec is None or sec["temperature"] is None:
        return {}
    return {r.name: {"table": derivation_table(study, r.name),
                     "points": arrhenius_table(study, r.name)}
            for r in study.responses if r.extra.get("derive") in TEMPERATURE_KINDS}


def describe_derivation(study: Study, response: Response) -> str:
    """One sentence saying how a derived response is computed."""
    o = _options(study, response)
    if not o:
        return "read from the runs table"
    if o["section"] == "storage":
        sec = _section(study, "storage")
        t, unit, src = sec["time"], sec["time_unit"], sec["data"].name
        p = o["property"]
        order = ("zero-order (straight-line)" if o["order"] == "zero"
                 else "first-order (log-linear)")
        ext = (f"; beyond the measured times extended by a {order} fit per run, flagged"
               if o.get("extrapolate") else "; never extrapolated")
        if o["kind"] == "value_at":
            return (f"{p} at {t} {o['at']:g} from {src}, as measured or by straight-line "
                    f"interpolation between the nearest measured {unit}{ext}")
        if o["kind"] == "change":
            base = f"{t} {o['from']:g}" if "from" in o else f"the first {t} in the table"
            how = ("relative change in percent of the starting value" if o["relative"]
                   else "absolute change")
            return (f"{how} in {p} from {base} to {t} {o['at']:g}, from {src} "
                    f"(interpolated between measured {unit}{ext})")
        per = (f"in {p} units per {t}" if o["order"] == "zero"
               else f"per {t}, value = start x exp(rate x {t})")
        if o["kind"] in TEMPERATURE_KINDS:
            return describe_kinetic(o, sec)
        return (f"rate of change of {p} ({per}) from a {order} least-squares fit of "
                    f"each run's {p} on {t} in {src}, at least {o['min_points']} points; "
                    "R-squared gives the fit quality")
    sec = _section(study, "panel")
    a, src = o["attribute"], sec["data"].name
    lo, hi = attribute_info(sec, a)["scale"]
    if o["kind"] == "panel_category":
        return describe_category(o, a, src, lo, hi)
    if o["kind"] == "panel_mean":
        return (f"mean {a} score per run over the assessors who scored it (scale {lo:g} "
                f"to {hi:g}) from {src}, with its standard error")
    return (f"assessor-adjusted mean {a} score per run (scale {lo:g} to {hi:g}) from "
            f"{src}: least-squares means of an additive run + assessor model, averaged "
            "over all assessors, so a generous or strict assessor does not shift the "
            "runs they scored; with standard errors")
