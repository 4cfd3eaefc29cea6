"""Ternary maps of a blend: contour lines and the limits map in the triangle.

Three components of a blend are drawn in a triangle, each corner the blend
richest in one of them, the other components (if any) and the process
factors held. The triangle spans the blends where each of the three is at
least its low (the L-pseudo-component triangle, Cornell (2002), Experiments
with Mixtures, 3rd ed., sec. 3.3), which holds every blend the study allows;
the highs cut the allowed region out of it (``ternary_region``).

The lines are traced by contourpy over ``ternary_grid``'s blends laid out on a
square grid in two of the triangle's coordinates (a, b): the points with
a + b > 1 are masked, and contourpy's corner masking contours each half-cell
along the hypotenuse as a triangle, so the lines reach the triangle's edges.
Every vertex is then carried to shares, amounts and plotting coordinates.

Plotting coordinates: the first component's corner at the top (0.5, sqrt(3)/2),
the second's bottom left (0, 0), the third's bottom right (1, 0); with (a, b, c)
the triangle's own coordinates (adding up to 1), x = a / 2 + c and
y = a * sqrt(3) / 2. Equal units on both axes keep the triangle equilateral.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from ..errors import StudyError
from .contours import (_fitted, _require_model, _slack, _tidy, _trace, limit_bounds,
                       round_levels, tick_marks)
from .mixture_tables import (_coded, _process_settings, blend_inside, ternary_grid,
                             ternary_setup)

__all__ = ["HEIGHT", "three_with_room", "to_plot", "from_plot", "ternary_points", "ternary_lines",
           "ternary_region", "ternary_position", "TernaryLimits", "ternary_limits"]

HEIGHT = float(np.sqrt(3.0) / 2.0)  # the triangle's height (its side is 1)
# Grid lines per side: a vertex errs by at most h**2/8 times the curvature
# along the cell's edge (h = room / STEPS of a share), far below any model's noise.
STEPS = 90
SHARES = ["first_share", "second_share", "third_share"]


def three_with_room(study, reference: dict | None = None) -> list[str]:
    """The three components a triangle maps at a reference blend.

    The study's first three, unless the others, held at the reference, leave
    them no room above their lows (a recommendation at one component's high
    does that). Then the three with the most room above their lows: holding
    the components nearest their lows leaves the largest triangle, and it has
    room whenever the reference blend lies off its lows.
    """
    from .mixture_tables import _require_components, reference_blend

    comps = _require_components(study)
    names = [c.name for c in comps]
    if len(comps) <= 3:
        return names[:3]
    ref = reference_blend(study, reference)
    excess = {c.name: ref[c.name] - max(c.low, 0.0) for c in comps}
    total = comps[0].total

    def room(three):
        return sum(excess[n] for n in three) / total

    first = names[:3]
    if room(first) > 0.02:
        return first
    roomiest = sorted(names, key=lambda n: -excess[n])[:3]
    return [n for n in names if n in roomiest] if room(roomiest) > room(first) else first


def to_plot(a, b, c) -> tuple[np.ndarray, np.ndarray]:
    """The triangle's own coordinates (a, b, c; adding up to 1) -> plotting x, y."""
    a = np.asarray(a, dtype=float)
    return a / 2.0 + np.asarray(c, dtype=float), a * HEIGHT


def from_plot(x, y) -> np.ndarray:
    """Plotting x, y -> (m, 3) triangle coordinates (a, b, c)."""
    a = np.asarray(y, dtype=float) / HEIGHT
    c = np.asarray(x, dtype=float) - a / 2.0
    return np.column_stack([a, 1.0 - a - c, c])


class _Triangle:
    """One map's triangle: converts its coordinates to shares, amounts and coded
    settings (the three mapped components, the others held, process factors set)."""

    def __init__(self, study, components, reference, settings, zoom):
        setup = ternary_setup(study, components, reference, zoom)
        self.study = study
        self.names = setup["names"]
        self.components = setup["components"]
        self.held = setup["held"]
        self.rest = setup["rest"]
        self.lows = setup["lows"]
        self.room = setup["room"]
        self.proc = _process_settings(study, settings)

    def shares(self, T: np.ndarray) -> np.ndarray:
        """(m, 3) triangle coordinates -> shares of ``rest`` of the three."""
        return self.lows + self.room * np.asarray(T, dtype=float)

    def coords(self, S: np.ndarray) -> np.ndarray:
        """(m, 3) shares of the three -> triangle coordinates."""
        return (np.asarray(S, dtype=float) - self.lows) / self.room

    def amounts(self, S: np.ndarray) -> pd.DataFrame:
        """Every component's amount (study units) at shares ``S`` of the three."""
        S = np.asarray(S, dtype=float)
        return pd.DataFrame({n: np.full(len(S), self.held[n]) if n in self.held
                             else S[:, self.components.index(n)] * self.rest
                             for n in self.names})

    def coded(self, S: np.ndarray) -> np.ndarray:
        table = self.amounts(S)
        for name, value in self.proc.items():
            table[name] = [value] * len(table)
        return _coded(self.study, table)

    def inside(self, S: np.ndarray) -> np.ndarray:
        """Within every component's bounds and every rule of the study."""
        return blend_inside(self.study, self.amounts(S)[self.names].to_numpy(float),
                            self.coded(S))

    def vertices(self, T: np.ndarray, **first) -> pd.DataFrame:
        """Rows for points in triangle coordinates: the given columns, the three
        shares, every component's amount, inside, x, y."""
        T = np.clip(np.asarray(T, dtype=float), 0.0, 1.0)
        S = self.shares(T)
        S = S / S.sum(axis=1, keepdims=True)
        out = pd.DataFrame(first)
        for j, col in enumerate(SHARES):
            out[col] = S[:, j]
        amounts = self.amounts(S)
        for n in self.names:
            out[n] = amounts[n].to_numpy(float)
        out["inside"] = self.inside(S)
        out["x"], out["y"] = to_plot(T[:, 0], T[:, 1], T[:, 2])
        return out

    def attrs(self) -> dict:
        return {"components": tuple(self.components), "held": dict(self.held),
                "rest": self.rest, "lows": tuple(float(v) for v in self.lows),
                "room": self.room}


def _square(grid: pd.DataFrame, steps: int, value: np.ndarray):
    """``ternary_grid``'s blends (first share i, second share j) on a square grid
    in the triangle's coordinates a = i / steps (x) and b = j / steps (y);
    the points outside the triangle (a + b > 1) masked."""
    Z = np.full((steps + 1, steps + 1), np.nan)
    i = np.repeat(np.arange(steps + 1), np.arange(steps + 1, 0, -1))
    j = np.concatenate([np.arange(steps + 1 - k) for k in range(steps + 1)])
    Z[j, i] = value
    axis = np.linspace(0.0, 1.0, steps + 1)
    return axis, axis, Z


def _with_order(lines: pd.DataFrame) -> pd.DataFrame:
    lines.insert(lines.columns.get_loc("line") + 1, "i",
                 lines.groupby("line", sort=False).cumcount().to_numpy())
    return lines


def _lines_table(tri: _Triangle, traced: list[tuple], **columns) -> pd.DataFrame:
    """Traced polylines in (a, b) -> tidy rows with shares, amounts and x, y."""
    flat = _tidy(traced, **columns)
    if flat.empty:
        T = np.empty((0, 3))
    else:
        a, b = flat["x"].to_numpy(float), flat["y"].to_numpy(float)
        T = np.column_stack([a, b, 1.0 - a - b])
    keys = {k: flat[k].to_numpy() for k in flat.columns if k not in ("x", "y")}
    return _with_order(tri.vertices(T, **keys))


def _surface(grid: pd.DataFrame, response: str) -> np.ndarray:
    if response == "D":
        part = grid[grid["response"] == grid["response"].iloc[0]]
        return part["D"].to_numpy(float)
    return grid.loc[grid["response"] == response, "predicted"].to_numpy(float)


def ternary_lines(study, response: str, components=None, *, levels=None,
                  reference: dict | None = None, settings: dict | None = None,
                  fit=None, steps: int = STEPS, zoom: bool = True) -> pd.DataFrame:
    """Lines of equal predicted response (or D) over a blend of three components.

    Parameters
    ----------
    study : Study
        A blend study (with ``[[components]]``) with runs loaded.
    response : str
        A modelled response, or ``"D"`` for the overall desirability.
    components : three component names (default: the study's first three).
    levels : sequence of float, optional
        The values to draw; default about 6 round numbers across the range
        predicted over the blends the study allows (``round_levels``).
    reference, settings : dict, optional
        As for ``ternary_grid``: the amounts the other components are held at
        (default the region's centroid) and the process factors' settings.
    fit : StudyFit, optional
        Fitted models (fitted here when omitted).
    steps : int
        Grid lines per side of the triangle.
    zoom : bool
        True (default): the triangle spans the blends where each of the
        three is at least its low; False: the whole triangle.

    Returns
    -------
    pandas.DataFrame
        One row per vertex, in drawing order: ``level``, ``line`` (a number per
        polyline), ``i`` (the vertex's place on its line), ``first_share``,
        ``second_share``, ``third_share`` (shares of what the three split;
        they add up to 1), one column per component with its amount (study
        units), ``inside`` (within every bound and rule), ``x``, ``y``
        (plotting coordinates, see the module's notes). ``attrs`` holds
        ``components``, ``held``, ``rest``, ``lows`` and ``room``.
    """
    fit = _fitted(study, fit)
    _require_model(fit, response)
    tri = _Triangle(study, components, reference, settings, zoom)
    if not fit.models:
        raise StudyError("no fitted model to map: fit the responses first")
    grid = ternary_grid(study, fit, tri.components, reference=reference,
                        settings=settings, steps=steps, zoom=zoom)
    value = _surface(grid, response)
    if np.isnan(value).all():
        raise StudyError("no goal is set, so there is no overall desirability D to map: "
                         "set a goal for at least one response")
    if levels is None:
        inside = grid.loc[grid["response"] == grid["response"].iloc[0], "inside"]
        seen = value[inside.to_numpy(bool)] if inside.any() else value
        levels = round_levels(np.nanmin(seen), np.nanmax(seen))
    levels = np.sort(np.atleast_1d(np.asarray(levels, dtype=float)))
    xs, ys, Z = _square(grid, steps, value)
    out = _lines_table(tri, _trace(xs, ys, Z, levels))
    out.attrs.update(tri.attrs())
    return out


def ternary_region(study, components=None, *, reference: dict | None = None,
                   zoom: bool = True) -> pd.DataFrame:
    """Outline of the blends within every component's bounds, in the triangle.

    Closed form: the corners of {low <= amount <= high, the three adding up
    to what the others leave} (McLean and Anderson's extreme vertices, see
    ``extreme_vertices``), in order around the region and closed (the first
    corner repeated). Rules among factors are drawn by ``ternary_limits``.

    Returns
    -------
    pandas.DataFrame
        Columns ``i``, the three shares, one amount column per component,
        ``inside``, ``x``, ``y``; empty when the held components leave no
        blend within the bounds.
    """
    from ..study.mixture import components_of
    from ..study.mixture_region import extreme_vertices

    tri = _Triangle(study, components, reference, None, zoom)
    by_name = {c.name: c for c in components_of(study)}
    lo = [max(by_name[n].low, 0.0) for n in tri.components]
    hi = [min(by_name[n].high, tri.rest) for n in tri.components]
    try:
        V = extreme_vertices(lo, hi, tri.rest) / tri.rest
    except StudyError:
        V = np.empty((0, 3))
    if len(V) < 3:
        out = tri.vertices(np.empty((0, 3)), i=np.empty(0, dtype=int))
        out.attrs.update(tri.attrs())
        return out
    T = tri.coords(V)
    x, y = to_plot(T[:, 0], T[:, 1], T[:, 2])
    order = np.argsort(np.arctan2(y - y.mean(), x - x.mean()))
    T = T[np.append(order, order[0])]
    out = tri.vertices(T, i=np.arange(len(T)))
    out.attrs.update(tri.attrs())
    return out


def ternary_position(study, amounts, components=None, *, reference: dict | None = None,
                     zoom: bool = True) -> pd.DataFrame:
    """Where blends sit in the triangle (for marking solutions).

    ``amounts``: a DataFrame (or list of dicts) with the three mapped
    components' amounts; their shares of what the three add up to place each
    blend. Returns the three shares and ``x``, ``y``, one row per blend.
    """
    tri = _Triangle(study, components, reference, None, zoom)
    table = pd.DataFrame(amounts)
    missing = [n for n in tri.components if n not in table.columns]
    if missing:
        raise StudyError(f"no amount for {', '.join(missing)}: give the three mapped "
                         "components' amounts")
    A = table[tri.components].to_numpy(float)
    S = A / A.sum(axis=1, keepdims=True)
    T = tri.coords(S)
    x, y = to_plot(T[:, 0], T[:, 1], T[:, 2])
    return pd.DataFrame({SHARES[0]: S[:, 0], SHARES[1]: S[:, 1], SHARES[2]: S[:, 2],
                         "x": x, "y": y})


@dataclass(frozen=True)
class TernaryLimits:
    """The limits map in the triangle (plotting coordinates and blends).

    Attributes
    ----------
    lines : pandas.DataFrame
        Each limit's boundary: ``name``, ``kind`` (``"response"`` or
        ``"rule"``), ``limit`` (``"lower"``, ``"upper"``, ``"rule"``),
        ``level``, ``line``, ``i``, the three shares, the amounts, ``inside``,
        ``x``, ``y``.
    ticks : pandas.DataFrame
        Short ticks on each boundary's failing side: ``name``, ``limit``,
        ``x``, ``y`` (on the line), ``x2``, ``y2`` (the tick's end).
    region : pandas.DataFrame
        Outline of the blends within every bound and rule where every limit
        holds: columns as ``lines`` without name, kind, limit and level.
    bounds : pandas.DataFrame
        Outline of the blends within the components' bounds
        (``ternary_region``).
    share : float
        Share of the allowed blends on the grid where every limit holds.
    grid : pandas.DataFrame
        The blends behind the map: ``point``, the shares, the amounts,
        ``inside``, ``x``, ``y``, ``D`` (NaN without goals).
    """

    lines: pd.DataFrame
    ticks: pd.DataFrame
    region: pd.DataFrame
    bounds: pd.DataFrame
    share: float
    grid: pd.DataFrame


def ternary_limits(study, components=None, *, reference: dict | None = None,
                   settings: dict | None = None, fit=None, steps: int = STEPS,
                   zoom: bool = True, tick_every: float = 0.05,
                   tick_length: float = 0.018) -> TernaryLimits:
    """Each response's limits, the rules and the blends where all hold, in the triangle.

    Parameters are as for ``ternary_lines``; ``tick_every`` and
    ``tick_length`` are shares of the triangle's side. Responses with a goal
    and a model take part (their finite lower and upper limits).
    """
    fit = _fitted(study, fit)
    tri = _Triangle(study, components, reference, settings, zoom)
    if not fit.models:
        raise StudyError("no fitted model to map: fit the responses first")
    grid = ternary_grid(study, fit, tri.components, reference=reference,
                        settings=settings, steps=steps, zoom=zoom)
    base = grid[grid["response"] == grid["response"].iloc[0]]
    S = base[SHARES].to_numpy(float)
    X = tri.coded(S)
    bounds = limit_bounds(study, fit)
    slack = _slack(study, fit, X, bounds) if bounds else np.empty((len(S), 0))

    traced, names, kinds, lims, index = [], [], [], [], []
    for j, (name, kind, limit, value, _) in enumerate(bounds):
        xs, ys, Z = _square(grid, steps, slack[:, j])
        for _, verts in _trace(xs, ys, Z, [0.0]):
            traced.append((value, verts))
            names.append(name)
            kinds.append(kind)
            lims.append(limit)
            index.append(j)
    lines = _lines_table(tri, traced, name=np.array(names, dtype=object),
                         kind=np.array(kinds, dtype=object),
                         limit=np.array(lims, dtype=object))

    # ticks in plotting coordinates (equal units on both axes)
    plotted = []
    for (value, verts) in traced:
        px, py = to_plot(verts[:, 0], verts[:, 1], 1.0 - verts[:, 0] - verts[:, 1])
        plotted.append((value, np.column_stack([px, py])))

    def slack_at(points, J):
        T = from_plot(points[:, 0], points[:, 1])
        return _slack(study, fit, tri.coded(tri.shares(T)), bounds)[np.arange(len(J)), J]

    feet, ends, J = tick_marks(plotted, index, (1.0, 1.0), tick_every, tick_length,
                               slack_at)
    ticks = pd.DataFrame({"name": [bounds[j][0] for j in J],
                          "limit": [bounds[j][2] for j in J],
                          "x": feet[:, 0], "y": feet[:, 1],
                          "x2": ends[:, 0], "y2": ends[:, 1]})

    # where everything holds: the zero line of the smallest slack, each scaled by
    # its spread so none dominates; the components' bounds count as limits here
    amounts = base[tri.names].to_numpy(float)
    from ..study.mixture import components_of

    comps = components_of(study)
    lo = np.array([c.low for c in comps])
    hi = np.array([c.high for c in comps])
    all_slack = np.hstack([slack, amounts - lo, hi - amounts])
    scale = np.ptp(all_slack, axis=0)
    scale[scale == 0] = 1.0
    margin = (all_slack / scale).min(axis=1)
    allowed = base["inside"].to_numpy(bool)
    holds = margin >= 0
    share = float(holds[allowed].mean()) if allowed.any() else 0.0
    xs, ys, Z = _square(grid, steps, margin)
    region_traced = _trace(xs, ys, Z, [0.0]) if bounds and 0 < holds.mean() < 1 else []
    region = _lines_table(tri, region_traced).drop(columns=["level"])

    out_grid = base.drop(columns=["response", "predicted", "desirability"]).reset_index(
        drop=True)
    T = tri.coords(S)
    out_grid["x"], out_grid["y"] = to_plot(T[:, 0], T[:, 1], T[:, 2])
    out_grid = out_grid[["point", *SHARES, *tri.names, "inside", "x", "y", "D"]]
    result = TernaryLimits(lines=lines, ticks=ticks, region=region,
                           bounds=ternary_region(study, tri.components,
                                                 reference=reference, zoom=zoom),
                           share=share, grid=out_grid)
    for table in (result.lines, result.region, result.grid):
        table.attrs.update(tri.attrs())
    return result


def ternary_points(grid: pd.DataFrame) -> pd.DataFrame:
    """``ternary_grid``'s table with the plotting coordinates ``x``, ``y`` added
    (from its ``attrs``: lows and room)."""
    lows = np.asarray(grid.attrs.get("lows", (0.0, 0.0, 0.0)), dtype=float)
    room = float(grid.attrs.get("room", 1.0))
    T = (grid[SHARES].to_numpy(float) - lows) / room
    out = grid.copy()
    out["x"], out["y"] = to_plot(T[:, 0], T[:, 1], T[:, 2])
    return out
