"""Measurement noise against batch noise, from the pieces of each run.

When a run (a batch) is measured in several pieces, its scatter splits in two:

- ``within_sd``: how far pieces of one batch scatter around their batch mean,
  the measurement (and piece-to-piece) noise. Pooled over the runs:
  ``within_sd^2 = sum_i sum_j (y_ij - mean_i)^2 / sum_i (k_i - 1)``.
- ``batch_sd``: how far batches made at the same settings differ beyond that.
  The model is fitted to run means, so its residual variance estimates
  ``Var(run mean) = batch_sd^2 + within_sd^2 / k``; hence
  ``batch_sd^2 = residual variance - within_sd^2 / k``, floored at 0. This is
  the usual method-of-moments (ANOVA) estimate of a two-stage nested design
  (pieces within batches); with unequal numbers of pieces ``k`` is their
  harmonic mean over the modelled runs, since each run mean carries
  ``within_sd^2 / k_i`` of measurement noise.

Both are on the model's scale (log or square root when the response is
transformed). ``piece_components`` returns them JSON-ready with one sentence a
lab user can act on: would measuring more pieces help, or more batches?
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

__all__ = ["within_batch", "batch_variance", "piece_components", "pieces_sentence"]


def within_batch(values, runs) -> tuple[float, int]:
    """Pooled SD of pieces around their run means and its degrees of freedom.

    ``values`` and ``runs`` are one entry per piece (blank pieces already left
    out). Runs with one piece add nothing. Returns ``(nan, 0)`` when no run has
    two pieces.
    """
    values = np.asarray(values, dtype=float)
    codes, labels = pd.factorize(pd.Series(runs, dtype=object), sort=False)
    m = len(labels)
    n = np.bincount(codes, minlength=m).astype(float)
    mean = np.bincount(codes, values, m) / np.where(n > 0, n, 1.0)
    ss = float(np.sum((values - mean[codes]) ** 2))
    df = int(np.sum(n - 1))
    return (math.sqrt(ss / df) if df > 0 else math.nan), df


def batch_variance(residual_var: float, within_var: float, pieces_per_run: float) -> float:
    """Batch-to-batch variance beyond measurement noise, floored at 0."""
    return max(0.0, float(residual_var) - float(within_var) / float(pieces_per_run))


def piece_components(values, runs, model_runs, *, residual_sd: float, residual_df: int,
                     unit: str = "", scale: str = "none") -> dict | None:
    """The ``"pieces"`` block of a fitted response (None when no run has two pieces).

    Parameters
    ----------
    values, runs : one entry per piece of this response, on the model's scale.
    model_runs : the run ids the model was fitted to (runs with a value).
    residual_sd, residual_df : the model's residual SD on run means and its df.
    unit : the response's unit, for the sentence.
    scale : the model's scale (``none``, ``log``, ``sqrt``), for the sentence.
    """
    values = np.asarray(values, dtype=float)
    runs = np.asarray(runs, dtype=object)
    used = np.isin(runs, np.asarray(list(model_runs), dtype=object))
    values, runs = values[used], runs[used]
    counts = pd.Series(runs).value_counts()
    several = int((counts > 1).sum())
    if several == 0:
        return None
    within_sd, within_df = within_batch(values, runs)
    # every modelled run has at least one piece; runs without any are not modelled
    k_all = np.array([counts.get(r, 1) for r in model_runs], dtype=float)
    k = float(len(k_all) / np.sum(1.0 / k_all)) if len(k_all) else math.nan
    batch_sd = run_sd = None
    if residual_df > 0 and math.isfinite(residual_sd) and math.isfinite(within_sd):
        batch_sd = math.sqrt(batch_variance(residual_sd ** 2, within_sd ** 2, k))
        run_sd = float(residual_sd)
    out = {"runs_with_several": several, "pieces": int(len(values)),
           "within_sd": _num(within_sd), "within_df": int(within_df),
           "batch_sd": _num(batch_sd), "pieces_per_run": _num(k),
           "run_mean_sd": _num(run_sd), "scale": scale}
    out["summary"] = pieces_sentence(out, unit=unit)
    return out


def pieces_sentence(block: dict, *, unit: str = "") -> str:
    """What the split means for the next study, in plain words.

    Rests on Var(run mean) = batch_sd^2 + within_sd^2 / k.
    """
    w, b, k = block["within_sd"], block["batch_sd"], block["pieces_per_run"]
    scale = block.get("scale", "none")
    u = f" {unit}" if unit and scale == "none" else ""
    on = "" if scale == "none" else f" (on the {scale} scale the model uses)"
    if w is None:
        return "no run has two pieces with values: measurement noise cannot be estimated"
    if b is None:
        return (f"pieces of one batch scatter with SD {w:.2g}{u}{on}; the model has no "
                "residual degrees of freedom, so the batch-to-batch part cannot be "
                "separated: add replicate runs")
    now = max(1, int(round(k)))
    more = now + 2
    sd_now = math.sqrt(b * b + w * w / now)
    sd_more = math.sqrt(b * b + w * w / more)
    a, z = _two(sd_now, sd_more)
    head = (f"measuring {more} pieces instead of {now} would shrink the run-mean SD from "
            f"{a} to {z}{u}{on}")
    if b == 0:
        return (head + "; the run means scatter no more than the measurement noise "
                "explains, so no batch-to-batch part is seen: more pieces per batch "
                "sharpen each run")
    if b * b >= w * w / now:
        return (head + f"; the batch-to-batch part dominates (SD {b:.2g}{u}): more "
                "batches (runs), not more pieces, sharpen the model")
    return (head + f"; the measurement part dominates (pieces scatter with SD "
            f"{w:.2g}{u}): more pieces per batch sharpen each run")


def _two(a: float, b: float) -> tuple[str, str]:
    """Two numbers with the fewest significant digits (2 to 4) that tell them apart."""
    for digits in (2, 3, 4):
        x, y = f"{a:.{digits}g}", f"{b:.{digits}g}"
        if x != y:
            break
    return x, y


def _num(v):
    if v is None:
        return None
    v = float(v)
    return v if math.isfinite(v) else None
