"""Two candidate plans side by side on the same measures, the better one named.

A plan is better on a measure by a fixed direction: fewer runs, more terms
estimable, more runs left over for the error, smaller variance inflation, higher
resolution, fewer aliased pairs, more power, smaller prediction variance,
higher D-efficiency. Scaled prediction variance (N times the variance of the
prediction over sigma squared) already charges a plan for its size, so plans of
different sizes compare on it fairly (Myers, Montgomery & Anderson-Cook,
Response Surface Methodology, scaled prediction variance; from memory).
"""
from __future__ import annotations

import pandas as pd

from .plan_words import plan_measures

__all__ = ["compare_plans", "COMPARE_COLUMNS", "MEASURES"]

# measure key -> (label, +1 when higher is better, -1 when lower is better)
MEASURES = {
    "runs": ("Runs to make", -1),
    "estimable": ("Model terms estimable", +1),
    "not_estimable": ("Model terms not estimable", -1),
    "error_df": ("Runs left for the run-to-run variation", +1),
    "largest_vif": ("Largest variance inflation factor", -1),
    "resolution": ("Resolution", +1),
    "aliased_pairs": ("Aliased pairs (up to two-factor interactions)", -1),
    "lowest_power": ("Lowest power over the terms", +1),
    "i_average": ("Average scaled prediction variance (I)", -1),
    "g_largest": ("Largest scaled prediction variance (G)", -1),
    "d_efficiency": ("D-efficiency (%)", +1),
}
COMPARE_COLUMNS = ["measure", "key", "first", "second", "better"]


def compare_plans(first: dict, second: dict, *, tolerance: float = 1e-9) -> pd.DataFrame:
    """Compare two plan reports (``tradeoff plan --json``) measure by measure.

    Returns
    -------
    pandas.DataFrame
        Columns ``measure`` (label), ``key``, ``first``, ``second`` (the
        figures, None where a plan has none), ``better`` ("first", "second",
        "same", or "" when either figure is missing). Rows in the order of
        ``MEASURES``; a measure neither plan has is left out.
    """
    a, b = plan_measures(first), plan_measures(second)
    rows = []
    for key, (label, sign) in MEASURES.items():
        x, y = a.get(key), b.get(key)
        if x is None and y is None:
            continue
        if x is None or y is None:
            better = ""
        elif abs(float(x) - float(y)) <= tolerance * max(1.0, abs(float(x)), abs(float(y))):
            better = "same"
        else:
            better = "first" if sign * (float(x) - float(y)) > 0 else "second"
        rows.append({"measure": label, "key": key, "first": x, "second": y,
                     "better": better})
    return pd.DataFrame(rows, columns=COMPARE_COLUMNS)
