"""Lines of equal response over two factors, and the limits map.

A contour plot draws a response as lines of equal value across two factors,
the others held. The lines are traced by contourpy (marching squares over a
grid of predictions evaluated in one batch), never by hand.

The limits map draws each response's limit as its own boundary line, with
short ticks on the side where that limit fails, and outlines the part of the
map where every limit (and every rule among factors) holds.

Every function returns tidy DataFrames with fixed, documented columns in
natural units, so the workbench and the report only draw them.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import StudyError
from ..search.desirability import limits

__all__ = ["round_levels", "held_settings", "contour_lines", "LimitsMap", "limits_map",
           "limit_bounds", "tick_marks"]

# Grid points per axis: the lines are interpolated between grid points, so the
# error of a vertex is at most h**2/8 times the response's curvature (h the
# grid step); 61 points keep it far below the noise of any fitted model.
GRID = 61


def round_levels(low: float, high: float, about: int = 6) -> np.ndarray:
    """About ``about`` round numbers strictly inside ``low .. high``.

    The step is 1, 2, 2.5 or 5 times a power of ten (common practice for axis
    ticks), chosen so the number of levels is closest to ``about``.
    """
    low, high = float(low), float(high)
    if not (np.isfinite(low) and np.isfinite(high)) or high <= low:
        return np.array([])
    best = None
    for power in range(int(np.floor(np.log10(high - low))) - 2,
                       int(np.floor(np.log10(high - low))) + 2):
        for mult in (1.0, 2.0, 2.5, 5.0):
            step = mult * 10.0 ** power
            first = np.floor(low / step) + 1
            last = np.ceil(high / step) - 1
            count = int(last - first + 1)
            if count < 1:
                continue
            score = abs(count - about)
            if best is None or score < best[0]:
                best = (score, step, first, last)
    if best is None:
        return np.array([(low + high) / 2])
    _, step, first, last = best
    levels = np.arange(first, last + 1) * step
    # round away binary noise (0.30000000000000004), keeping the step's digits
    digits = max(0, -int(np.floor(np.log10(step))) + 2)
    return np.round(levels, digits)


def held_settings(study, x: str, y: str, fixed: dict | None = None) -> dict:
    """Settings of the factors other than ``x`` and ``y``.

    ``fixed`` gives natural settings (level names for categorical factors);
    a factor it leaves out is held at its centre (numeric) or its first
    level (categorical).
    """
    fixed = dict(fixed or {})
    unknown = [k for k in fixed if k not in study.factor_names]
    if unknown:
        raise StudyError(f"fixed names unknown factor(s) {unknown}: the study's factors "
                         f"are {study.factor_names}")
    held = {}
    for f in study.factors:
        if f.name in (x, y):
            continue
        if f.name in fixed:
            value = fixed[f.name]
            if f.is_categorical and value not in f.levels:
                raise StudyError(f"factor '{f.name}': '{value}' is not one of its levels "
                                 f"{list(f.levels)}")
            held[f.name] = value
        else:
            held[f.name] = f.levels[0] if f.is_categorical else f.centre
    return held


def _fitted(study, fit):
    if fit is not None:
        return fit
    from ..model.study_fit import fit_study

    return fit_study(study)


def _trace(xs: np.ndarray, ys: np.ndarray, Z: np.ndarray, levels) -> list[tuple]:
    """(level, vertices) for every polyline of every level, traced by contourpy."""
    import contourpy

    z = np.ma.masked_invalid(Z)
    gen = contourpy.contour_generator(xs, ys, z, name="serial",
                                      line_type=contourpy.LineType.Separate)
    out = []
    for level in levels:
        for vertices in gen.lines(float(level)):
            if len(vertices) >= 2:
                out.append((float(level), np.asarray(vertices, dtype=float)))
    return out


def _tidy(traced: list[tuple], **columns) -> pd.DataFrame:
    """Polylines -> one row per vertex: extra columns, level, line, x, y."""
    names = ["level", "line", "x", "y"]
    if not traced:
        return pd.DataFrame({**{k: pd.Series(dtype=object) for k in columns},
                             **{k: pd.Series(dtype=float) for k in names}})
    lengths = [len(v) for _, v in traced]
    frame = pd.DataFrame({
        "level": np.repeat([lv for lv, _ in traced], lengths),
        "line": np.repeat(np.arange(len(traced)), lengths),
        "x": np.concatenate([v[:, 0] for _, v in traced]),
        "y": np.concatenate([v[:, 1] for _, v in traced])})
    for i, (key, values) in enumerate(columns.items()):
        frame.insert(i, key, np.repeat(values, lengths) if not np.isscalar(values)
                     else values)
    return frame


def _require_model(fit, response: str) -> None:
    """Refuse a response without a fitted model (D, the overall desirability, is always there)."""
    if response != "D" and response not in fit.models:
        reason = fit.skipped.get(response)
        raise StudyError(f"no model for response '{response}'"
                         + (f": {reason}" if reason else
                            f": choose one of {list(fit.models)} or 'D'"))


def _axis_values(study, x: str, y: str, n: int):
    """Grid points along the two factors' searched ranges (checks the factors)."""
    if x == y:
        raise StudyError(f"a map needs two different factors, found '{x}' twice: "
                         "choose another factor")
    fx, fy = study.factor(x), study.factor(y)
    for f in (fx, fy):
        if f.is_categorical:
            raise StudyError(f"factor '{f.name}' is categorical: a map needs numeric "
                             "factors on its axes; hold it at a level instead")
    if n < 2:
        raise StudyError(f"a map needs at least 2 points per axis, found {n}")
    return np.linspace(*fx.search_range, n), np.linspace(*fy.search_range, n)


def _surface(study, fit, name: str, X: np.ndarray) -> np.ndarray:
    """A response's predictions (or D, NaN without goals) at coded points."""
    if name == "D":
        from ..search.problem import goal_columns, overall_desirability

        if not goal_columns(study, fit):
            return np.full(X.shape[0], np.nan)
        return np.asarray(overall_desirability(study, fit, X)[0], dtype=float)
    return np.asarray(fit.models[name].predict(X), dtype=float).ravel()


def _map_points(study, x, y, held, n):
    """(xs, ys, coded (n*n, k) grid): x varies fastest, as contourpy expects."""
    xs, ys = _axis_values(study, x, y, n)
    gx, gy = np.meshgrid(xs, ys, indexing="xy")
    return xs, ys, _coded_points(study, x, y, held, gx.ravel(), gy.ravel())


def contour_lines(study, response: str, x: str, y: str, *, levels=None,
                  fixed: dict | None = None, fit=None, n: int = GRID) -> pd.DataFrame:
    """Lines of equal predicted response over two factors.

    Parameters
    ----------
    study : Study
        With runs loaded.
    response : str
        A modelled response, or ``"D"`` for the overall desirability.
    x, y : str
        Two different numeric factors, spanned over their searched ranges.
    levels : sequence of float, optional
        The values to draw; default about 6 round numbers across the
        predicted range (see ``round_levels``).
    fixed : dict, optional
        Natural settings (level names) of the other factors; see
        ``held_settings`` for the defaults.
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    n : int
        Grid points per axis.

    Returns
    -------
    pandas.DataFrame
        One row per vertex, columns ``level`` (the value the line follows),
        ``line`` (a number per polyline, unique in the table), ``x`` and
        ``y`` (natural settings of the two factors), vertices in drawing order.
    """
    fit = _fitted(study, fit)
    _require_model(fit, response)
    xs, ys, X = _map_points(study, x, y, held_settings(study, x, y, fixed), n)
    Z = _surface(study, fit, response, X).reshape(n, n)
    if np.isnan(Z).all():
        raise StudyError("no goal is set, so there is no overall desirability D to map: "
                         "set a goal for at least one response")
    if levels is None:
        levels = round_levels(np.nanmin(Z), np.nanmax(Z))
    levels = np.sort(np.atleast_1d(np.asarray(levels, dtype=float)))
    return _tidy(_trace(xs, ys, Z, levels))


@dataclass(frozen=True)
class LimitsMap:
    """The limits map over two factors (tables in natural units).

    Attributes
    ----------
    lines : pandas.DataFrame
        Each limit's boundary. Columns ``name`` (response, or the rule's
        label), ``kind`` (``"response"`` or ``"rule"``), ``limit``
        (``"lower"``, ``"upper"`` or ``"rule"``), ``level`` (the limit's
        value; the rule's bound), ``line``, ``x``, ``y``.
    ticks : pandas.DataFrame
        Short ticks along each boundary pointing into the side where that
        limit fails. Columns ``name``, ``limit``, ``x``, ``y`` (on the line),
        ``x2``, ``y2`` (the tick's end, on the failing side).
    region : pandas.DataFrame
        Outline of the part of the map where every limit and rule holds.
        Columns ``line``, ``x``, ``y``; empty when no point, or every point,
        of the map meets them all.
    share : float
        Share of the map's grid points where everything holds (0 .. 1).
    grid : pandas.DataFrame
        The grid behind the map: columns ``x``, ``y`` (natural settings),
        ``D`` (overall desirability; NaN when no goal is set), ``holds``
        (True where every limit and rule holds) and ``margin`` (the smallest
        slack, each scaled by its spread over the map: >= 0 where all hold;
        its zero line is the region's outline).
    """

    lines: pd.DataFrame
    ticks: pd.DataFrame
    region: pd.DataFrame
    share: float
    grid: pd.DataFrame


def _coded_points(study, x: str, y: str, held: dict, px, py) -> np.ndarray:
    """Coded (m, k) settings at natural points (px, py), others held."""
    from ..study.coding import code_values

    cols = []
    m = len(px)
    for f in study.factors:
        if f.name == x:
            cols.append(code_values(f, px))
        elif f.name == y:
            cols.append(code_values(f, py))
        else:
            value = np.array([held[f.name]] * m, dtype=object if f.is_categorical
                             else float)
            cols.append(code_values(f, value))
    return np.column_stack(cols)


def _slack(study, fit, X: np.ndarray, bounds: list[tuple]) -> np.ndarray:
    """(m, len(bounds)) slack of each limit/rule at coded points: >= 0 where it holds."""
    from ..study.constraints import rule_arrays

    out = np.empty((X.shape[0], len(bounds)))
    preds = {}
    A, b = rule_arrays(study) if any(k == "rule" for _, k, *_ in bounds) else (None, None)
    for j, (name, kind, limit, value, index) in enumerate(bounds):
        if kind == "rule":
            out[:, j] = b[index] - X @ A[index]
            continue
        if name not in preds:
            preds[name] = np.asarray(fit.models[name].predict(X), dtype=float).ravel()
        out[:, j] = preds[name] - value if limit == "lower" else value - preds[name]
    return out


def limit_bounds(study, fit) -> list[tuple]:
    """Every finite limit of a response with a goal and a model, then every rule.

    Each item is ``(name, kind, limit, value, rule index)``: kind
    ``"response"`` (limit ``"lower"`` or ``"upper"``, index -1) or ``"rule"``
    (the rule's label, its bound and its index among the study's rules).
    """
    from ..study.constraints import study_rules

    bounds = []
    for r in study.responses:
        if r.name not in fit.models or not r.goal.active:
            continue
        lo, hi = limits(r.goal)
        if np.isfinite(lo):
            bounds.append((r.name, "response", "lower", float(lo), -1))
        if np.isfinite(hi):
            bounds.append((r.name, "response", "upper", float(hi), -1))
    for i, rule in enumerate(study_rules(study)):
        label = getattr(rule, "label", None) or getattr(rule, "text", None) or f"rule {i + 1}"
        bounds.append((str(label), "rule", "rule", float(rule.bound), i))
    return bounds


def limits_map(study, x: str, y: str, *, fixed: dict | None = None, fit=None,
               n: int = GRID, tick_every: float = 0.05,
               tick_length: float = 0.018) -> LimitsMap:
    """Each response's limits, the study's rules and the region where all hold.

    Parameters
    ----------
    study, x, y, fixed, fit, n
        As for ``contour_lines``. Responses with a goal and a model take part
        (their lower and upper limits, where finite).
    tick_every, tick_length : float
        Spacing and length of the failing-side ticks, as shares of the map's
        width and height (so ticks look the same on any axes).

    Returns
    -------
    LimitsMap
    """
    fit = _fitted(study, fit)
    held = held_settings(study, x, y, fixed)
    xs, ys, X = _map_points(study, x, y, held, n)
    span = np.array([xs[-1] - xs[0], ys[-1] - ys[0]])
    gx, gy = np.meshgrid(xs, ys, indexing="xy")
    grid = pd.DataFrame({"x": gx.ravel(), "y": gy.ravel(), "D": _surface(study, fit, "D", X)})

    bounds = limit_bounds(study, fit)

    slack = _slack(study, fit, X, bounds) if bounds else np.empty((n * n, 0))
    traced, names, kinds, lims = [], [], [], []
    for j, (name, kind, limit, value, _) in enumerate(bounds):
        Z = slack[:, j].reshape(n, n)
        for _, verts in _trace(xs, ys, Z, [0.0]):
            traced.append((value, verts))
            names.append(name)
            kinds.append(kind)
            lims.append(limit)
    lines = _tidy(traced, name=np.array(names, dtype=object),
                  kind=np.array(kinds, dtype=object), limit=np.array(lims, dtype=object))
    lines = lines[["name", "kind", "limit", "level", "line", "x", "y"]]

    ticks = _ticks(study, fit, x, y, held, bounds, traced, names, lims, span,
                   tick_every, tick_length)

    # The region where everything holds: the zero line of the smallest slack,
    # each slack scaled by its spread over the map so no limit dominates.
    if bounds:
        scale = np.ptp(slack, axis=0)
        scale[scale == 0] = 1.0
        margin = (slack / scale).min(axis=1)
        inside = margin >= 0
        share = float(inside.mean())
        region = (_tidy(_trace(xs, ys, margin.reshape(n, n), [0.0]))
                  if 0 < share < 1 else _tidy([]))
        region = region[["line", "x", "y"]]
        grid["holds"], grid["margin"] = inside, margin
    else:
        share, region = 1.0, _tidy([])[["line", "x", "y"]]
        grid["holds"], grid["margin"] = True, np.inf
    return LimitsMap(lines=lines, ticks=ticks, region=region, share=share, grid=grid)


def _ticks(study, fit, x, y, held, bounds, traced, names, lims, span, every, length):
    """Ticks spaced ``every`` along each line (in shares of the axes), pointing to
    the side where the line's own limit fails (checked by predicting there)."""
    by_name = {(b[0], b[2]): j for j, b in enumerate(bounds)}
    index = [by_name[(name, limit)] for name, limit in zip(names, lims)]

    def slack_at(points, J):
        X = _coded_points(study, x, y, held, points[:, 0], points[:, 1])
        return _slack(study, fit, X, bounds)[np.arange(len(J)), J]

    start, ends, J = tick_marks(traced, index, span, every, length, slack_at)
    return pd.DataFrame({"name": [bounds[j][0] for j in J],
                         "limit": [bounds[j][2] for j in J],
                         "x": start[:, 0], "y": start[:, 1],
                         "x2": ends[:, 0], "y2": ends[:, 1]})


def tick_marks(traced, index, span, every, length, slack_at):
    """Feet and ends of short ticks along polylines, on each line's failing side.

    Parameters
    ----------
    traced : list of (level, vertices (m, 2))
        The polylines (plotting coordinates).
    index : list of int
        For each polyline, the number of the limit it draws (passed back to
        ``slack_at``).
    span : array (2,)
        The plot's width and height: spacing and length are shares of these,
        so ticks look alike on any axes.
    every, length : float
        Spacing along the line and length of each tick (shares of ``span``).
    slack_at : callable (points (m, 2), limit numbers (m,)) -> (m,)
        Each limit's slack at plotting points: >= 0 where it holds.

    Returns
    -------
    (feet (t, 2), ends (t, 2), limit numbers (t,)) in plotting coordinates.
    """
    span = np.asarray(span, dtype=float)
    rows_p, rows_n, rows_j = [], [], []
    for (_, verts), j in zip(traced, index):
        u = verts / span
        seg = np.diff(u, axis=0)
        seg_len = np.hypot(seg[:, 0], seg[:, 1])
        keep = seg_len > 0
        if not keep.any():
            continue
        seg, seg_len = seg[keep], seg_len[keep]
        start = u[:-1][keep]
        total = seg_len.sum()
        at = np.arange(every / 2, total, every)
        if at.size == 0:
            at = np.array([total / 2])
        cum = np.concatenate([[0.0], np.cumsum(seg_len)])
        k = np.clip(np.searchsorted(cum, at, side="right") - 1, 0, len(seg) - 1)
        frac = (at - cum[k]) / seg_len[k]
        rows_p.append(start[k] + seg[k] * frac[:, None])
        rows_n.append(np.column_stack([-seg[k, 1], seg[k, 0]]) / seg_len[k][:, None])
        rows_j.append(np.full(len(k), j))
    if not rows_p:
        return np.empty((0, 2)), np.empty((0, 2)), np.empty(0, dtype=int)
    P, N, J = np.concatenate(rows_p), np.concatenate(rows_n), np.concatenate(rows_j)
    slack = np.asarray(slack_at((P + N * length) * span, J), dtype=float)
    # slack >= 0 on the probe's side means that side passes: tick the other way
    sign = np.where(slack >= 0, -1.0, 1.0)[:, None]
    return P * span, (P + sign * N * length) * span, J
