"""Altair drawings of the ternary maps, shared by the workbench and the report.

Drawing only: the numbers come from ``tradeoff.maps.ternary``. The look is
the one of the two-factor maps (``pictures``): labelled lines over a light
wash, each limit in its response's colour and dash with short ticks on its
failing side, the blends where every limit holds outlined. The triangle's
sides carry each component's amounts (study units) at round values, with
faint grid lines across; the blends the study allows are outlined in black,
and the wash covers only them (outside is left blank). Parts of lines
outside the allowed blends are drawn thin and faint: the model is guessing
there.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

from .contours import round_levels
from .pictures import (INK, LINE_COLOURS, LINE_DASHES, REGION, WASH, _fmt, _label_points,
                       _marks_layer, _order, titles_expr)
from .ternary import HEIGHT, from_plot, to_plot

__all__ = ["ternary_axes", "ternary_contour_picture", "ternary_limits_picture"]

# margins around the triangle (in shares of its side) for labels and titles
_LEFT, _RIGHT, _BOTTOM, _TOP = 0.24, 0.24, 0.2, 0.1
_OUTSIDE = "#8b939c"
# outward normals of the left, bottom and right sides (unit length)
_NORMALS = {0: (-HEIGHT, 0.5), 1: (0.0, -1.0), 2: (HEIGHT, 0.5)}


def _amount_text(value: float, unit: str) -> str:
    return f"{value:.4g}" + (f" {unit}" if unit else "")


def ternary_axes(attrs: dict, labels: dict, units: dict) -> dict:
    """The triangle's frame as tidy tables (plotting coordinates).

    ``attrs``: the ``attrs`` of a ternary table (components, rest, lows,
    room). ``labels``, ``units``: component name -> label, unit.

    Returns a dict of DataFrames: ``edges`` (x, y, x2, y2), ``grid`` (the
    constant-amount lines: component, amount, x, y, x2, y2), ``ticks``
    (component, amount, text, x, y, x2, y2, tx, ty, side: short marks
    outside the side that carries the component's scale and where their
    labels go), ``titles`` (text, x, y, angle) and ``corners`` (text, x, y,
    align, baseline).
    """
    names = list(attrs["components"])
    rest, room = float(attrs["rest"]), float(attrs["room"])
    lows = np.asarray(attrs["lows"], dtype=float)
    corners = np.array([[0.5, HEIGHT], [0.0, 0.0], [1.0, 0.0]])
    edges = pd.DataFrame({"x": corners[:, 0], "y": corners[:, 1],
                          "x2": np.roll(corners[:, 0], -1), "y2": np.roll(corners[:, 1], -1)})
    grid_rows, tick_rows = [], []
    for k, name in enumerate(names):
        lo, hi = lows[k] * rest, (lows[k] + room) * rest
        for amount in round_levels(lo, hi, about=5):
            p = (amount / rest - lows[k]) / room
            # the two ends of the line where component k's coordinate is p
            if k == 0:
                ends = [(p, 1 - p, 0.0), (p, 0.0, 1 - p)]   # left side, right side
            elif k == 1:
                ends = [(0.0, p, 1 - p), (1 - p, p, 0.0)]   # bottom, left side
            else:
                ends = [(1 - p, 0.0, p), (0.0, 1 - p, p)]   # right side, bottom
            (x1, x2), (y1, y2) = (to_plot(*np.array(ends).T))
            grid_rows.append({"component": name, "amount": amount, "x": x1, "y": y1,
                              "x2": x2, "y2": y2})
            nx, ny = _NORMALS[k]
            tick_rows.append({"component": name, "amount": amount,
                              "text": f"{amount:.4g}", "x": x1, "y": y1,
                              "x2": x1 + 0.018 * nx, "y2": y1 + 0.018 * ny,
                              "tx": x1 + 0.032 * nx, "ty": y1 + 0.032 * ny - 0.008 * (k != 1),
                              "side": k})
    titles, corner_rows = [], []
    mids = [(0.25, HEIGHT / 2), (0.5, 0.0), (0.75, HEIGHT / 2)]
    angles = [-60.0, 0.0, 60.0]
    arrows = ["{} \u2192", "\u2190 {}", "{} \u2192"]  # the way each amount grows
    for k, name in enumerate(names):
        label, unit = labels.get(name, name), units.get(name, "")
        nx, ny = _NORMALS[k]
        gap = 0.135 if k != 1 else 0.1
        titles.append({"text": arrows[k].format(f"{label}, {unit}" if unit else label),
                       "x": mids[k][0] + gap * nx, "y": mids[k][1] + gap * ny,
                       "angle": angles[k] % 360})
        top = (lows[k] + room) * rest
        # top: one line above the corner; bottom: two lines under the corner,
        # clear of the bottom side's scale and title
        sep = " " if k == 0 else "\n"
        corner_rows.append({"text": f"{label}{sep}{_amount_text(top, unit)}",
                            "x": corners[k, 0], "y": corners[k, 1]})
    corner = pd.DataFrame(corner_rows)
    corner["y"] += [0.045, -0.105, -0.105]
    corner["align"] = ["center", "center", "center"]
    return {"edges": edges, "grid": pd.DataFrame(grid_rows), "ticks": pd.DataFrame(tick_rows),
            "titles": pd.DataFrame(titles), "corners": corner}


def _scales(alt, width: int):
    """x, y scales with equal units (the triangle stays equilateral) and the height."""
    unit = width / (1 + _LEFT + _RIGHT)
    height = int(round(unit * (HEIGHT + _BOTTOM + _TOP)))
    x = alt.Scale(domain=[-_LEFT, 1 + _RIGHT], nice=False, zero=False)
    y = alt.Scale(domain=[-_BOTTOM, HEIGHT + _TOP], nice=False, zero=False)
    return x, y, height


def _frame_layers(alt, axes: dict, xs, ys):
    """Grid lines, sides, ticks, tick labels, side titles and corner labels."""
    X = alt.X("x:Q", scale=xs, axis=None)
    Y = alt.Y("y:Q", scale=ys, axis=None)
    layers = []
    if not axes["grid"].empty:
        layers.append(alt.Chart(axes["grid"]).mark_rule(color="#c9c3b8", strokeWidth=0.7,
                                                        strokeDash=[3, 3]).encode(
            x=X, y=Y, x2=alt.X2("x2:Q"), y2=alt.Y2("y2:Q")))
    layers.append(alt.Chart(axes["edges"]).mark_rule(color=INK, strokeWidth=1.2).encode(
        x=X, y=Y, x2=alt.X2("x2:Q"), y2=alt.Y2("y2:Q")))
    ticks = axes["ticks"]
    if not ticks.empty:
        layers.append(alt.Chart(ticks).mark_rule(color=INK, strokeWidth=1).encode(
            x=X, y=Y, x2=alt.X2("x2:Q"), y2=alt.Y2("y2:Q")))
        for side, align, baseline in ((0, "right", "middle"), (1, "center", "top"),
                                      (2, "left", "middle")):
            part = ticks[ticks["side"] == side]
            if len(part):
                layers.append(alt.Chart(part).mark_text(
                    fontSize=11, color=INK, align=align, baseline=baseline).encode(
                    x=alt.X("tx:Q", scale=xs, axis=None),
                    y=alt.Y("ty:Q", scale=ys, axis=None), text=alt.Text("text:N")))
    layers.append(alt.Chart(axes["titles"]).mark_text(
        fontSize=12, color=INK, fontWeight="bold", align="center", baseline="middle").encode(
        x=X, y=Y, text=alt.Text("text:N"), angle=alt.Angle("angle:Q", scale=None)))
    for align, part in axes["corners"].groupby("align", sort=False):
        layers.append(alt.Chart(part).mark_text(
            fontSize=11.5, color=INK, align=align, baseline="middle", lineBreak="\n",
            fontStyle="italic").encode(
            x=X, y=Y, text=alt.Text("text:N")))
    return layers


def _runs(lines: pd.DataFrame, key: str = "line") -> pd.DataFrame:
    """Split each polyline where it crosses the allowed blends' outline: a new
    ``run`` number for every stretch inside or outside; the vertex where the
    stretch changes ends the previous run too, so the drawn line has no gap."""
    keep = [c for c in ("name", "title", "limit", "level", "line", "i", "inside", "x", "y")
            if c in lines.columns]
    if lines.empty:
        return lines[keep].assign(run=pd.Series(dtype=int))
    # only what the drawing needs, rounded: the page carries these numbers
    lines = lines[keep].reset_index(drop=True).round({"x": 4, "y": 4})
    same = lines[key].eq(lines[key].shift())
    inside = lines["inside"].astype(bool)
    change = same & inside.ne(inside.shift())
    run = (~same | change).cumsum()
    out = lines.assign(run=run)
    dup = out[change].assign(run=run[change] - 1,
                             inside=inside.shift()[change].astype(bool).to_numpy())
    out = pd.concat([out, dup]).sort_values(["run", "i"], kind="stable")
    return out.reset_index(drop=True).assign(i=lambda t: t.groupby("run").cumcount())


def _line_layers(alt, runs: pd.DataFrame, X, Y, outer_encode=None, **encode):
    """Inside stretches bold, outside ones thin and faint."""
    layers = []
    inner, outer = runs[runs["inside"]], runs[~runs["inside"]]
    if len(outer):
        layers.append(alt.Chart(outer).mark_line(strokeWidth=1, opacity=0.45).encode(
            x=X, y=Y, detail=alt.Detail("run:N"), order=alt.Order("i:Q"),
            **(outer_encode or encode)))
    if len(inner):
        layers.append(alt.Chart(inner).mark_line(strokeWidth=1.8).encode(
            x=X, y=Y, detail=alt.Detail("run:N"), order=alt.Order("i:Q"), **encode))
    return layers


def _interior_points(runs: pd.DataFrame) -> pd.DataFrame:
    """One spot per stretch: of its middle part, the vertex farthest from the
    triangle's sides, so a label on a line near a side stays clear of its scale."""
    pos = runs.groupby("run").cumcount()
    size = runs.groupby("run")["run"].transform("size")
    middle = runs[(pos >= 0.25 * size) & (pos <= 0.75 * size)]
    depth = from_plot(middle["x"], middle["y"]).min(axis=1)
    return middle.loc[pd.Series(depth, index=middle.index).groupby(middle["run"]).idxmax()]


def _labels(alt, runs: pd.DataFrame, X, Y, text, colour=None, interior=False):
    """One label per stretch inside the allowed blends, on a white halo."""
    inner = runs[runs["inside"]]
    if inner.empty:
        return []
    # only stretches long enough to carry a label
    sizes = inner.groupby("run")["run"].transform("size")
    inner = inner[sizes >= 4]
    if inner.empty:
        return []
    spots = _interior_points(inner) if interior else _label_points(inner, key="run")
    if spots.empty:
        return []
    spots = spots.assign(text=text(spots))
    base = alt.Chart(spots).encode(x=X, y=Y, text=alt.Text("text:N"))
    front = base.mark_text(fontSize=11, fontWeight="bold")
    front = front.encode(color=colour) if colour is not None else front.mark_text(
        fontSize=11, fontWeight="bold", color=INK)
    return [base.mark_text(fontSize=11, stroke="white", strokeWidth=4, strokeOpacity=0.9),
            front]


def _outline(alt, bounds: pd.DataFrame, X, Y):
    if bounds.empty:
        return []
    return [alt.Chart(bounds[["i", "x", "y"]]).mark_line(color=INK, strokeWidth=1.6).encode(
        x=X, y=Y, order=alt.Order("i:Q"))]


def _marks(alt, marks: pd.DataFrame | None, X, Y):
    """The recommendation and the chosen solution, hovering shows their amounts."""
    if marks is None or marks.empty:
        return []
    tooltip = [alt.Tooltip("what:N"), *[alt.Tooltip(c) for c in marks.columns
                                        if c not in ("what", "x", "y")]]
    return _marks_layer(alt, marks, X, Y, tooltip)


def _finish(alt, layers, width: int, height: int):
    return alt.layer(*layers).resolve_scale(color="independent", shape="independent",
                                            strokeDash="independent").properties(
        width=width, height=height, view=alt.ViewConfig(stroke=None))


def ternary_contour_picture(grid: pd.DataFrame, lines: pd.DataFrame, axes: dict,
                            bounds: pd.DataFrame, value: str, value_title: str,
                            marks: pd.DataFrame | None = None, *, width: int = 520):
    """Labelled lines of equal ``value`` in the triangle over a light wash.

    ``grid``: ``ternary_points(ternary_grid(...))`` rows of one response (x,
    y, inside, ``value``); ``lines``: ``ternary_lines``; ``axes``:
    ``ternary_axes``; ``bounds``: ``ternary_region``; ``marks``: what, x, y.
    """
    import altair as alt

    xs, ys, height = _scales(alt, width)
    X, Y = alt.X("x:Q", scale=xs, axis=None), alt.Y("y:Q", scale=ys, axis=None)
    layers = []
    inside = grid[grid["inside"].astype(bool)]
    if len(inside):
        # one brick per blend: rows of the triangular grid are offset by half a
        # step, and bricks of one step by one row tile them without seams
        rows = np.unique(np.round(grid["y"].to_numpy(float), 9))
        dy = float(np.diff(rows).min()) if len(rows) > 1 else 0.02
        dx = dy / HEIGHT
        data = inside[["x", "y", value]].rename(columns={value: "v"}).round(
            {"v": 4})
        # a row's end bricks stop at its last blend: the wash never spills
        # outside the allowed blends (it falls short by half a step at most)
        row = np.round(data["y"].to_numpy(float), 9)
        ends = data.groupby(row)["x"].agg(["min", "max"])
        data = data.assign(
            x1=np.maximum(data["x"] - 0.55 * dx, ends["min"].reindex(row).to_numpy()),
            x2=np.minimum(data["x"] + 0.55 * dx, ends["max"].reindex(row).to_numpy()),
            y1=(data["y"] - 0.55 * dy).clip(lower=float(rows[0])),
            y2=(data["y"] + 0.55 * dy).clip(upper=float(rows[-1])))
        data = data[["x1", "x2", "y1", "y2", "v"]].round(
            {"x1": 4, "x2": 4, "y1": 4, "y2": 4})
        layers.append(alt.Chart(data).mark_rect(opacity=0.9, stroke=None).encode(
            x=alt.X("x1:Q", scale=xs, axis=None), x2=alt.X2("x2:Q"),
            y=alt.Y("y1:Q", scale=ys, axis=None), y2=alt.Y2("y2:Q"),
            color=alt.Color("v:Q", scale=alt.Scale(range=WASH), title=value_title,
                            legend=alt.Legend(orient="bottom", titleLimit=0,
                                              gradientLength=200)),
            tooltip=[alt.Tooltip("v:Q", format=".4g", title=value_title)]))
    layers += _frame_layers(alt, axes, xs, ys)
    layers += _outline(alt, bounds, X, Y)
    if not lines.empty:
        runs = _runs(lines)
        layers += _line_layers(alt, runs, X, Y, color=alt.ColorValue(INK))
        layers += _labels(alt, runs, X, Y, lambda t: t["level"].map(_fmt))
    layers += _marks(alt, marks, X, Y)
    return _finish(alt, layers, width, height)


def ternary_limits_picture(tlim, axes: dict, titles: dict,
                           marks: pd.DataFrame | None = None, *,
                           d_lines: pd.DataFrame | None = None, labels: dict | None = None,
                           width: int = 520):
    """Each limit as a labelled line in its response's colour and dash, ticks on
    its failing side, the blends where every limit holds outlined on top, D faint
    behind (thinned where its lines crowd).

    ``tlim``: a ``TernaryLimits``; ``titles``: response name -> title (the
    legend); ``labels``: name -> (label, unit) for the text on the lines
    (default the titles). Labels are placed clear of each other and the marks;
    one with no room is a number, explained under the triangle.
    """
    import altair as alt

    xs, ys, height = _scales(alt, width)
    X, Y = alt.X("x:Q", scale=xs, axis=None), alt.Y("y:Q", scale=ys, axis=None)
    from .crowding import thin_lines

    frame = ((-_LEFT, 1 + _RIGHT), (-_BOTTOM, HEIGHT + _TOP))
    layers = _frame_layers(alt, axes, xs, ys)
    if d_lines is not None and not d_lines.empty:
        thinned = thin_lines(d_lines[["level", "line", "x", "y"]], frame, height=height,
                             width=width)
        layers.append(alt.Chart(_order(thinned).round(4)).mark_line(
            color="#9aa3ad", strokeWidth=0.8, strokeDash=[2, 3]).encode(
            x=X, y=Y, detail=alt.Detail("line:N"), order=alt.Order("i:Q")))
    layers += _outline(alt, tlim.bounds, X, Y)
    lines = tlim.lines
    if not lines.empty:
        names = list(dict.fromkeys(lines["name"]))
        colours = alt.Scale(domain=names, range=[LINE_COLOURS[i % len(LINE_COLOURS)]
                                                 for i in range(len(names))])
        dashes = alt.Scale(domain=names, range=[LINE_DASHES[i % len(LINE_DASHES)]
                                                for i in range(len(names))])
        runs = _runs(lines.assign(title=[titles.get(n, n) for n in lines["name"]]))
        legend = alt.Legend(title=None, orient="bottom", columns=2, labelLimit=260,
                            symbolStrokeWidth=2.5, labelExpr=titles_expr(titles))
        colour = alt.Color("name:N", scale=colours, legend=legend)
        outer = {"color": alt.Color("name:N", scale=colours, legend=None),
                 "strokeDash": alt.StrokeDash("name:N", scale=dashes, legend=None)}
        layers += _line_layers(
            alt, runs, X, Y, outer, color=colour,
            strokeDash=alt.StrokeDash("name:N", scale=dashes, legend=legend),
            tooltip=[alt.Tooltip("title:N", title="response"), "limit:N",
                     alt.Tooltip("level:Q", format=".4g", title="limit")])
        if not tlim.ticks.empty:
            layers.append(alt.Chart(tlim.ticks.round(4)).mark_rule(strokeWidth=1.4).encode(
                x=X, y=Y, x2=alt.X2("x2:Q"), y2=alt.Y2("y2:Q"),
                color=alt.Color("name:N", scale=colours, legend=None)))
    if not tlim.region.empty:  # on top of the limits it runs along, see-through
        layers.append(alt.Chart(tlim.region[["line", "i", "x", "y"]].round(4)).mark_line(
            color=REGION, strokeWidth=3.5, opacity=0.45).encode(
            x=X, y=Y, detail=alt.Detail("line:N"), order=alt.Order("i:Q")))
    key = []
    if not lines.empty:
        layers_, key = _limit_labels(alt, runs, X, Y, labels or {n: (t, "") for n, t in
                                                             titles.items()},
                                     _label_obstacles(axes, marks), frame, width, height,
                                     alt.Color("name:N", scale=colours, legend=None))
        layers += layers_
    layers += _marks(alt, marks, X, Y)
    chart = _finish(alt, layers, width, height)
    if key:  # the labels with no room on the map, under it
        chart = chart.properties(title=alt.TitleParams(
            ["Numbered on the map:"] + key, orient="bottom", anchor="start", fontSize=11,
            fontWeight="normal", color=INK, offset=8))
    return chart


def _label_obstacles(axes: dict, marks: pd.DataFrame | None) -> pd.DataFrame:
    """Points a limit's label must not cover: the marks and the scales' numbers."""
    ticks = axes["ticks"]
    parts = [ticks[["tx", "ty"]].set_axis(["x", "y"], axis=1)] if not ticks.empty else []
    if marks is not None and not marks.empty:
        parts.append(marks[["x", "y"]])
    return pd.concat(parts, ignore_index=True) if parts else None


def _limit_labels(alt, runs, X, Y, labels, marks, frame, width, height, colour):
    """Each limit's label on a stretch inside the allowed blends, placed clear of the
    other labels and the marks (``crowding.place_labels``); numbered when there is
    no room, the key returned."""
    from .crowding import place_labels
    from .pictures import limit_label_text

    inner = runs[runs["inside"].astype(bool)]
    inner = inner[inner.groupby("run")["run"].transform("size") >= 4]
    if inner.empty:
        return [], []
    texts = {k: limit_label_text(p["name"].iloc[0], p["limit"].iloc[0],
                                 p["level"].iloc[0], labels)
             for k, p in inner.groupby("run", sort=False)}
    placed = place_labels(inner.rename(columns={"line": "polyline", "run": "line"}),
                          texts, frame, height=height, width=width, avoid=marks)
    if placed.empty:
        return [], []
    placed = placed.merge(inner.drop_duplicates("run")[["run", "name"]].rename(
        columns={"run": "line"}), on="line")
    key = [f"{n} = {t}" for n, t in zip(placed["number"], placed["label"]) if n]
    base = alt.Chart(placed[["x", "y", "text", "label", "name"]].round(
        {"x": 4, "y": 4})).encode(x=X, y=Y, text=alt.Text("text:N"),
                                  tooltip=[alt.Tooltip("label:N", title="limit")])
    return [base.mark_text(fontSize=11, stroke="white", strokeWidth=4, strokeOpacity=0.9
                           ).properties(name="limit_label_halo"),
            base.mark_text(fontSize=11, fontWeight="bold").encode(color=colour
                                                                   ).properties(
                name="limit_labels")], key
