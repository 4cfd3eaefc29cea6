"""What the report says about trade-offs: the frontier of the two goals in greatest
conflict, and how steady the recommendation is.

Computed once by ``report_data`` (key ``trade``), read by the page
(``frontier_sections.py``). A study where one of them cannot be computed (too
few goals, no setting within every limit) gets a note instead, never an error.
"""
from __future__ import annotations

from ..errors import TradeoffError

__all__ = ["trade_data"]


def trade_data(study, fit, result, seed: int) -> dict:
    """``{"pair", "conflicts", "frontier", "frontier_note", "steadiness",
    "steadiness_note"}``: the pair chosen (a row of ``goal_conflicts`` as a
    dict, or None), every pair's rank correlation (DataFrame), the Frontier
    (or None and why), the Sensitivity (or None and why)."""
    from ..search.conflict import goal_conflicts
    from ..search.frontier import frontier
    from ..search.sensitivity import sensitivity

    out = {"pair": None, "conflicts": None, "frontier": None, "frontier_note": None,
           "steadiness": None, "steadiness_note": None}
    if result is None or not result.feasible:
        why = "there is no setting where every goal is within its limits"
        out["frontier_note"] = out["steadiness_note"] = why
        return out
    try:
        table = goal_conflicts(study, fit=fit, seed=seed)
        out["conflicts"] = table
        if table.empty:
            out["frontier_note"] = ("fewer than two goals with a direction vary over the "
                                    "region, so no two goals trade against each other")
        else:
            out["pair"] = table.iloc[0].to_dict()
            out["frontier"] = frontier(study, [out["pair"]["a"], out["pair"]["b"]],
                                       points=15, seed=seed, fit=fit, draws=2000)
    except TradeoffError as exc:
        out["frontier_note"] = str(exc)
    try:
        out["steadiness"] = sensitivity(study, result=result, fit=fit, seed=seed)
    except TradeoffError as exc:
        out["steadiness_note"] = str(exc)
    return out
