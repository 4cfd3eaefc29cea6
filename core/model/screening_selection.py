"""The two-stage analysis of a definitive screening design.

Jones & Nachtsheim (2017, Technometrics, effective design-based model
selection for definitive screening designs; the steps from memory) split
the response along the design's fold-over structure. With pairs of runs
(x, -x) and centre runs:

- the odd part, (y+ - y-) / 2 per pair, holds the main effects and nothing of
  second order (a square or product is the same in both runs of a pair);
- the even part, the pair means and the centre runs, holds the intercept and
  every second-order term and nothing of the main effects.

Stage 1 fits the main effects to the odd part. Its residual (the fake-factor
columns: n pairs, m factors, n - m degrees of freedom) plus the centre runs'
spread is an error estimate free of second-order terms; the main effects are
tested against it, and the sums of squares of those found inactive are pooled
into it, until the set no longer changes. Without any error degrees of freedom,
Lenth's pseudo standard error of the main effects picks the first active set,
and the inactive ones' sums of squares make the error from then on.

Stage 2 fits second-order terms to the even part, only among the active main
effects (strong heredity: a square of an active factor, a product of two
active factors). Terms enter one at a time, the one that lowers the residual
most, while the drop it brings is significant against the stage-1 error (an F
test on 1 and the error's degrees of freedom); each step also records the
even part's lack of fit (its residual mean square, the centre runs' spread
taken out, against the same error).

``screen_response`` returns None with the reason when the runs are not a
definitive screening design (runs added, a run lost, categorical factors,
a fold-over pair split between blocks), so the caller can fall back to the study's ordinary model.
"""
from __future__ import annotations

from itertools import combinations

import numpy as np
from scipy import stats

__all__ = ["fold_over_structure", "screen_runs", "screen_response"]

_TOL = 1e-9


def fold_over_structure(X: np.ndarray) -> tuple[list[tuple[int, int]], list[int]] | str:
    """(pairs of mirror runs, centre runs) of coded runs, or why they are not a
    definitive screening design."""
    X = np.asarray(X, dtype=float)
    if X.shape[1] < 3:
        return "fewer than 3 numeric factors"
    if not np.all(np.isin(np.round(X, 9), (-1.0, 0.0, 1.0))):
        return "some settings are not at low, centre or high"
    centre = [i for i in range(len(X)) if np.all(np.abs(X[i]) < _TOL)]
    rest = {}
    for i in range(len(X)):
        if i not in centre:
            rest.setdefault(tuple(np.round(X[i]).astype(int)), []).append(i)
    pairs, seen = [], set()
    for key, rows in rest.items():
        if key in seen:
            continue
        mirror = tuple(-v for v in key)
        partners = rest.get(mirror, [])
        if len(rows) != 1 or len(partners) != 1:
            return ("runs were added or lost: not every run has exactly one mirror "
                    "image (all settings reversed)")
        pairs.append((rows[0], partners[0]))
        seen.update((key, mirror))
    if not centre:
        return "there is no centre run"
    top = X[[a for a, _ in pairs]]
    if len(pairs) < X.shape[1]:
        return "fewer fold-over pairs than factors"
    G = top.T @ top
    if np.abs(G - np.diag(np.diag(G))).max() > _TOL:
        return "the main effects are not orthogonal"
    return pairs, centre


def _sf_t(t, df):
    return 2 * stats.t.sf(np.abs(t), df)


def screen_runs(X: np.ndarray, y: np.ndarray, names: list[str], *, alpha: float = 0.05,
                block=None) -> dict | str:
    """The two-stage analysis of one response, or why it does not apply.

    Parameters
    ----------
    X : (N, m) coded runs of the numeric factors.
    y : (N,) the response.
    names : the factors' names.
    alpha : significance level of every test.
    block : (N,) each run's block, or None. Both runs of a pair must share a
        block; the block shifts then cancel in the fold-over differences and
        enter the even part as terms always kept.

    Returns
    -------
    dict with ``active_main``, ``active_second_order``, ``error_sd``,
    ``error_df``, ``error_source``, ``steps`` (what each stage did, in order) and
    ``coefficients`` (least squares in coded units over all runs, for the model
    chosen).
    """
    X, y = np.asarray(X, dtype=float), np.asarray(y, dtype=float)
    found = fold_over_structure(X)
    if isinstance(found, str):
        return found
    pairs, centre = found
    m = X.shape[1]
    a, b = np.array([p[0] for p in pairs]), np.array([p[1] for p in pairs])
    top, d = X[a], (y[a] - y[b]) / 2.0
    n = len(pairs)
    gram = np.sum(top ** 2, axis=0)
    coef = top.T @ d / gram                       # main effects (coded, half the effect)
    rss_odd = 2.0 * float(np.sum((d - top @ coef) ** 2))
    labels_b = np.zeros(len(y), dtype=int) if block is None else \
        np.unique(np.asarray(block).astype(str), return_inverse=True)[1]
    if np.any(labels_b[a] != labels_b[b]):
        return "the two runs of a fold-over pair are in different blocks"
    # the centre runs' spread within each block: pure error
    ss_c, pure_df = 0.0, 0
    for g in np.unique(labels_b[centre]):
        yc = y[[i for i in centre if labels_b[i] == g]]
        ss_c += float(np.sum((yc - yc.mean()) ** 2))
        pure_df += len(yc) - 1
    blocks = [(labels_b == g).astype(float) for g in np.unique(labels_b)[1:]]
    ss_main = 2.0 * gram * coef ** 2              # each main effect's sum of squares
    base_ss, base_df = rss_odd + ss_c, (n - m) + pure_df
    steps = [{"stage": 1, "action": "main effects from the fold-over differences",
              "error_df": int(base_df),
              "error_from": f"{n - m} fake-factor and {pure_df} centre-run "
                            "degrees of freedom"}]
    active = np.ones(m, dtype=bool)
    source = "fake-factor columns and centre runs"
    if base_df == 0:
        from .lenth import lenth

        res = lenth(2 * coef, level=1 - alpha)    # effects: low to high
        active = np.abs(2 * coef) > res.me
        source = "Lenth's pseudo standard error of the main effects (no fake factors " \
                 "and one centre run)"
        steps.append({"stage": 1, "action": "no error degrees of freedom: main effects "
                      "judged by Lenth's margin", "margin": round(res.me, 6),
                      "active": [names[j] for j in np.flatnonzero(active)]})
    for _ in range(m + 1):
        pooled_ss = base_ss + float(ss_main[~active].sum())
        pooled_df = base_df + int((~active).sum())
        if pooled_df == 0:
            break
        s2 = pooled_ss / pooled_df
        se = np.sqrt(s2 / (2.0 * gram)) if s2 > 0 else np.full(m, np.inf)
        p = _sf_t(coef / se, pooled_df) if s2 > 0 else np.ones(m)
        new = p < alpha
        steps.append({"stage": 1, "action": "main effects tested", "error_df": pooled_df,
                      "error_sd": round(float(np.sqrt(s2)), 6),
                      "p_values": {names[j]: round(float(p[j]), 6) for j in range(m)},
                      "active": [names[j] for j in np.flatnonzero(new)]})
        if np.array_equal(new, active):
            break
        active = new
        source = ("fake-factor columns, centre runs and inactive main effects" if base_df
                  else "inactive main effects")
    err_ss = base_ss + float(ss_main[~active].sum())
    err_df = base_df + int((~active).sum())
    if base_df == 0:
        source = "inactive main effects"
    s2 = err_ss / err_df if err_df > 0 else float("nan")
    act = list(np.flatnonzero(active))
    # stage 2: the even part, second-order terms among the active factors
    even = y.copy()
    even[a] = even[b] = (y[a] + y[b]) / 2.0
    candidates = {f"{names[j]}^2": X[:, j] ** 2 for j in act}
    for j, k in combinations(act, 2):
        candidates[f"{names[j]}:{names[k]}"] = X[:, j] * X[:, k]
    chosen: list[str] = []

    def rss_of(labels):
        M = np.column_stack([np.ones(len(y))] + blocks + [candidates[t] for t in labels])
        beta, *_ = np.linalg.lstsq(M, even, rcond=None)
        return float(np.sum((even - M @ beta) ** 2)), np.linalg.matrix_rank(M) == M.shape[1]

    rss, _ = rss_of(chosen)
    # the even part spans n pair means and the centre runs; the intercept, the
    # blocks, the terms chosen and the pure error take their share
    even_dim = n + len(centre) - 1 - len(blocks) - pure_df
    while np.isfinite(s2) and s2 > 0 and even_dim - len(chosen) > 0:
        df_lof = even_dim - len(chosen)
        F = max(rss - ss_c, 0.0) / df_lof / s2
        p_lof = float(stats.f.sf(F, df_lof, err_df))
        trials = [(rss_of(chosen + [t]), t) for t in candidates if t not in chosen]
        trials = [(r, t) for (r, ok), t in trials if ok]
        step = {"stage": 2, "action": "even part compared with the error",
                "terms": list(chosen), "f": round(F, 6), "df": [df_lof, err_df],
                "p_value": round(p_lof, 6)}
        steps.append(step)
        if not trials:
            break
        best_rss, best = min(trials)
        F1 = (rss - best_rss) / s2
        p1 = float(stats.f.sf(F1, 1, err_df))
        step.update(best_next=best, best_next_p_value=round(p1, 6))
        # a term enters when it alone explains more than the error would
        if p1 >= alpha:
            break
        rss = best_rss
        chosen.append(best)
        steps.append({"stage": 2, "action": f"{best} added", "terms": list(chosen)})
    labels = [names[j] for j in act] + chosen
    M = np.column_stack([np.ones(len(y))] + [X[:, j] for j in act]
                        + [candidates[t] for t in chosen] + blocks)
    beta, *_ = np.linalg.lstsq(M, y, rcond=None)
    return {"active_main": [names[j] for j in act], "active_second_order": chosen,
            "error_sd": None if not np.isfinite(s2) else round(float(np.sqrt(s2)), 6),
            "error_df": int(err_df), "error_source": source,
            "steps": steps, "pairs": n, "centre_runs": len(centre),
            "blocks": len(blocks) + 1,
            "coefficients": {t: round(float(v), 6)
                             for t, v in zip(["intercept"] + labels, beta)}}


def screen_response(study, name: str) -> dict | str:
    """The two-stage analysis of a study's response, or why it does not apply."""
    if study.runs is None:
        return "the study has no runs"
    cat = [f.name for f in study.factors if f.is_categorical]
    if cat:
        return (f"categorical factor '{cat[0]}': the screening analysis here takes "
                "numeric factors only")
    column = study.block_column
    values = study.runs[name].to_numpy(dtype=float) if name in study.runs else None
    if values is None:
        return f"response '{name}' has no column in the runs"
    keep = np.isfinite(values)
    if not keep.all():
        return f"{int((~keep).sum())} run(s) have no value of '{name}'"
    X = study.coded().to_numpy(float)
    return screen_runs(X, values, [f.name for f in study.factors],
                       alpha=1 - study.confidence,
                       block=None if column is None else study.runs[column].to_numpy())
