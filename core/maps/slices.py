"""Slices through a chosen setting, and interaction charts from the model.

A slice moves one factor across its searched range with every other factor
held at the chosen settings (a blend component moves with the other
components keeping their ratios, so the blend still adds up), and follows each response's prediction with its
prediction interval, and the overall desirability D. The model's interaction
table predicts a response at the low/high ends of two factors, the others at
their centre, so an interaction chart drawn from it agrees with the equation.

Both return tidy DataFrames with fixed, documented columns; each is one batch
of predictions (every point of every slice in one array).
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from ..errors import StudyError
from ..search.desirability import limits
from ..study.coding import code_values, level_codes

__all__ = ["slices", "model_interaction"]

SLICE_COLUMNS = ["factor", "value", "level", "coded", "shift", "response", "predicted",
                 "pi_low", "pi_high", "lower_limit", "upper_limit", "current"]


def _shared_axis(f, values: np.ndarray, levels: np.ndarray) -> np.ndarray:
    """Where each point sits on an axis every factor shares: -1 at the low end of
    the factor's range, +1 at the high end (coded units, common practice); a
    blend component over its own range of amounts; the levels of a categorical
    factor spread evenly from -1 to +1 in the study's order."""
    if f.is_categorical:
        position = {lv: i for i, lv in enumerate(f.levels)}
        n = max(len(f.levels) - 1, 1)
        return np.array([-1.0 + 2.0 * position[lv] / n for lv in levels])
    return 2.0 * (np.asarray(values, dtype=float) - f.low) / (f.high - f.low) - 1.0


def _fitted(study, fit):
    if fit is not None:
        return fit
    from ..model.study_fit import fit_study

    return fit_study(study)


def _blend_slice(study, settings: dict, f, n: int):
    """A blend component's slice: it moves across its range while the other
    components keep their ratios to each other (Cox's direction; Cornell
    (2002), Experiments with Mixtures, 3rd ed., sec. 5.8), so every blend on
    the slice still adds up to the total. Returns (amounts of ``f``, coded
    column index -> coded values of every component), or None when the
    current blend is ``f`` alone (no direction to move in)."""
    from ..study.mixture import components_of
    from .mixture_tables import cox_direction

    comps = components_of(study)
    total = comps[0].total
    amounts = np.array([float(settings[c.name]) for c in comps])
    shares = amounts / amounts.sum()
    i = [c.name for c in comps].index(f.name)
    try:
        a = cox_direction(shares, i)
    except StudyError:
        return None
    # the component's own range; at the ends the others may leave their bounds
    # (a blend at a corner of the region has no room otherwise), but every blend
    # on the slice adds up to the total
    t_lo, t_hi = f.low / total - shares[i], f.high / total - shares[i]
    t = np.unique(np.concatenate([np.linspace(min(t_lo, 0.0), max(t_hi, 0.0), n), [0.0]]))
    P = (shares[None, :] + t[:, None] * a[None, :]) * total
    index = {g.name: k for k, g in enumerate(study.factors)}
    columns = {index[c.name]: code_values(c, P[:, k]) for k, c in enumerate(comps)}
    return P[:, i], columns


def slices(study, settings: dict, *, fit=None, n: int = 41) -> pd.DataFrame:
    """Each response's prediction (and D) along each factor, the others held.

    Parameters
    ----------
    study : Study
    settings : dict
        Natural settings (level names for categorical factors) of every
        factor: the point the slices pass through, typically a chosen solution.
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    n : int
        Points along each numeric factor's searched range (the current
        setting is added when it is not among them).

    Returns
    -------
    pandas.DataFrame
        Columns ``factor``; ``value`` (natural setting along a numeric factor,
        NaN for a categorical one); ``level`` (the level name along a
        categorical factor, empty otherwise); ``coded`` (the point on an axis
        every factor shares: -1 at the low end of its range, +1 at the high
        end; the levels of a categorical factor evenly from -1 to +1);
        ``shift`` (``coded`` minus its value at the held setting: the response
        trace plot's axis, 0 at the held point); ``response`` (a modelled
        response, or ``"D"``); ``predicted``; ``pi_low`` and ``pi_high`` (the
        prediction interval of one new batch at the study's confidence; NaN
        for D and without an error estimate); ``lower_limit`` and
        ``upper_limit`` (the goal's limits, NaN when unbounded or no goal);
        ``current`` (True at the held setting). Along a blend component the
        other components keep their ratios to each other (the blend still adds
        up to the total) and ``value`` spans the component's low to high.
    """
    from ..search.problem import goal_columns, overall_desirability

    fit = _fitted(study, fit)
    missing = [f.name for f in study.factors if f.name not in settings]
    if missing:
        raise StudyError(f"no setting given for factor(s) {missing}: a slice holds every "
                         "other factor at a setting")
    base = np.array([code_values(f, np.array([settings[f.name]],
                                              dtype=object if f.is_categorical else float))[0]
                     for f in study.factors])
    blocks, meta = [], []
    for j, f in enumerate(study.factors):
        blend = _blend_slice(study, settings, f, n) if getattr(f, "is_component", False) \
            else None
        if blend is not None:
            values, columns = blend
            X = np.repeat(base[None, :], len(values), axis=0)
            for k, col in columns.items():
                X[:, k] = col
            levels = np.full(len(values), "", dtype=object)
            now = float(settings[f.name])
            current = np.isclose(values, now, rtol=0, atol=1e-9 * max(1.0, abs(now)))
            blocks.append(X)
            meta.append((f.name, values, levels, current))
            continue
        if f.is_categorical:
            # one point per level, whatever their number (-1/+1 for two levels,
            # the level's position for more: tradeoff.study.coding)
            coded = level_codes(f)
            values = np.full(len(coded), np.nan)
            levels = np.array(list(f.levels), dtype=object)
            current = levels == settings[f.name]
        else:
            lo, hi = f.search_range
            now = float(settings[f.name])
            values = np.unique(np.concatenate([np.linspace(min(lo, now), max(hi, now), n),
                                               [now]]))
            coded = code_values(f, values)
            levels = np.full(len(values), "", dtype=object)
            current = np.isclose(values, now, rtol=0, atol=1e-12 * max(1.0, abs(now)))
        X = np.repeat(base[None, :], len(coded), axis=0)
        X[:, j] = coded
        blocks.append(X)
        meta.append((f.name, values, levels, current))
    X = np.vstack(blocks)
    sizes = [len(m[1]) for m in meta]
    coded_parts = [_shared_axis(study.factor(m[0]), m[1], m[2]) for m in meta]
    # the response trace plot's axis: each factor's move away from the held
    # setting, so every trace passes through the held point at 0
    shift_col = np.concatenate([c - c[m[3]][0] if m[3].any() else np.full(len(c), np.nan)
                                for m, c in zip(meta, coded_parts)])
    coded_col = np.concatenate(coded_parts)
    factor_col = np.repeat([m[0] for m in meta], sizes)
    value_col = np.concatenate([m[1] for m in meta])
    level_col = np.concatenate([m[2] for m in meta])
    current_col = np.concatenate([m[3] for m in meta])

    frames = []
    for r in study.responses:
        if r.name not in fit.models:
            continue
        table = fit.models[r.name].intervals(X)
        lo, hi = limits(r.goal) if r.goal.active else (np.nan, np.nan)
        frames.append(pd.DataFrame({
            "factor": factor_col, "value": value_col, "level": level_col,
            "coded": coded_col, "shift": shift_col, "response": r.name, "predicted": table["predicted"].to_numpy(),
            "pi_low": table["pi_low"].to_numpy(), "pi_high": table["pi_high"].to_numpy(),
            "lower_limit": lo if np.isfinite(lo) else np.nan,
            "upper_limit": hi if np.isfinite(hi) else np.nan,
            "current": current_col}))
    if goal_columns(study, fit):
        D = overall_desirability(study, fit, X)[0]
        frames.append(pd.DataFrame({
            "factor": factor_col, "value": value_col, "level": level_col,
            "coded": coded_col, "shift": shift_col, "response": "D",
            "predicted": D, "pi_low": np.nan, "pi_high": np.nan, "lower_limit": np.nan,
            "upper_limit": np.nan, "current": current_col}))
    if not frames:
        return pd.DataFrame({c: [] for c in SLICE_COLUMNS})
    return pd.concat(frames, ignore_index=True)[SLICE_COLUMNS]


def _ends(factor) -> tuple[np.ndarray, list]:
    """Where an interaction chart reads a factor: coded values and what they mean.

    A numeric factor and a two-level categorical one at their low and high
    ends (-1, +1); a categorical factor of three or more levels at every level
    (coded by position, as ``tradeoff.study.coding`` does).
    """
    if factor.is_categorical:
        return level_codes(factor), list(factor.levels)
    return np.array([-1.0, 1.0]), [factor.low, factor.high]


def _averaged_intervals(model, X: np.ndarray, groups: int, level: float) -> pd.DataFrame:
    """The model's mean averaged over consecutive blocks of rows, with its interval.

    ``X`` holds ``groups`` blocks of equal size; each block is one chart point
    with a categorical factor of three or more levels spread over all its
    levels. The average is taken on the modelling scale (where a coefficient
    of sum-to-zero columns is read: the average over levels is the level
    columns at 0), its standard error from the covariance of the block's
    fitted means, and only then is it turned back to natural units.
    """
    from scipy import stats

    m = len(X) // groups
    mean, _, sigma, df = model.predictive(X)
    avg = mean.reshape(groups, m).mean(axis=1)
    se = np.array([np.sqrt(max(float(model.mean_covariance(X[g * m:(g + 1) * m],
                                                             X[g * m:(g + 1) * m]).sum()),
                               0.0)) / m for g in range(groups)])
    q = float(stats.t.ppf(0.5 + level / 2, df)) if df > 0 and sigma == sigma else np.nan
    back = model.inverse_transform
    return pd.DataFrame({"predicted": back(avg), "ci_low": back(avg - q * se),
                         "ci_high": back(avg + q * se)})


def model_interaction(study, response: str, a: str, b: str, *, fit=None) -> pd.DataFrame:
    """The model's prediction at each end (or level) of two factors, others at centre.

    A numeric or two-level factor is read at its low and high ends (coded
    -1, +1); a categorical factor of three or more levels at every level, so
    its chart has a line (or a point on each line) per level. The other
    factors sit at coded 0: the centre of a numeric factor, the average of a
    two-level factor's levels; a factor of three or more levels is averaged
    over its levels (its sum-to-zero columns at 0). That is how the
    coefficients of a coded model are read, so the chart follows the fitted
    equation.

    Returns
    -------
    pandas.DataFrame
        One row per combination (four for two numeric factors), ``b``
        varying fastest. Columns ``a_level`` and ``b_level`` (natural setting
        or level name), ``a_coded`` and ``b_coded`` (-1 or +1, or the level's
        position for three or more levels), ``predicted``, ``ci_low`` and
        ``ci_high`` (the confidence interval of the mean at the study's
        confidence; NaN without an error estimate).
    """
    import itertools

    if a == b:
        raise StudyError(f"an interaction chart needs two different factors, found "
                         f"'{a}' twice: choose another factor")
    fit = _fitted(study, fit)
    fa, fb = study.factor(a), study.factor(b)
    if response not in fit.models:
        reason = fit.skipped.get(response, "it is not modelled")
        raise StudyError(f"no model for response '{response}': {reason}")
    ia, ib = study.factor_names.index(a), study.factor_names.index(b)
    (ca_ends, a_names), (cb_ends, b_names) = _ends(fa), _ends(fb)
    ca = np.repeat(ca_ends, len(cb_ends))
    cb = np.tile(cb_ends, len(ca_ends))
    a_level = list(np.repeat(np.array(a_names, dtype=object), len(cb_ends)))
    b_level = list(np.tile(np.array(b_names, dtype=object), len(ca_ends)))
    model = fit.models[response]
    # the other factors of three or more levels, averaged over every level combination
    spread = [j for j, f in enumerate(study.factors) if j not in (ia, ib)
              and f.is_categorical and len(f.levels) > 2]
    combos = list(itertools.product(*[level_codes(study.factors[j]) for j in spread]))
    X = np.zeros((len(ca) * len(combos), len(study.factors)))
    X[:, ia], X[:, ib] = np.repeat(ca, len(combos)), np.repeat(cb, len(combos))
    if spread:
        X[:, spread] = np.tile(np.array(combos, dtype=float), (len(ca), 1))
        table = _averaged_intervals(model, X, len(ca), study.confidence)
    else:
        table = model.intervals(X)
    return pd.DataFrame({"a_level": a_level, "b_level": b_level,
                         "a_coded": ca, "b_coded": cb,
                         "predicted": table["predicted"].to_numpy(),
                         "ci_low": table["ci_low"].to_numpy(),
                         "ci_high": table["ci_high"].to_numpy()})
