"""Tables behind the workbench's pictures: runs with marks, desirability
curves, interaction means, contour grids of predictions and D, chances.

Every function returns a tidy DataFrame with fixed, documented columns, so a
front end (or a report) only draws them. Grids are evaluated in one batch:
an (n*n, k) array of coded settings in, one prediction per row out.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .coding import code_values, to_coded, to_natural
from .desirability import combine_desirability, desirability, limits
from .errors import StudyError

__all__ = ["OUTSIDE_TOL", "runs_table", "desirability_curves", "interaction_means",
           "contour_grid", "settings_grid", "settings_chances"]

# A run counts as outside the tested box when a coded setting passes +-1 by more
# than this (settings typed with a few decimals land a hair outside).
OUTSIDE_TOL = 1e-6


def runs_table(study, fit=None, *, unusual: float = 3.0) -> pd.DataFrame:
    """The runs with natural and coded settings and a plain-words mark per run.

    Parameters
    ----------
    study : Study
        With runs loaded.
    fit : StudyFit, optional
        When given, runs whose externally studentized residual for a response
        exceeds ``unusual`` in size are marked (3 is a common practice cut-off).

    Returns
    -------
    pandas.DataFrame
        Indexed by spreadsheet row. Columns: ``run``; one column per factor
        (natural settings); ``<factor> coded`` per factor; one per response;
        ``outside`` (True when any coded setting lies beyond -1..+1);
        ``marks`` (text: outside the tested box, blank responses, unusual
        results; empty when nothing to say).
    """
    runs = study.runs
    if runs is None:
        raise StudyError(f"study '{study.name}' has no runs loaded yet")
    coded = to_coded(study.factors, runs)
    out = pd.DataFrame({"run": runs["run"].to_numpy()}, index=runs.index)
    for j, f in enumerate(study.factors):
        out[f.name] = runs[f.name].to_numpy()
    for j, f in enumerate(study.factors):
        out[f"{f.name} coded"] = coded[:, j]
    for r in study.responses:
        if r.name in runs:
            out[r.name] = runs[r.name].to_numpy(float)
    beyond = np.abs(coded) > 1 + OUTSIDE_TOL
    out["outside"] = beyond.any(axis=1)
    marks: list[list[str]] = [[] for _ in range(len(out))]
    for j, f in enumerate(study.factors):
        for i in np.flatnonzero(beyond[:, j]):
            marks[i].append(f"outside the tested box in {f.name} "
                            f"(coded {coded[i, j]:+.2f})")
    for r in study.responses:
        if r.name in runs:
            for i in np.flatnonzero(np.isnan(runs[r.name].to_numpy(float))):
                marks[i].append(f"{r.name} blank")
    if fit is not None:
        position = {row: i for i, row in enumerate(out.index)}
        run_ids = {run: i for i, run in enumerate(out["run"])}
        for name, model in fit.models.items():
            t = _studentized(model)
            if t is None:
                continue
            for key, value in t.items():
                i = position.get(key, run_ids.get(str(key)))
                if i is not None and np.isfinite(value) and abs(value) > unusual:
                    marks[i].append(f"unusual {name} (studentized residual {value:+.1f})")
    out["marks"] = ["; ".join(m) for m in marks]
    return out


def _studentized(model) -> pd.Series | None:
    """A model's externally studentized residuals keyed by run id, if it offers them."""
    report = model.report()
    diag = report.get("diagnostics") if isinstance(report, dict) else None
    if diag is None:
        return None
    table = pd.DataFrame(diag)
    for column in ("studentized", "studentized_residual", "external_studentized",
                   "rstudent"):
        if column in table:
            key = table["run"].astype(str) if "run" in table else table.index
            return pd.Series(table[column].to_numpy(float), index=key)
    return None


def desirability_curves(study, *, n: int = 201, margin: float = 0.25) -> pd.DataFrame:
    """Each active goal's desirability over its limits and a margin either side.

    Returns
    -------
    pandas.DataFrame
        Columns ``name`` (response or factor), ``value`` (natural units) and
        ``desirability`` (0..1), ``n`` rows per active goal, values from
        ``lower - margin*(upper - lower)`` to ``upper + margin*(upper - lower)``.
    """
    frames = []
    for item in (*study.responses, *study.factors):
        goal = item.goal
        if not goal.active:
            continue
        width = goal.upper - goal.lower
        values = np.linspace(goal.lower - margin * width, goal.upper + margin * width, n)
        # Make the kinks (limits and target) exact points of the curve.
        kinks = [goal.lower, goal.upper] + ([goal.target] if goal.kind == "target" else [])
        values = np.unique(np.concatenate([values, kinks]))
        frames.append(pd.DataFrame({"name": item.name, "value": values,
                                    "desirability": desirability(values, goal)}))
    if not frames:
        return pd.DataFrame(columns=["name", "value", "desirability"])
    return pd.concat(frames, ignore_index=True)


def interaction_means(study, response: str, a: str, b: str) -> pd.DataFrame:
    """Mean of a response at each low/high combination of two factors (measured runs).

    Runs at the centre of either factor (coded 0) are left out; runs outside
    -1..+1 are counted at the nearer end. Blank results are skipped.

    Returns
    -------
    pandas.DataFrame
        Four rows (fewer when a combination was not run). Columns ``a_level``
        and ``b_level`` (natural setting or level name at the low/high end),
        ``a_coded`` and ``b_coded`` (-1 or +1), ``mean`` and ``runs``.
    """
    if a == b:
        raise StudyError(f"an interaction plot needs two different factors, found "
                         f"'{a}' twice: choose another factor")
    fa, fb = study.factor(a), study.factor(b)
    runs = study.runs
    y = runs[study.response(response).name].to_numpy(float)
    ca = code_values(fa, runs[a].to_numpy())
    cb = code_values(fb, runs[b].to_numpy())
    keep = (np.abs(ca) > 1e-9) & (np.abs(cb) > 1e-9) & ~np.isnan(y)
    sa, sb = np.sign(ca[keep]), np.sign(cb[keep])
    frame = pd.DataFrame({"a_coded": sa, "b_coded": sb, "y": y[keep]})
    cells = frame.groupby(["a_coded", "b_coded"])["y"].agg(["mean", "size"]).reset_index()
    cells = cells.rename(columns={"size": "runs"})

    def end(factor, coded):
        return factor.levels[0 if coded < 0 else 1] if factor.is_categorical else \
            (factor.low if coded < 0 else factor.high)

    cells.insert(0, "a_level", [end(fa, c) for c in cells["a_coded"]])
    cells.insert(1, "b_level", [end(fb, c) for c in cells["b_coded"]])
    return cells[["a_level", "b_level", "a_coded", "b_coded", "mean", "runs"]]
