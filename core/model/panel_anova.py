"""The panel's own analysis of one attribute, as a sensory lab reads it.

The two-way model ``score = run + assessor (+ run x assessor) + error`` is
fitted to the scores themselves. Sums of squares are type II (each main
effect adjusted for the other), so an incomplete panel (not every assessor
tasting every run) is tested fairly. Assessors are a sample of possible
assessors, so their effects are random (Naes, Brockhoff & Tomic 2010,
*Statistics for Sensory and Consumer Science*, ch. 5): without repeated
sessions the run effect is tested against the residual; with repeated
sessions the run x assessor interaction is estimable and the run effect is
tested against it, because assessors disagreeing about runs is what a new
panel would also do.

Least-squares means average the additive model's fit over all assessors with
equal weight; their standard errors and every pairwise difference use the
mean square the run effect is tested against. Pairs are judged by the
Tukey-Kramer method (the studentized range with each pair's own standard
error, Kramer 1956), which stays honest for unbalanced and incomplete panels.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["attribute_anova", "run_groups", "assessor_performance"]

ALPHA = 0.05


def _dummies(codes: np.ndarray, n_levels: int) -> np.ndarray:
    out = np.zeros((len(codes), n_levels))
    out[np.arange(len(codes)), codes] = 1.0
    return out


def _rss(y: np.ndarray, *blocks) -> tuple[float, int]:
    x = np.column_stack([np.ones(len(y))] + [b for b in blocks])
    beta, _, rank, _ = np.linalg.lstsq(x, y, rcond=None)
    r = y - x @ beta
    return float(r @ r), int(rank)


def _row(ss, df, den_ms, den_df):
    from scipy import stats

    ms = ss / df if df > 0 else np.nan
    f = ms / den_ms if df > 0 and den_df > 0 and den_ms > 0 else np.nan
    p = float(stats.f.sf(f, df, den_df)) if np.isfinite(f) else np.nan
    return {"ss": float(ss), "df": int(df), "ms": float(ms), "f": float(f),
            "df_denominator": int(den_df), "p": p}


def attribute_anova(frame: pd.DataFrame, *, alpha: float = ALPHA) -> dict:
    """Panel ANOVA, least-squares means and Tukey-Kramer pairs of one attribute.

    Parameters
    ----------
    frame : DataFrame
        Columns ``run``, ``assessor``, ``score`` (blank scores dropped here) and
        optionally ``session``.

    Returns
    -------
    dict
        ``anova`` (``run``, ``assessor``, ``run x assessor`` when sessions
        repeat, ``residual``: each with ss, df, ms, f, df_denominator, p and
        ``tested_against``), ``replicated``, ``means`` (run, mean, se, n),
        ``pairs`` (a, b, diff, se, q, p, differ), ``groups`` (lists of runs
        that do not differ), ``error_df`` and ``error_ms`` (what the runs
        were tested against).
    """
    from scipy import stats

    frame = frame.dropna(subset=["score"])
    y = frame["score"].to_numpy(float)
    rcodes, runs = pd.factorize(frame["run"], sort=False)
    acodes, assessors = pd.factorize(frame["assessor"], sort=False)
    nr, na, n = len(runs), len(assessors), len(y)
    R, A = _dummies(rcodes, nr), _dummies(acodes, na)
    ccodes, _ = pd.factorize(pd.Series(list(zip(rcodes, acodes))), sort=False)
    replicated = bool(ccodes.max() + 1 < n) if n else False
    rss_add, rank_add = _rss(y, R, A)
    rss_a, rank_a = _rss(y, A)
    rss_r, rank_r = _rss(y, R)
    if replicated:
        rss_full, rank_full = _rss(y, _dummies(ccodes, ccodes.max() + 1))
    else:
        rss_full, rank_full = rss_add, rank_add
    df_e = n - rank_full
    ms_e = rss_full / df_e if df_e > 0 else np.nan
    df_i = rank_full - rank_add
    anova = {}
    if replicated and df_i > 0:
        ms_i = (rss_add - rss_full) / df_i
        den_ms, den_df, den_name = ms_i, df_i, "run x assessor"
    else:
        den_ms, den_df, den_name = ms_e, df_e, "residual"
    anova["run"] = _row(rss_a - rss_add, rank_add - rank_a, den_ms, den_df)
    anova["assessor"] = _row(rss_r - rss_add, rank_add - rank_r, den_ms, den_df)
    for key in ("run", "assessor"):
        anova[key]["tested_against"] = den_name
    if replicated and df_i > 0:
        anova["run x assessor"] = _row(rss_add - rss_full, df_i, ms_e, df_e)
        anova["run x assessor"]["tested_against"] = "residual"
    anova["residual"] = {"ss": float(rss_full), "df": int(df_e), "ms": float(ms_e)}

    # Least-squares means from the additive model (treatment coding).
    X = np.column_stack([np.ones(n), R[:, 1:], A[:, 1:]])
    beta, *_ = np.linalg.lstsq(X, y, rcond=None)
    cov = np.linalg.pinv(X.T @ X)
    L = np.zeros((nr, X.shape[1]))
    L[:, 0] = 1.0
    L[np.arange(1, nr), np.arange(1, nr)] = 1.0
    L[:, nr:] = 1.0 / na
    est = L @ beta
    s2 = den_ms if den_df > 0 else np.nan
    se = np.sqrt(s2 * np.einsum("ij,jk,ik->i", L, cov, L))
    counts = np.bincount(rcodes, minlength=nr)
    means = [{"run": str(runs[i]), "mean": float(est[i]), "se": float(se[i]),
              "n": int(counts[i])} for i in range(nr)]
    pairs = []
    for i in range(nr):
        for j in range(i + 1, nr):
            d = L[i] - L[j]
            diff = float(est[i] - est[j])
            se_d = float(np.sqrt(s2 * d @ cov @ d))
            q = abs(diff) / se_d * np.sqrt(2.0) if se_d > 0 else np.nan
            p = (float(stats.studentized_range.sf(q, nr, den_df))
                 if np.isfinite(q) and nr >= 2 else np.nan)
            pairs.append({"a": str(runs[i]), "b": str(runs[j]), "diff": diff, "se": se_d,
                          "q": float(q), "p": p, "differ": bool(p < alpha)})
    return {"anova": anova, "replicated": replicated, "means": means, "pairs": pairs,
            "groups": run_groups(means, pairs), "error_df": int(den_df),
            "error_ms": float(den_ms), "alpha": alpha, "n_scores": int(n),
            "n_runs": int(nr), "n_assessors": int(na)}


def run_groups(means: list[dict], pairs: list[dict]) -> list[list[str]]:
    """Largest sets of runs, from the highest mean down, no two of which differ.

    Each set is a run of neighbours in mean order whose every pair is judged
    alike; a set inside an earlier one is not repeated. A run belongs to every
    set listed with it, so overlapping sets read "B is like A and like C, but
    A and C differ".
    """
    order = [m["run"] for m in sorted(means, key=lambda m: -m["mean"])]
    differ = {frozenset((p["a"], p["b"])) for p in pairs if p["differ"]}
    groups: list[list[str]] = []
    for i in range(len(order)):
        j = i + 1
        while j < len(order) and all(frozenset((order[k], order[j])) not in differ
                                     for k in range(i, j)):
            j += 1
        group = order[i:j]
        if not any(set(group) <= set(g) for g in groups):
            groups.append(group)
    return groups


def assessor_performance(frame: pd.DataFrame, *, min_agreement: float = 0.3,
                         alpha: float = ALPHA) -> list[dict]:
    """How each assessor scores: discrimination, agreement, repeatability, scale use.

    - ``f_runs``, ``p_runs``: the assessor's own one-way F for runs (needs
      repeated sessions; NaN otherwise): a high p means they do not tell the
      runs apart.
    - ``agreement``: correlation of their run scores with the rest of the
      panel's run means (leave-one-out, common practice).
    - ``repeat_sd``: their pooled SD between sessions of one run.
    - ``centre``, ``range``, ``offset``: their mean and range of scores, and
      their mean minus the rest's on the same runs.
    - ``retrain``: reasons in plain words (empty when all is well).
    """
    from scipy import stats

    from ..derive.panel import assessor_agreement

    frame = frame.dropna(subset=["score"])
    agree = assessor_agreement(frame["run"], frame["assessor"],
                               frame["score"]).set_index("assessor")
    cell = frame.groupby(["run", "assessor"], sort=False)["score"]
    within = (frame["score"] - cell.transform("mean")) ** 2
    frame = frame.assign(_within=within)
    panel_sd = np.nan
    n_cells = frame.groupby(["run", "assessor"]).ngroups
    if len(frame) > n_cells:
        panel_sd = float(np.sqrt(within.sum() / (len(frame) - n_cells)))
    ranges = frame.groupby("assessor")["score"].agg(lambda s: s.max() - s.min())
    typical_range = float(ranges.median()) if len(ranges) else np.nan
    out = []
    for name, g in frame.groupby("assessor", sort=False):
        k = g["run"].nunique()
        df_w = len(g) - g.groupby("run").ngroups
        f = p = rep = np.nan
        if df_w > 0:
            rep = float(np.sqrt(g["_within"].sum() / df_w))
            if k >= 2:
                grand = g["score"].mean()
                ss_b = float((g.groupby("run")["score"].agg(
                    lambda s: len(s) * (s.mean() - grand) ** 2)).sum())
                ss_w = float(g["_within"].sum())
                if ss_w > 0:
                    f = (ss_b / (k - 1)) / (ss_w / df_w)
                    p = float(stats.f.sf(f, k - 1, df_w))
        a = agree.loc[name]
        reasons = []
        if g["score"].nunique() == 1 and len(g) >= 3:
            reasons.append("gives every run the same score")
        elif np.isfinite(p) and p > alpha:
            reasons.append(f"does not tell the runs apart (own F {f:.2f}, p {p:.2f})")
        if np.isfinite(a["correlation"]) and a["correlation"] < min_agreement:
            reasons.append(f"ranks the runs unlike the rest of the panel (correlation "
                           f"{a['correlation']:.2f})")
        if np.isfinite(rep) and np.isfinite(panel_sd) and rep > 1.5 * panel_sd:
            reasons.append(f"repeats poorly between sessions (SD {rep:.3g} against the "
                           f"panel's {panel_sd:.3g})")
        rng = float(g["score"].max() - g["score"].min())
        if np.isfinite(typical_range) and typical_range > 0 and \
                0 < rng < 0.4 * typical_range:
            reasons.append(f"uses a narrow part of the scale (range {rng:.3g} against "
                           f"a typical {typical_range:.3g})")
        out.append({"assessor": str(name), "n_scores": int(len(g)), "n_runs": int(k),
                    "f_runs": float(f), "p_runs": float(p),
                    "agreement": float(a["correlation"]), "repeat_sd": float(rep),
                    "centre": float(g["score"].mean()), "range": rng,
                    "offset": float(a["offset"]), "retrain": reasons})
    return out
