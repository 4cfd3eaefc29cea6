"""Derived responses recomputed from the raw storage and panel tables, independently.

Written out from the README's definitions and textbook formulas, with numpy,
scipy and pandas only:

- ``panel_mean``: the plain average score of each run;
- ``panel_adjusted``: least squares of score = level + run + assessor, each
  run's fitted score averaged over every assessor (the two-way additive model
  of an incomplete block design, Montgomery, Design and Analysis of
  Experiments, ch. 4, from memory);
- ``value_at`` (the mean of a run's packs at that time, else a straight line
  between the nearest times before and after), ``change`` (the difference of
  two such values, or its percent of the first);
- ``rate``, ``time_to_limit`` and ``shelf_life`` at one storage temperature:
  ordinary least squares of the value (zero order) or of its logarithm (first
  order) on time over every pack; the time the fitted line reaches the limit;
  for ``estimate = "bound"`` the time its one-sided confidence bound reaches it,
  mean + t(conf, n - 2) s sqrt(1/n + (t - tbar)^2 / Sxx) (ICH Q1E, Evaluation
  of stability data, 2003; the confidence band of a regression line).

- at several storage temperatures, one least-squares fit per run of
  value = v0 + k(T) t (zero order; first order on the log of the value) with
  k(T) = k_ref exp(-Ea / R (1/T - 1/T_ref)) (the Arrhenius law; R the gas
  constant, CODATA 2018), by scipy's least_squares: the activation energy,
  Q10 = exp(10 Ea / (R T (T + 10))), the rate at a temperature and the time
  the fitted mean reaches the limit (``estimate = "mean"``). The confidence
  bound across temperatures (the delta method) is left to
  tests/derive/test_shelf.py.
"""
from __future__ import annotations

import io
import math

import numpy as np
import pandas as pd
from scipy import optimize, stats

__all__ = ["check_derived", "panel_long", "check_panel"]

_SIMPLE = ("panel_mean", "panel_adjusted", "panel_category", "value_at", "change", "rate", "time_to_limit",
           "shelf_life")
_ARRHENIUS = ("activation_energy", "q10", "rate_at", "shelf_life", "time_to_limit")
R_GAS = 8.314462618  # J/(mol K), CODATA 2018 (exact)


def check_derived(generated, study, outcome) -> None:
    """Each derived value per run equals the reference (relative 1e-6)."""
    storage = _table(generated, "storage.csv")
    panel = panel_long(generated)
    for r in generated.spec.get("responses", []):
        kind = r.get("derive")
        if kind not in _SIMPLE + _ARRHENIUS:
            continue
        if kind.startswith("panel"):
            if panel is None:
                continue
            want = _panel(panel[panel["attribute"] == r["attribute"]], kind, r)
        elif storage is None:
            continue
        elif "temp_c" in storage.columns:
            if kind not in _ARRHENIUS or r.get("estimate", "bound") == "bound" and \
                    kind == "shelf_life":
                continue
            part = storage[storage["property"] == r["property"]]
            want = {run: _arrhenius(g, r) for run, g in part.groupby("run")}
        else:
            part = storage[storage["property"] == r["property"]]
            want = {run: _storage(g, r, study.confidence) for run, g in part.groupby("run")}
        got = study.runs.groupby("run", sort=False)[r["name"]].first()
        for run, value in got.items():
            ref = want.get(run)
            if ref is None:
                continue
            same = (math.isnan(ref) and math.isnan(value)) or (
                math.isfinite(ref) and math.isfinite(value)
                and abs(value - ref) <= 1e-6 * (abs(ref) + 1e-3))
            if not same:
                outcome.fail("derive", "check", f"'{r['name']}' ({kind}) of run {run} is "
                             f"{value!r}, recomputed from the raw table: {ref!r}")


def panel_long(generated) -> pd.DataFrame | None:
    """The generated panel table as run, assessor, attribute, score (and session),
    undoing the study's column names and wide layout by hand."""
    table = _table(generated, "panel.csv")
    if table is None:
        return None
    spec = getattr(generated, "spec", {}).get("panel", {})
    back = {v: k for k, v in spec.get("columns", {}).items()}
    table = table.rename(columns=back)
    if spec.get("layout") == "wide":
        keys = [c for c in ("run", "assessor", "session") if c in table.columns]
        table = table.melt(id_vars=keys, var_name="attribute", value_name="score")
    return table


def _table(generated, name):
    data = generated.files.get(name)
    return None if data is None else pd.read_csv(io.BytesIO(data), keep_default_na=False)


def _panel(part: pd.DataFrame, kind: str, r: dict) -> dict:
    part = part.assign(score=part["score"].astype(float))
    if kind == "panel_category":  # the run's mean category, or percent in the boxes
        summary = r.get("summary", "expected")
        if summary == "top_box":  # the generated category scale is 1..5
            part = part.assign(score=100.0 * (part["score"] >= 6 - r.get("top", 1)))
        elif summary == "bottom_box":
            part = part.assign(score=100.0 * (part["score"] <= r.get("bottom", 1)))
        kind = "panel_mean"
    if kind == "panel_mean":
        return part.groupby("run")["score"].mean().to_dict()
    runs = sorted(part["run"].unique())
    judges = sorted(part["assessor"].unique())
    r_ix = {v: i for i, v in enumerate(runs)}
    a_ix = {v: i for i, v in enumerate(judges)}

    def design(run_idx, judge_idx):
        n = len(run_idx)
        M = np.zeros((n, 1 + len(runs) - 1 + len(judges) - 1))
        M[:, 0] = 1.0
        for row, (i, j) in enumerate(zip(run_idx, judge_idx)):
            if i > 0:
                M[row, i] = 1.0
            if j > 0:
                M[row, len(runs) - 1 + j] = 1.0
        return M

    M = design([r_ix[v] for v in part["run"]], [a_ix[v] for v in part["assessor"]])
    beta = np.linalg.lstsq(M, part["score"].to_numpy(), rcond=None)[0]
    out = {}
    for run in runs:
        full = design([r_ix[run]] * len(judges), range(len(judges)))
        out[run] = float((full @ beta).mean())
    return out


def _storage(g: pd.DataFrame, r: dict, confidence: float) -> float:
    t = g["week"].to_numpy(float)
    v = g["value"].to_numpy(float)
    kind, order = r["derive"], r.get("order", "zero")
    if kind in ("value_at", "change"):
        def at(time):
            means = g.groupby("week")["value"].mean()
            times = means.index.to_numpy(float)
            if time < times.min() or time > times.max():
                return math.nan
            return float(np.interp(time, times, means.to_numpy(float)))
        if kind == "value_at":
            return at(r["at"])
        start = at(r.get("from", t.min()))
        change = at(r["at"]) - start
        return 100 * change / start if r.get("relative") else change
    y = np.log(v) if order == "first" else v
    n = len(t)
    tbar = t.mean()
    sxx = float(((t - tbar) ** 2).sum())
    b = float(((t - tbar) * (y - y.mean())).sum() / sxx)
    a = float(y.mean() - b * tbar)
    if kind == "rate":
        return b
    limit = math.log(r["limit"]) if order == "first" else r["limit"]
    up = r["direction"] == "up"
    if kind == "shelf_life" and r.get("estimate", "bound") == "bound":
        s = math.sqrt(float(((y - a - b * t) ** 2).sum()) / (n - 2))
        q = stats.t.ppf(confidence, n - 2)

        def gap(time):  # the one-sided bound on the limit's side, minus the limit
            band = q * s * math.sqrt(1 / n + (time - tbar) ** 2 / sxx)
            mean = a + b * time
            return (mean + band - limit) if up else (limit - (mean - band))
        if gap(0.0) >= 0:
            return 0.0
        top = 10.0 * max(t.max(), 1.0)
        while gap(top) < 0:
            top *= 2
            if top > 1e7:
                return math.nan
        return float(optimize.brentq(gap, 0.0, top, xtol=1e-12, rtol=1e-12))
    if (a >= limit) if up else (a <= limit):
        return 0.0  # the fitted line starts at or past the limit
    if (b <= 0) if up else (b >= 0):
        return math.nan  # it moves away from the limit: never reaches it
    return (limit - a) / b


def _arrhenius(g: pd.DataFrame, r: dict) -> float:
    """One run's estimate from the one-step Arrhenius fit over every temperature."""
    t = g["week"].to_numpy(float)
    temp = pd.to_numeric(g["temp_c"], errors="coerce").to_numpy(float)
    v = g["value"].to_numpy(float)
    first = r.get("order", "zero") == "first"
    y = np.log(v) if first else v
    temps = sorted(set(temp[np.isfinite(temp)].tolist()))
    ref = temps[len(temps) // 2] + 273.15
    kelvin = np.where(np.isfinite(temp), temp, temps[0]) + 273.15  # time 0: any T

    def model(p):
        v0, k_ref, ea = p
        return v0 + k_ref * np.exp(-ea / R_GAS * (1 / kelvin - 1 / ref)) * t

    slope = np.polyfit(t[(temp == temps[len(temps) // 2]) | (t == 0)],
                       y[(temp == temps[len(temps) // 2]) | (t == 0)], 1)[0]
    fit = optimize.least_squares(lambda p: model(p) - y, [y[t == 0].mean(), slope, 70e3],
                                 x_scale="jac", ftol=1e-15, xtol=1e-15, gtol=1e-15,
                                 max_nfev=20000)
    v0, k_ref, ea = fit.x
    kind = r["derive"]
    if kind == "activation_energy":
        return ea / 1e3
    at = r["at_temperature"] + 273.15
    k_at = k_ref * math.exp(-ea / R_GAS * (1 / at - 1 / ref))
    if kind == "rate_at":
        return k_at
    if kind == "q10":
        return math.exp(10 * ea / (R_GAS * at * (at + 10)))
    limit = math.log(r["limit"]) if first else r["limit"]
    up = r["direction"] == "up"
    if (v0 >= limit) if up else (v0 <= limit):
        return 0.0
    if (k_at <= 0) if up else (k_at >= 0):
        return math.nan
    return (limit - v0) / k_at


def check_panel(generated, printed: dict, outcome) -> None:
    """``tradeoff panel --json``: each attribute's run F and its df equal a
    least-squares recomputation (score ~ run + assessor, type II; with sessions,
    run tested against run x assessor), written out here with numpy."""
    table = panel_long(generated)
    for attr, part in table.groupby("attribute"):
        part = part[part["score"].astype(str) != ""]
        y = part["score"].astype(float).to_numpy()
        run = pd.get_dummies(part["run"]).to_numpy(float)
        judge = pd.get_dummies(part["assessor"]).to_numpy(float)
        cell = pd.get_dummies(part["run"] + "|" + part["assessor"]).to_numpy(float)

        def rss(*blocks):
            x = np.column_stack([np.ones(len(y)), *blocks])
            beta = np.linalg.lstsq(x, y, rcond=None)[0]
            return float(((y - x @ beta) ** 2).sum()), np.linalg.matrix_rank(x)

        full, r_full = rss(run, judge)
        only_a, r_a = rss(judge)
        df_run = r_full - r_a
        den, df_den = full, len(y) - r_full
        if cell.shape[1] < len(y):
            inter, r_int = rss(cell)
            den, df_den = full - inter, r_int - r_full
        got = printed["attributes"].get(attr, {}).get("anova", {}).get("run", {})
        want_f = ((only_a - full) / df_run) / (den / df_den) if df_den > 0 and den > 0 \
            else None
        if got.get("df") != df_run or got.get("df_denominator") != df_den or (
                want_f is not None and not math.isclose(got.get("f") or -1, want_f,
                                                        rel_tol=1e-6)):
            outcome.fail("panel", "panel", f"'{attr}': run F {got.get('f')} on "
                         f"{got.get('df')} and {got.get('df_denominator')} df; recomputed "
                         f"{want_f} on {df_run} and {df_den}")
