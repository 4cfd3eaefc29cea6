"""Sensory panels: per-run scores from a panel of assessors.

The panel table is in long form, one score a row: ``run``, ``assessor``,
``attribute``, ``score`` (and optionally ``session`` when an assessor tasted a
run more than once). Blank scores are missing and ignored.

Run means are plain averages. Assessor-adjusted run means come from the
additive least-squares model ``score = overall + run effect + assessor effect
+ error``: an assessor who scores everything a point high lifts only their own
effect, not the runs they happened to taste, which matters when not every
assessor tastes every run (incomplete blocks). The adjusted mean of a run is
the model's prediction for that run averaged over all assessors with equal
weight (a least-squares mean, common practice).
"""
from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from ..cautions import PANEL_CAUTION
from ..errors import DataError, where
from ..study.intake import RawTable, cell_text, parse_number

__all__ = ["PANEL_CAUTION", "read_panel", "run_means", "adjusted_means",
           "assessor_agreement"]


def read_panel(table: RawTable, *, scale: tuple[float, float],
               run_ids: Iterable[str] | None = None) -> pd.DataFrame:
    """Check a long-form panel table and return it tidy.

    Parameters
    ----------
    table : RawTable
        As read by ``read_table``; needs columns ``run``, ``assessor``,
        ``attribute`` and ``score``; an optional ``session`` column separates
        repeat tastings.
    scale : (low, high)
        The score scale; a score outside it is an error.
    run_ids : iterable of str, optional
        The study's run ids; a score for any other run is an error.

    Returns
    -------
    DataFrame
        Columns ``row``, ``run``, ``assessor``, ``attribute``, ``session``
        ("" without a session column), ``score`` (NaN where blank).
    """
    fname = table.source.name
    columns = {name: i for i, name in enumerate(table.header) if name}
    needed = ("run", "assessor", "attribute", "score")
    for name in needed:
        if name not in columns:
            raise DataError(f"{fname}: no column '{name}' in the panel table: expected "
                            f"columns {list(needed)}, found "
                            f"{[h for h in table.header if h]}")
    lo, hi = scale
    known = set(run_ids) if run_ids is not None else None
    out = {k: [] for k in ("row", "run", "assessor", "attribute", "session", "score")}
    first_seen: dict[tuple, int] = {}
    for row, cells in table.rows:
        def cell(name):
            i = columns.get(name)
            return cells[i] if i is not None and i < len(cells) else None

        ids = {}
        for name in ("run", "assessor", "attribute"):
            if cell(name) is None:
                raise DataError(f"{where(fname, row, name)}blank {name}: every score "
                                "needs its run, assessor and attribute")
            ids[name] = cell_text(cell(name))
        if known is not None and ids["run"] not in known:
            raise DataError(f"{where(fname, row, 'run')}run '{ids['run']}' is not in "
                            "the runs table: check the id, or add the run to the runs table")
        session = "" if cell("session") is None else cell_text(cell("session"))
        score = parse_number(cell("score"), decimal_comma=table.decimal_comma,
                             location=where(fname, row, "score"))
        if not np.isnan(score) and not lo <= score <= hi:
            raise DataError(f"{where(fname, row, 'score')}score {score:g} is outside "
                            f"the scale {lo:g} to {hi:g}: correct the score, or the "
                            "scale = [low, high] in [panel]")
        key = (ids["run"], ids["assessor"], ids["attribute"], session)
        if key in first_seen:
            also = " and session" if "session" in columns else ""
            raise DataError(f"{where(fname, row, 'assessor')}assessor "
                            f"'{ids['assessor']}' scored '{ids['attribute']}' of run "
                            f"'{ids['run']}' again (first at row {first_seen[key]}): "
                            f"keep one score per run, assessor, attribute{also}, or add "
                            "a 'session' column for repeat tastings")
        first_seen[key] = row
        out["row"].append(row)
        for name in ("run", "assessor", "attribute"):
            out[name].append(ids[name])
        out["session"].append(session)
        out["score"].append(score)
    return pd.DataFrame({"row": np.array(out["row"], int), "run": out["run"],
                         "assessor": out["assessor"], "attribute": out["attribute"],
                         "session": out["session"],
                         "score": np.array(out["score"], float)})


def _clean(run, assessor, score):
    run = np.asarray(run, dtype=object)
    assessor = np.asarray(assessor, dtype=object)
    score = np.asarray(score, float)
    keep = ~np.isnan(score)
    return run[keep], assessor[keep], score[keep]


def run_means(run, score) -> pd.DataFrame:
    """Plain mean score per run (blank scores ignored).

    Returns
    -------
    DataFrame
        One row per run (first-seen order): ``run``, ``n_scores``, ``mean``,
        ``sd`` (NaN with one score), ``se`` = sd / sqrt(n).
    """
    run, _, score = _clean(run, np.zeros(len(run)), score)
    frame = pd.DataFrame({"run": run, "score": score})
    g = frame.groupby("run", sort=False)["score"]
    out = pd.DataFrame({"n_scores": g.size(), "mean": g.mean(), "sd": g.std(ddof=1)})
    out["se"] = out["sd"] / np.sqrt(out["n_scores"])
    return out.reset_index()


def _components(run, assessor) -> list[set]:
    # Runs and assessors linked by a score; more than one group means run
    # effects of different groups cannot be compared (a disconnected design).
    parent: dict = {}

    def find(x):
        while parent.setdefault(x, x) != x:
            parent[x] = parent[parent[x]]
            x = parent[x]
        return x

    for r, a in zip(run, assessor):
        parent[find(("r", r))] = find(("a", a))
    groups: dict = {}
    for node in list(parent):
        groups.setdefault(find(node), set()).add(node)
    return list(groups.values())


def adjusted_means(run, assessor, score) -> pd.DataFrame:
    """Assessor-adjusted run means from the additive run + assessor model.

    Fits ``score ~ run + assessor`` (both categorical) by least squares and
    returns each run's least-squares mean: the fitted score for that run
    averaged over all assessors with equal weight, with its standard error
    from the residual variance. Handles incomplete blocks; raises
    ``DataError`` when the assessors split into groups that tasted no run in
    common (then runs of different groups cannot be compared).

    Returns
    -------
    DataFrame
        One row per run (first-seen order): ``run``, ``n_scores``, ``mean``
        (plain), ``adjusted_mean``, ``se`` (NaN without residual degrees of
        freedom), ``df`` (residual degrees of freedom).
    """
    run, assessor, score = _clean(run, assessor, score)
    if len(score) == 0:
        raise DataError("no scores to average: the panel table has no scores for this "
                        "attribute")
    groups = _components(run, assessor)
    if len(groups) > 1:
        parts = []
        for grp in groups[:3]:
            runs = sorted(str(x[1]) for x in grp if x[0] == "r")
            parts.append("runs " + ", ".join(runs[:4]) + (", ..." if len(runs) > 4 else ""))
        raise DataError("the panel splits into groups of assessors who tasted no run in "
                        f"common ({'; '.join(parts)}): adjusted means cannot compare "
                        "runs across groups; link the groups with shared runs or use "
                        "derive = 'panel_mean'")
    rcodes, rlabels = pd.factorize(pd.Series(run, dtype=object), sort=False)
    acodes, alabels = pd.factorize(pd.Series(assessor, dtype=object), sort=False)
    n, nr, na = len(score), len(rlabels), len(alabels)
    # Treatment coding: intercept, runs 2..nr, assessors 2..na.
    p = nr + na - 1
    x = np.zeros((n, p))
    x[:, 0] = 1.0
    rows = np.arange(n)
    ri = rcodes > 0
    x[rows[ri], rcodes[ri]] = 1.0
    ai = acodes > 0
    x[rows[ai], nr - 1 + acodes[ai]] = 1.0
    beta, _, rank, _ = np.linalg.lstsq(x, score, rcond=None)
    if rank < p:  # cannot happen for a connected design; kept as a guard
        raise DataError("the panel design does not separate runs from assessors: "
                        "use derive = 'panel_mean'")
    resid = score - x @ beta
    df = n - p
    xtx_inv = np.linalg.inv(x.T @ x)
    # L: one row per run = intercept + that run + the average assessor.
    lmat = np.zeros((nr, p))
    lmat[:, 0] = 1.0
    lmat[np.arange(1, nr), np.arange(1, nr)] = 1.0
    lmat[:, nr:] = 1.0 / na
    est = lmat @ beta
    if df > 0:
        s2 = float(resid @ resid) / df
        se = np.sqrt(s2 * np.einsum("ij,jk,ik->i", lmat, xtx_inv, lmat))
    else:
        se = np.full(nr, np.nan)
    counts = np.bincount(rcodes, minlength=nr)
    means = np.bincount(rcodes, score, nr) / counts
    return pd.DataFrame({"run": np.asarray(rlabels, dtype=object), "n_scores": counts,
                         "mean": means, "adjusted_mean": est, "se": se,
                         "df": np.full(nr, df, dtype=int)})


def assessor_agreement(run, assessor, score) -> pd.DataFrame:
    """How each assessor's scores compare with the rest of the panel.

    For each assessor, the rest of the panel's mean score of each run they
    tasted (leaving their own scores out), then: ``offset`` = their mean score
    minus the rest's mean on the same runs (positive: a generous assessor), and
    ``correlation`` = Pearson correlation between their run scores and the
    rest's run means (NaN with fewer than 3 runs or no spread).

    Returns
    -------
    DataFrame
        One row per assessor (first-seen order): ``assessor``, ``n_scores``,
        ``n_runs``, ``offset``, ``correlation``, ``spread`` (their standard
        deviation; 0 means the same score for every run).
    """
    run, assessor, score = _clean(run, assessor, score)
    frame = pd.DataFrame({"run": run, "assessor": assessor, "score": score})
    per = frame.groupby(["assessor", "run"], sort=False)["score"].agg(["sum", "count"])
    tot = frame.groupby("run", sort=False)["score"].agg(["sum", "count"])
    per = per.reset_index()
    rest_n = tot.loc[per["run"], "count"].to_numpy() - per["count"].to_numpy()
    with np.errstate(invalid="ignore", divide="ignore"):
        per["rest"] = np.where(rest_n > 0, (tot.loc[per["run"], "sum"].to_numpy()
                                            - per["sum"].to_numpy()) / rest_n, np.nan)
    per["own"] = per["sum"] / per["count"]
    out = []
    for name, g in per.groupby("assessor", sort=False):
        g = g.dropna(subset=["rest"])
        own, rest = g["own"].to_numpy(), g["rest"].to_numpy()
        corr = np.nan
        if len(g) >= 3 and own.std() > 0 and rest.std() > 0:
            corr = float(np.corrcoef(own, rest)[0, 1])
        scores = frame.loc[frame["assessor"] == name, "score"]
        out.append({"assessor": name, "n_scores": int(len(scores)),
                    "n_runs": int(per["assessor"].eq(name).sum()),
                    "offset": float((own - rest).mean()) if len(g) else np.nan,
                    "correlation": corr,
                    "spread": float(scores.std(ddof=0))})
    return pd.DataFrame(out, columns=["assessor", "n_scores", "n_runs", "offset",
                                      "correlation", "spread"])
