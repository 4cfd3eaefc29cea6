"""Confirmation runs: does the model predict what was made at the chosen settings?

A study may list runs made after the analysis, at chosen settings, with what
was measured. Each one goes into the study file as a ``[[confirmations]]``
table, either one run per table::

    [[confirmations]]
    run = "C1"
    settings = { protein = 27, glycerol = 6, binder = "date paste", mix_temp = 45 }
    measured = { hardness_fresh = 17.4, liking = 7.2 }

or a whole table of runs in a separate file (columns: optionally ``run``, one
per factor, one per measured response; blank cells are "not measured")::

    [[confirmations]]
    data = "confirm_runs.csv"

Each measured value is compared with the prediction interval at its settings.
Several runs at the same settings are averaged and their mean is compared with
the interval for the mean of m new observations,

    yhat(x0) +/- t(1 - alpha/2, df) * sqrt(s^2 / m + se(yhat(x0))^2),

Montgomery, Peck & Vining, Introduction to Linear Regression Analysis, the
prediction of the mean of m future observations (from memory); with m = 1 it
is the usual prediction interval for one new observation (Montgomery, Design
and Analysis of Experiments, "prediction of new response observations").
For a response modelled on a log or square-root scale the comparison is made
on that scale and the interval is shown back in natural units.
"""
from __future__ import annotations

import math
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import DataError, ModelError, StudyError
from ..study.confirmations import CONFIRM_KEYS, confirmation_files, confirmation_runs

__all__ = ["confirmation_runs", "confirmation_files", "check_confirmations",
           "ConfirmationCheck", "INTERVAL_FORMULA",
           "CONFIRM_KEYS", "VERDICT_COLUMNS", "CHECK_COLUMNS"]

# Columns of ConfirmationCheck.table (one row per settings group and response).
CHECK_COLUMNS = ["group", "runs", "m", "response", "measured", "predicted",
                 "pi_low", "pi_high", "inside", "outside_region"]
# Columns of ConfirmationCheck.verdicts (one row per response).
VERDICT_COLUMNS = ["response", "label", "checked", "inside", "verdict", "advice"]


# --------------------------------------------------------------------------
# Comparing measured values with prediction intervals


@dataclass(frozen=True)
class ConfirmationCheck:
    """Confirmation runs compared with the models' prediction intervals.

    Attributes
    ----------
    table : pandas.DataFrame
        One row per settings group and measured response: ``group`` (G1, G2,
        ...), ``runs`` (the run ids, comma separated), ``m`` (how many runs
        were averaged), ``response``, ``measured`` (mean of the m values,
        natural units), ``predicted``, ``pi_low``, ``pi_high`` (the prediction
        interval for the mean of m new runs), ``inside`` (bool),
        ``outside_region`` (bool: the settings lie outside the tested
        region), then one column per factor (the group's settings).
    verdicts : pandas.DataFrame
        One row per response: ``response``, ``label``, ``checked`` (settings
        groups measured), ``inside`` (how many lay inside their interval),
        ``verdict`` ("confirmed", "not confirmed" or "not checked") and
        ``advice`` (one sentence saying what it means and what to do).
    runs : pandas.DataFrame
        The confirmation runs as listed (see ``confirmation_runs``).
    confidence : float
        Level of the prediction intervals (the study's ``confidence``).
    """

    table: pd.DataFrame
    verdicts: pd.DataFrame
    runs: pd.DataFrame
    confidence: float

    @property
    def confirmed(self) -> bool:
        """True when no checked response is "not confirmed"."""
        return not (self.verdicts["verdict"] == "not confirmed").any()

    def to_dict(self) -> dict:
        """JSON-ready form (the shape of ``tradeoff confirm --json``)."""
        return {
            "confidence": self.confidence,
            "formula": INTERVAL_FORMULA,
            "verdicts": _records(self.verdicts),
            "checks": _records(self.table),
            "runs": _records(self.runs),
        }

    def text(self) -> str:
        """Readable lines for the terminal."""
        pct = f"{self.confidence:.0%}"
        lines = [f"Confirmation runs: {len(self.runs)} run(s) at "
                 f"{self.table['group'].nunique()} setting(s); each measured value "
                 f"(or the mean of runs at the same settings) is compared with the "
                 f"{pct} prediction interval.", ""]
        for g, part in self.table.groupby("group", sort=False):
            first = part.iloc[0]
            settings = ", ".join(f"{name} = {_fmt_setting(first[name])}"
                                 for name in self._factor_columns())
            lines.append(f"{g}  runs {first['runs']}  ({settings})"
                         + ("  OUTSIDE THE TESTED REGION" if first["outside_region"]
                            else ""))
            for _, row in part.iterrows():
                mark = "inside " if row["inside"] else "OUTSIDE"
                if math.isnan(row["predicted"]):
                    mark = "no model"
                elif math.isnan(row["pi_low"]):
                    mark = "no interval"
                measured = _num(row["measured"]) + (f" (mean of {row['m']})"
                                                    if row["m"] > 1 else "")
                lines.append(f"    {row['response']:<20} measured {measured}  predicted "
                             f"{_num(row['predicted'])}  interval {_num(row['pi_low'])}"
                             f" .. {_num(row['pi_high'])}  {mark}")
        lines += ["", "Verdict per response"]
        for _, v in self.verdicts.iterrows():
            lines.append(f"  {v['response']:<20} {v['verdict'].upper()}: {v['advice']}")
        return "\n".join(lines)

    def _factor_columns(self) -> list[str]:
        return [c for c in self.table.columns if c not in CHECK_COLUMNS]


INTERVAL_FORMULA = ("prediction interval for the mean of m new runs: predicted +/- "
                    "t(1 - alpha/2, residual df) * sqrt(residual variance / m + "
                    "variance of the predicted mean) (Montgomery, Peck & Vining, "
                    "Introduction to Linear Regression Analysis; m = 1 gives the "
                    "usual prediction interval for one new run)")


def check_confirmations(study, *, fit=None, confidence: float | None = None,
                        files: dict[str, bytes] | None = None) -> ConfirmationCheck:
    """Compare the study's confirmation runs with each model's prediction interval.

    Parameters
    ----------
    study : Study
        A study with runs and at least one ``[[confirmations]]`` table.
    fit : StudyFit, optional
        The fitted models (``tradeoff.models.fit_study(study)`` when omitted).
    confidence : float, optional
        Level of the prediction intervals (default: the study's ``confidence``).
    files : dict, optional
        Uploaded confirmation tables (file name -> bytes).

    Returns
    -------
    ConfirmationCheck
    """
    from scipy import stats

    from ..study.coding import to_coded

    runs = confirmation_runs(study, read_files=True, files=files)
    fname = Path(study.source).name if study.source is not None else "study"
    if runs.empty:
        raise StudyError(f"{fname}: the study lists no confirmation runs: add "
                         "[[confirmations]] tables with settings and measured values")
    if fit is None:
        from ..model.study_fit import fit_study

        fit = fit_study(study)
    level = study.confidence if confidence is None else float(confidence)
    if not 0 < level < 1:
        raise StudyError(f"confidence = {level} must be a fraction such as 0.95")

    names = study.factor_names
    coded = to_coded(study.factors, runs[names])
    keys = [tuple(np.round(row, 9)) for row in coded]
    order: dict[tuple, int] = {}
    for key in keys:
        order.setdefault(key, len(order))
    group_of = np.array([order[k] for k in keys])
    first = np.array([keys.index(k) for k in order])  # first run of each group
    x_groups = coded[first]

    tested = study.coded()[names].to_numpy(float)
    tol = 1e-9
    outside = ((x_groups < tested.min(axis=0) - tol)
               | (x_groups > tested.max(axis=0) + tol)).any(axis=1)

    rows: list[dict] = []
    for response in study.responses:
        values = runs[response.name].to_numpy(float)
        if np.isnan(values).all():
            continue
        model = fit.models.get(response.name)
        sums = np.zeros(len(order))
        natural = np.zeros(len(order))
        counts = np.zeros(len(order), dtype=int)
        present = ~np.isnan(values)
        scale = _forward(model, response, values[present], fname)
        np.add.at(sums, group_of[present], scale)
        np.add.at(natural, group_of[present], values[present])
        np.add.at(counts, group_of[present], 1)
        measured_groups = np.flatnonzero(counts)
        if model is not None:
            mean, se_mean, sigma, df = (np.broadcast_to(np.asarray(a, dtype=float),
                                                        (len(order),))
                                        for a in model.predictive(x_groups))
            # No error estimate (a saturated model without Lenth's fallback): no
            # interval, so nothing to compare with.
            noise = sigma ** 2 / np.maximum(counts, 1)
            if hasattr(model, "mean_noise"):  # runs of a group share one new batch
                pairs = [model.mean_noise(int(c)) for c in np.maximum(counts, 1)]
                noise = np.array([sd * sd for sd, _ in pairs])
                df = np.array([min(d, 1e6) for _, d in pairs])
            usable = (df > 0) & np.isfinite(sigma) & np.isfinite(se_mean)
            tq = stats.t.ppf(0.5 + level / 2.0, np.where(usable, df, 1.0))
            half = np.where(usable, tq * np.sqrt(se_mean ** 2 + noise), np.nan)
            ybar = sums / np.maximum(counts, 1)
            inside = np.abs(ybar - mean) <= half
            predicted = _inverse(model, mean)
            low, high = _interval(model, response, mean - half, mean + half)
        else:
            nan = np.full(len(order), np.nan)
            predicted, low, high, inside = nan, nan, nan, np.zeros(len(order), bool)
        for g in measured_groups:
            member = np.flatnonzero((group_of == g) & present)
            rec = {"group": f"G{g + 1}",
                   "runs": ", ".join(runs["run"].iloc[member]),
                   "m": int(counts[g]), "response": response.name,
                   "measured": float(natural[g] / counts[g]),
                   "predicted": float(predicted[g]), "pi_low": float(low[g]),
                   "pi_high": float(high[g]),
                   "inside": bool(inside[g]) if model is not None else False,
                   "outside_region": bool(outside[g])}
            rec.update({n: runs[n].iloc[first[g]] for n in names})
            rows.append(rec)
    table = pd.DataFrame(rows, columns=CHECK_COLUMNS + names)
    if not table.empty:
        table["_order"] = table["group"].str[1:].astype(int)
        table = (table.sort_values(["_order"], kind="stable")
                 .drop(columns="_order").reset_index(drop=True))
    verdicts = pd.DataFrame([_verdict(study, fit, r, table, level)
                             for r in study.responses], columns=VERDICT_COLUMNS)
    return ConfirmationCheck(table=table, verdicts=verdicts, runs=runs,
                             confidence=level)


def _verdict(study, fit, response, table: pd.DataFrame, level: float) -> dict:
    part = table[table["response"] == response.name]
    base = {"response": response.name, "label": response.label,
            "checked": int(len(part)), "inside": int(part["inside"].sum())}
    if part.empty:
        return base | {"verdict": "not checked",
                       "advice": "no confirmation run measured this response"}
    if response.name not in fit.models:
        reason = _skip_reason(fit, response.name)
        return base | {"verdict": "not checked",
                       "advice": f"this response has no model{reason}, so there is no "
                                 "interval to compare with"}
    pct = f"{level:.0%}"
    part = part[part["pi_low"].notna()]
    if part.empty:
        return base | {"checked": 0, "inside": 0, "verdict": "not checked",
                       "advice": "the model has no error estimate (no residual degrees "
                                 "of freedom), so it gives no prediction interval: add "
                                 "replicate or centre runs to the design"}
    base |= {"checked": int(len(part)), "inside": int(part["inside"].sum())}
    far = part[part["outside_region"]]
    region = (" Settings of group(s) " + ", ".join(far["group"]) + " lie outside the "
              "tested region, where the model extrapolates." if len(far) else "")
    missed = part[~part["inside"]]
    if missed.empty:
        return base | {"verdict": "confirmed",
                       "advice": f"every measured value lies inside its {pct} "
                                 "prediction interval: the model predicts this response "
                                 "as well as the original runs suggested." + region}
    parts = []
    for _, row in missed.iterrows():
        side = "above" if row["measured"] > row["pi_high"] else "below"
        parts.append(f"run(s) {row['runs']} measured {_num(row['measured'])}, {side} "
                     f"the interval {_num(row['pi_low'])} .. {_num(row['pi_high'])}")
    chance = (f" With {len(part)} checks, about one in {round(1 / (1 - level))} falls "
              "outside by chance alone, so repeat that run before drawing conclusions."
              if len(missed) == 1 and len(part) >= 3 else "")
    return base | {"verdict": "not confirmed",
                   "advice": "; ".join(parts) + ". The model misses something near "
                             "these settings: augment the design with runs around them "
                             "(add axial or centre points if you suspect curvature) and "
                             "revisit the model (terms, transform, unusual runs) before "
                             "relying on its predictions." + chance + region}


def _skip_reason(fit, name: str) -> str:
    skipped = getattr(fit, "skipped", None) or {}
    if isinstance(skipped, dict) and skipped.get(name):
        return f" ({skipped[name]})"
    return ""


def _forward(model, response, values: np.ndarray, fname: str) -> np.ndarray:
    """Measured values on the model's scale (log or square root, if used)."""
    from ..model.transforms import forward

    try:
        return forward(values, _transform_of(model, response), response=response.name)
    except ModelError as exc:
        raise DataError(f"{fname}: confirmation runs: {exc}") from None


def _transform_of(model, response) -> str:
    kind = getattr(model, "transform", None)
    return kind if isinstance(kind, str) else response.transform


def _inverse(model, values: np.ndarray) -> np.ndarray:
    back = getattr(model, "inverse_transform", None)
    return np.asarray(back(values), dtype=float) if callable(back) else values


def _interval(model, response, low: np.ndarray, high: np.ndarray):
    if _transform_of(model, response) == "sqrt":  # a square root is never negative: the interval stops at 0
        low = np.maximum(low, 0.0)
    return _inverse(model, low), _inverse(model, high)


def _records(frame: pd.DataFrame) -> list[dict]:
    out = []
    for rec in frame.to_dict(orient="records"):
        clean = {}
        for k, v in rec.items():
            if isinstance(v, (np.floating, float)):
                v = None if math.isnan(v) else float(v)
            elif isinstance(v, np.integer):
                v = int(v)
            elif isinstance(v, np.bool_):
                v = bool(v)
            clean[k] = v
        out.append(clean)
    return out


def _num(x) -> str:
    if x is None or (isinstance(x, float) and math.isnan(x)):
        return "-"
    return f"{x:.4g}"


def _fmt_setting(x) -> str:
    return x if isinstance(x, str) else f"{x:g}"
