"""The panel analysis as workbook sheets: each attribute's panel ANOVA, its
least-squares means (with the alike-sets of runs that do not differ), every
pair of runs (Tukey-Kramer) and each assessor's performance, one tidy table a
sheet with the attribute in the first column."""
from __future__ import annotations

import pandas as pd

__all__ = ["PANEL_SHEETS", "panel_tables"]

PANEL_SHEETS = ("panel anova", "panel means", "panel pairs", "panel assessors")


def panel_tables(panel: dict | None) -> dict[str, pd.DataFrame]:
    """``report_data``'s ``panel`` entry as the sheets of ``PANEL_SHEETS`` (none
    without a panel table)."""
    if not panel:
        return {}
    anova, means, pairs, assessors = [], [], [], []
    for attr, res in panel["attributes"].items():
        for source, row in res["anova"].items():
            anova.append({"attribute": attr, "source": source, "df": row["df"],
                          "sum of squares": row["ss"], "mean square": row["ms"],
                          "F": row.get("f"), "p": row.get("p"),
                          "tested against": row.get("tested_against", ""),
                          "denominator df": row.get("df_denominator")})
        alike: dict[str, list[str]] = {}
        for k, group in enumerate(res["groups"]):
            for run in group:
                alike.setdefault(run, []).append(str(k + 1))
        for m in res["means"]:
            means.append({"attribute": attr, "run": m["run"], "least-squares mean": m["mean"],
                          "standard error": m["se"], "scores": m["n"],
                          "alike-set": " ".join(alike.get(m["run"], []))})
        for p in res["pairs"]:
            pairs.append({"attribute": attr, "run a": p["a"], "run b": p["b"],
                          "difference": p["diff"], "standard error": p["se"],
                          "p (Tukey-Kramer)": p["p"],
                          "differ": "yes" if p["differ"] else "no"})
        for a in res["assessors"]:
            assessors.append({"attribute": attr, "assessor": a["assessor"],
                              "scores": a["n_scores"], "own F for runs": a["f_runs"],
                              "p": a["p_runs"], "agreement r": a["agreement"],
                              "repeat SD": a["repeat_sd"], "centre": a["centre"],
                              "range": a["range"],
                              "retrain or check": "; ".join(a.get("retrain") or [])})
    return dict(zip(PANEL_SHEETS, map(pd.DataFrame, (anova, means, pairs, assessors))))
