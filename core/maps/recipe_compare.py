"""Up to three candidate recipes side by side: settings, predictions with their
intervals, each d, D and the chances, with the rows where they differ marked.

Each column is one recipe and every figure in it comes from one call of
``what_if`` at that recipe (the d's and D score the very predictions shown), so
no figure in a column belongs to another recipe.
"""
from __future__ import annotations

import math

import numpy as np
import pandas as pd

from ..errors import StudyError
from .tables import what_if

__all__ = ["compare_recipes", "SIDE_COLUMNS", "MAX_RECIPES"]

MAX_RECIPES = 3
# Columns before the recipes' own (one column per recipe label), and after them.
SIDE_COLUMNS = ["part", "item", "unit"]


def _differs(values: list, rel: float = 1e-6) -> bool:
    nums = [v for v in values if isinstance(v, (int, float)) and not isinstance(v, bool)]
    if len(nums) == len(values):
        finite = [float(v) for v in nums if math.isfinite(float(v))]
        if len(finite) != len(nums):
            return len(finite) > 0  # one known, another not
        if not finite:
            return False
        scale = max(1.0, max(abs(v) for v in finite))
        return max(finite) - min(finite) > rel * scale
    return len({str(v) for v in values}) > 1


def compare_recipes(study, fit, recipes: dict[str, dict]) -> pd.DataFrame:
    """The recipes (label -> settings in natural units) side by side.

    Returns
    -------
    pandas.DataFrame
        Columns ``part`` ("setting", "predicted", "interval low", "interval
        high", "d", "D", "chance"), ``item`` (factor or response name, "all
        goals" for D and the chance of meeting every limit), ``unit``, one
        column per recipe label (numbers, or level names for a categorical
        setting), ``differs`` (the recipes do not agree on this row) and
        ``best`` (the label with the highest d, D or chance; "" elsewhere or
        on a tie). Intervals are prediction intervals at the study's
        confidence.
    """
    if not recipes:
        raise StudyError("pin at least one recipe to compare")
    if len(recipes) > MAX_RECIPES:
        raise StudyError(f"at most {MAX_RECIPES} recipes side by side: unpin one first")
    labels = list(recipes)
    found = {label: what_if(study, fit, settings) for label, settings in recipes.items()}
    units = {f.name: f.unit or "" for f in study.factors}
    units.update({r.name: r.unit or "" for r in study.responses})
    rows: list[dict] = []

    def add(part, item, values, unit=""):
        rows.append({"part": part, "item": item, "unit": unit,
                     **dict(zip(labels, values))})

    for f in study.factors:
        add("setting", f.name, [found[k].settings[f.name] for k in labels], units[f.name])
    names = list(found[labels[0]].table["response"])
    by = {k: found[k].table.set_index("response") for k in labels}
    for name in names:
        add("predicted", name, [float(by[k].loc[name, "predicted"]) for k in labels],
            units.get(name, ""))
        add("interval low", name, [float(by[k].loc[name, "pi_low"]) for k in labels],
            units.get(name, ""))
        add("interval high", name, [float(by[k].loc[name, "pi_high"]) for k in labels],
            units.get(name, ""))
    for name in names:
        values = [float(by[k].loc[name, "desirability"]) for k in labels]
        if not all(np.isnan(values)):
            add("d", name, values)
    for f in study.factors:
        values = [(found[k].factor_desirability or {}).get(f.name, np.nan) for k in labels]
        if not all(np.isnan(values)):
            add("d", f.name, values)
    add("D", "all goals", [found[k].desirability for k in labels])
    for name in names:
        values = [float(by[k].loc[name, "chance_in_limits"]) for k in labels]
        if not all(np.isnan(values)):
            add("chance", name, values)
    add("chance", "all goals", [found[k].chance_all for k in labels])
    table = pd.DataFrame(rows, columns=SIDE_COLUMNS + labels)
    table["differs"] = [_differs([r[k] for k in labels]) for _, r in table.iterrows()]
    best = []
    for _, r in table.iterrows():
        if r["part"] not in ("d", "D", "chance") or not r["differs"]:
            best.append("")
            continue
        values = np.array([r[k] for k in labels], dtype=float)
        if np.isnan(values).all():
            best.append("")
            continue
        top = np.nanmax(values)
        winners = [k for k, v in zip(labels, values) if v == top]
        best.append(winners[0] if len(winners) == 1 else "")
    table["best"] = best
    return table
