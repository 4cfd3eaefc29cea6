"""Altair drawings of the maps, shared by the workbench and the report.

Drawing only: every number comes from the tidy tables of
``tradeoff.maps.contours`` and ``tradeoff.maps.slices``. The look is our
own: lines with their values written on them over a light wash, limits as
labelled lines with short ticks on the failing side, the region where every
limit holds outlined in black, so the maps read in black-and-white print.
Altair is imported inside each function (``import tradeoff`` stays light).
"""
from __future__ import annotations

import json

import numpy as np
import pandas as pd

__all__ = ["LINE_COLOURS", "LINE_DASHES", "titles_expr", "contour_picture", "limits_picture",
           "limits_labels", "limit_label_text", "limits_note", "holds_strips",
           "interaction_picture", "arrhenius_picture"]

# One colour and one dash pattern per response, so lines part in grey print too.
LINE_COLOURS = ["#1b6f8a", "#b5651d", "#6a3d9a", "#2e7d4f", "#a8322d", "#4f5b66",
                "#8c6d1f", "#c2417a"]
LINE_DASHES = [[1, 0], [7, 3], [2, 2], [9, 3, 2, 3], [4, 2], [12, 4], [1, 3], [6, 2, 1, 2]]
INK, REGION, HOLDS = "#23262b", "#111111", "#e4f1e5"
# the wash runs from cream (low) to pale teal (high): light enough to keep the
# lines and their labels the map's main message
WASH = ["#fbf6e9", "#a9cfcb"]
WASH_LINES = 31


def _fmt(value: float) -> str:
    return f"{value:.4g}"


def _label_points(lines: pd.DataFrame, key: str = "line") -> pd.DataFrame:
    """One label position per polyline, staggered along neighbouring lines (at
    a half, a third, two thirds of the way) so crowded labels part."""
    if lines.empty:
        return lines.iloc[0:0]
    pos = lines.groupby(key, sort=False).cumcount()
    size = lines.groupby(key, sort=False)[key].transform("size")
    share = np.array([0.5, 0.3, 0.7])[lines[key].to_numpy(int) % 3]
    return lines[pos == (size * share).astype(int)]


def titles_expr(titles: dict) -> str:
    """A legend label expression that shows each response's title, not its column name.

    The lines carry short names (their labels on the map stay short); the
    legend below spells them out. A name without a title shows as it is.
    """
    return f"{json.dumps(titles)}[datum.label] || datum.label"


def _order(lines: pd.DataFrame) -> pd.DataFrame:
    return lines.assign(i=lines.groupby("line", sort=False).cumcount())


def _marks_layer(alt, marks: pd.DataFrame | None, X=None, Y=None, tooltip=None):
    """The recommendation (diamond) and the chosen solution (cross), with a legend.

    ``X``, ``Y``: the map's position encodings of the columns x and y (default
    plain quantitative axes); ``tooltip``: what hovering a mark shows (default
    its name and position).
    """
    if marks is None or marks.empty:
        return []
    X = alt.X("x:Q") if X is None else X
    Y = alt.Y("y:Q") if Y is None else Y
    if tooltip is None:
        tooltip = [alt.Tooltip("what:N"), alt.Tooltip("x:Q", format=".4g"),
                   alt.Tooltip("y:Q", format=".4g")]
    shapes = alt.Scale(domain=list(marks["what"]),
                       range=["diamond", "cross", "circle", "square"][:len(marks)])
    halo = alt.Chart(marks).mark_point(size=260, filled=True, color="white",
                                       opacity=0.9).encode(
        x=X, y=Y, shape=alt.Shape("what:N", scale=shapes, legend=None))
    dots = alt.Chart(marks).mark_point(size=150, filled=True, color=INK, opacity=1).encode(
        x=X, y=Y, shape=alt.Shape("what:N", scale=shapes, legend=alt.Legend(
            title=None, orient="bottom", labelLimit=400)),
        tooltip=tooltip)
    return [halo, dots]


def _axis(alt):
    return alt.Axis(tickCount=8, labelOverlap=True, labelFlush=True)


# pixels kept free around a map's frame, so a mark on its edge (a setting at a bound
# of the searched range) is drawn whole, inside the frame
MARK_ROOM = 10


def _axes(alt, grid, x_title, y_title):
    xs = alt.X("x:Q", title=x_title, axis=_axis(alt), scale=alt.Scale(
        domain=[float(grid["x"].min()), float(grid["x"].max())], zero=False, nice=False,
        padding=MARK_ROOM))
    ys = alt.Y("y:Q", title=y_title, axis=_axis(alt), scale=alt.Scale(
        domain=[float(grid["y"].min()), float(grid["y"].max())], zero=False, nice=False,
        padding=MARK_ROOM))
    return xs, ys


def _wash(alt, grid, value, value_title, x_title, y_title, n):
    """The light fill: the grid's cells, faintly coloured by value (no bands).

    The wash takes every second or third grid line (at most ``WASH_LINES`` a
    side): a faint fill needs no finer cells, and each cell is one drawn mark,
    so a full grid would multiply the page's drawing time for nothing.
    """
    xs_u = np.unique(grid["x"].to_numpy(float))
    ys_u = np.unique(grid["y"].to_numpy(float))
    xs_u, ys_u = xs_u[::-(-len(xs_u) // WASH_LINES)], ys_u[::-(-len(ys_u) // WASH_LINES)]
    grid = grid[np.isin(grid["x"].to_numpy(float), xs_u)
                & np.isin(grid["y"].to_numpy(float), ys_u)]
    dx = (xs_u[-1] - xs_u[0]) / max(len(xs_u) - 1, 1)
    dy = (ys_u[-1] - ys_u[0]) / max(len(ys_u) - 1, 1)
    data = grid[["x", "y", value]].rename(columns={value: "v"})
    # cells overlap a little so no hairline seams show between them
    data = data.assign(x1=(data["x"] - 0.55 * dx).clip(xs_u[0]),
                       x2=(data["x"] + 0.55 * dx).clip(upper=xs_u[-1]),
                       y1=(data["y"] - 0.55 * dy).clip(ys_u[0]),
                       y2=(data["y"] + 0.55 * dy).clip(upper=ys_u[-1]))
    return alt.Chart(data).mark_rect(opacity=0.9, stroke=None).encode(
        x=alt.X("x1:Q", title=x_title, scale=alt.Scale(zero=False, nice=False),
                axis=_axis(alt)),
        x2=alt.X2("x2:Q"),
        y=alt.Y("y1:Q", title=y_title, scale=alt.Scale(zero=False, nice=False),
                axis=_axis(alt)),
        y2=alt.Y2("y2:Q"),
        color=alt.Color("v:Q", scale=alt.Scale(range=WASH), title=value_title,
                        legend=alt.Legend(orient="bottom", titleLimit=0, gradientLength=220)),
        tooltip=[alt.Tooltip("x:Q", format=".4g", title=x_title),
                 alt.Tooltip("y:Q", format=".4g", title=y_title),
                 alt.Tooltip("v:Q", format=".4g", title=value_title)])


def _placed_levels(lines: pd.DataFrame, grid: pd.DataFrame, marks, height: int,
                   width: int | None) -> pd.DataFrame:
    """Each level's value written on its line where it touches no other value
    (``crowding.place_labels``; at most two places per level)."""
    from .crowding import MIN_WIDTH, place_labels

    texts = {k: _fmt(v) for k, v in lines.groupby("line", sort=False)["level"].first().items()}
    frame = ((float(grid["x"].min()), float(grid["x"].max())),
             (float(grid["y"].min()), float(grid["y"].max())))
    placed = place_labels(lines, texts, frame, height=height, width=width or MIN_WIDTH,
                          avoid=marks, per_text=2)
    # a value with no room is left off (its neighbours say what it is): no key needed
    return placed[placed["number"] == 0]


def contour_picture(grid: pd.DataFrame, lines: pd.DataFrame, value: str, value_title: str,
                    x_title: str, y_title: str, marks: pd.DataFrame | None = None, *,
                    height: int = 420, width: int | None = None):
    """Labelled lines of equal ``value`` over a light wash of the same value.

    ``grid``: columns x, y, ``value`` (``tradeoff.maps.tables.contour_grid``).
    ``lines``: columns level, line, x, y (``contour_lines``). ``marks``:
    columns what, x, y (the recommendation, the chosen solution).
    """
    import altair as alt

    wash = _wash(alt, grid, value, value_title, x_title, y_title, None)
    xs, ys = _axes(alt, grid, x_title, y_title)
    layers = [wash]
    if not lines.empty:
        drawn = _order(lines)
        layers.append(alt.Chart(drawn).mark_line(color=INK, strokeWidth=1.4).encode(
            x=xs, y=ys, detail=alt.Detail("line:N"), order=alt.Order("i:Q"),
            tooltip=[alt.Tooltip("level:Q", format=".4g", title=value_title)]))
        labels = _placed_levels(lines, grid, marks, height, width)
        base = alt.Chart(labels).encode(x=alt.X("x:Q"), y=alt.Y("y:Q"), text=alt.Text("text:N"))
        layers += [base.mark_text(fontSize=11, stroke="white", strokeWidth=4,
                                  strokeOpacity=0.9),
                   base.mark_text(fontSize=11, color=INK, fontWeight="bold")]
    layers += _marks_layer(alt, marks)
    chart = alt.layer(*layers).resolve_scale(shape="independent").properties(height=height)
    return chart.properties(width=width) if width else chart


def limit_label_text(name: str, limit: str, level: float, labels: dict) -> str:
    """What a limit's line says on the map: "Water activity <= 0.65 aw".

    ``labels``: name -> (label, unit); a rule among factors shows its own text.
    """
    if limit == "rule":
        return name
    label, unit = labels.get(name, (name, ""))
    sign = {"lower": "\u2265", "upper": "\u2264"}[limit]
    return f"{label} {sign} {_fmt(level)}" + (f" {unit}" if unit else "")


def limits_note(lmap, *, d_lines: bool = True) -> str:
    """The sentence under a limits map, the same in the workbench and the report."""
    share = lmap.share
    where = ("Every limit holds all over this map." if share >= 1 else
             "No setting on this map meets every limit." if share <= 0 else
             f"The tinted area, outlined in dark grey, is where every limit (and every "
             f"rule among factors) holds: {share:.0%} of this map.")
    return ("Each line is one response's limit, in that response's colour and dash, "
            "labelled with its value; short ticks point to the side where it fails. "
            + where + (" Faint dotted lines: D, left out where they would crowd."
                       if d_lines else ""))


def limits_labels(lmap, labels: dict, marks: pd.DataFrame | None = None, *,
                  height: int = 420, width: int | None = None) -> pd.DataFrame:
    """Where each limit's label sits (``crowding.place_labels``): clear of the other
    labels and the marks, inside the frame, numbered when there is no room."""
    from .crowding import MIN_WIDTH, place_labels

    lines = lmap.lines
    if lines.empty:
        return place_labels(lines, {}, ((0, 1), (0, 1)), height=height)
    texts = {}
    for key, part in lines.groupby("line", sort=False):
        row = part.iloc[0]
        texts[key] = limit_label_text(row["name"], row["limit"], row["level"], labels)
    grid = lmap.grid
    frame = ((float(grid["x"].min()), float(grid["x"].max())),
             (float(grid["y"].min()), float(grid["y"].max())))
    return place_labels(lines, texts, frame, height=height, width=width or MIN_WIDTH,
                        avoid=marks)


def holds_strips(grid: pd.DataFrame) -> pd.DataFrame:
    """The region where every limit holds as horizontal strips, one per stretch of a
    grid row inside it: the row's height, its ends where the margin crosses zero
    (linear between grid points, as the outline's tracer does).

    Columns ``x1``, ``x2``, ``y1``, ``y2``. A few strips per row draw the tint
    a cell per grid point would need thousands of marks for.
    """
    xs = np.unique(grid["x"].to_numpy(float))
    ys = np.unique(grid["y"].to_numpy(float))
    dy = (ys[-1] - ys[0]) / max(len(ys) - 1, 1)
    table = grid.sort_values(["y", "x"])
    margin = table["margin"].to_numpy(float).reshape(len(ys), len(xs))
    rows = []
    for r, y in enumerate(ys):
        m = margin[r]
        inside = m >= 0
        edges = np.flatnonzero(np.diff(np.concatenate([[0], inside.astype(int), [0]])))
        for a, b in zip(edges[::2], edges[1::2]):  # grid points a .. b-1 inside
            x1 = xs[a] if a == 0 else xs[a - 1] + (xs[a] - xs[a - 1]) * (
                -m[a - 1] / (m[a] - m[a - 1]))
            x2 = xs[b - 1] if b == len(xs) else xs[b - 1] + (xs[b] - xs[b - 1]) * (
                m[b - 1] / (m[b - 1] - m[b]))
            rows.append((x1, x2, max(y - dy / 2, ys[0]), min(y + dy / 2, ys[-1])))
    return pd.DataFrame(rows, columns=["x1", "x2", "y1", "y2"])


def _holds_fill(alt, grid: pd.DataFrame):
    """A faint tint over the region where every limit holds."""
    strips = holds_strips(grid)
    if strips.empty:
        return None
    return alt.Chart(strips).mark_rect(color=HOLDS, opacity=1, stroke=None).encode(
        x=alt.X("x1:Q"), x2=alt.X2("x2:Q"), y=alt.Y("y1:Q"), y2=alt.Y2("y2:Q"))


def limits_picture(lmap, titles: dict, x_title: str, y_title: str,
                   marks: pd.DataFrame | None = None, *, d_lines: pd.DataFrame | None = None,
                   labels: dict | None = None, height: int = 420, width: int | None = None):
    """Each limit as a labelled line in its response's colour, failing-side ticks,
    the region where every limit holds tinted and outlined on top, D's lines
    faint behind (thinned where they crowd).

    ``lmap``: a ``LimitsMap``. ``titles``: response name -> its title (the
    legend). ``labels``: response name -> (label, unit), for the text on the
    lines (default: the titles, no unit). ``d_lines``: optional contour lines
    of D drawn faintly for orientation. Labels are placed so their boxes touch
    neither each other nor the marks (``limits_labels``); one with no room is
    a number, explained under the map.
    """
    import altair as alt

    from .crowding import MIN_WIDTH, thin_lines

    grid = lmap.grid
    labels = labels or {n: (t, "") for n, t in titles.items()}
    xs, ys = _axes(alt, grid, x_title, y_title)
    lines = lmap.lines
    names = list(dict.fromkeys(lines["name"])) if not lines.empty else []
    colours = alt.Scale(domain=names or ["-"],
                        range=[LINE_COLOURS[i % len(LINE_COLOURS)] for i in
                               range(max(len(names), 1))])
    dashes = alt.Scale(domain=names or ["-"],
                       range=[LINE_DASHES[i % len(LINE_DASHES)] for i in
                              range(max(len(names), 1))])
    frame_span = ((float(grid["x"].min()), float(grid["x"].max())),
                  (float(grid["y"].min()), float(grid["y"].max())))
    # an invisible frame fixes the axes to the map's span
    frame = alt.Chart(pd.DataFrame({"x": list(frame_span[0]), "y": list(frame_span[1])})
                      ).mark_point(opacity=0).encode(x=xs, y=ys)
    layers = [frame]
    if "margin" in grid and 0 < lmap.share < 1:
        fill = _holds_fill(alt, grid)
        if fill is not None:
            layers.append(fill)
    if d_lines is not None and not d_lines.empty:
        thinned = thin_lines(d_lines, frame_span, height=height, width=width or MIN_WIDTH)
        layers.append(alt.Chart(_order(thinned)).mark_line(
            color="#9aa3ad", strokeWidth=0.8, strokeDash=[2, 3]).encode(
            x=alt.X("x:Q"), y=alt.Y("y:Q"), detail=alt.Detail("line:N"), order=alt.Order("i:Q"),
            tooltip=[alt.Tooltip("level:Q", format=".3g", title="D")]))
    key = []
    if not lines.empty:
        drawn = _order(lines).assign(
            title=lambda t: [titles.get(nm, nm) for nm in t["name"]])
        # one response a row: long titles stay whole, and the marks' legend still
        # fits beside it in the map's width
        legend = alt.Legend(title=None, orient="bottom", columns=1, labelLimit=380,
                            symbolStrokeWidth=2.5, labelExpr=titles_expr(titles))
        layers.append(alt.Chart(drawn).mark_line(strokeWidth=2).encode(
            x=alt.X("x:Q"), y=alt.Y("y:Q"), detail=alt.Detail("line:N"), order=alt.Order("i:Q"),
            color=alt.Color("name:N", scale=colours, legend=legend),
            strokeDash=alt.StrokeDash("name:N", scale=dashes, legend=legend),
            tooltip=[alt.Tooltip("title:N", title="response"), alt.Tooltip("limit:N"),
                     alt.Tooltip("level:Q", format=".4g", title="limit")]))
        if not lmap.ticks.empty:
            layers.append(alt.Chart(lmap.ticks).mark_rule(strokeWidth=1.4).encode(
                x=alt.X("x:Q"), y=alt.Y("y:Q"), x2=alt.X2("x2:Q"), y2=alt.Y2("y2:Q"),
                color=alt.Color("name:N", scale=colours, legend=None)))
    if not lmap.region.empty:  # on top of the limits it runs along, see-through
        layers.append(alt.Chart(_order(lmap.region)).mark_line(
            color=REGION, strokeWidth=3.5, opacity=0.45).encode(
            x=alt.X("x:Q"), y=alt.Y("y:Q"), detail=alt.Detail("line:N"), order=alt.Order("i:Q")))
    if not lines.empty:
        placed = limits_labels(lmap, labels, marks, height=height, width=width)
        placed = placed.merge(lines.drop_duplicates("line")[["line", "name"]], on="line")
        key = [f"{n} = {t}" for n, t in zip(placed["number"], placed["label"]) if n]
        base = alt.Chart(placed).encode(x=alt.X("x:Q"), y=alt.Y("y:Q"), text=alt.Text("text:N"),
                                        tooltip=[alt.Tooltip("label:N", title="limit")])
        layers += [base.mark_text(fontSize=11, stroke="white", strokeWidth=4,
                                  strokeOpacity=0.9).properties(name="limit_label_halo"),
                   base.mark_text(fontSize=11, fontWeight="bold").encode(
                       color=alt.Color("name:N", scale=colours, legend=None)
                   ).properties(name="limit_labels")]
    layers += _marks_layer(alt, marks)
    chart = alt.layer(*layers).resolve_scale(color="independent", shape="independent",
                                             strokeDash="independent")
    chart = chart.properties(height=height)
    if key:  # the labels with no room on the map, under it
        chart = chart.properties(title=alt.TitleParams(
            ["Numbered on the map:"] + key, orient="bottom", anchor="start", fontSize=11,
            fontWeight="normal", color=INK, offset=8))
    return chart.properties(width=width) if width else chart


def interaction_picture(cells: pd.DataFrame, model: pd.DataFrame, a_title: str,
                        b_title: str, y_title: str, *, height: int = 280,
                        width: int | None = None):
    """Measured cell means (open circles) and the model's lines with intervals.

    ``cells``: ``interaction_means`` (a_level, b_level, a_coded, b_coded, mean,
    runs). ``model``: ``model_interaction`` (a_level, b_level, a_coded,
    b_coded, predicted, ci_low, ci_high).
    """
    import altair as alt

    def shown(v):
        return v if isinstance(v, str) else f"{v:g}"

    fit = model.assign(a=[shown(v) for v in model["a_level"]],
                       b=[shown(v) for v in model["b_level"]])
    order = list(dict.fromkeys(fit.sort_values("a_coded")["a"]))
    b_order = list(dict.fromkeys(fit.sort_values("b_coded")["b"]))
    # one line per end (or level) of b, in the responses' colours
    colours = alt.Scale(domain=b_order, range=[LINE_COLOURS[i % len(LINE_COLOURS)]
                                               for i in range(len(b_order))])
    x = alt.X("a:N", sort=order, title=a_title, axis=alt.Axis(labelAngle=0))
    # the ends (or levels) of b sit a little apart so their intervals do not overlap
    offset = alt.XOffset("b:N", sort=b_order, scale=alt.Scale(paddingOuter=0.6))
    legend = alt.Legend(title=b_title, orient="bottom", titleLimit=0)
    band = alt.Chart(fit).mark_rule(strokeWidth=2, opacity=0.6).encode(
        x=x, xOffset=offset, y=alt.Y("ci_low:Q", title=y_title, scale=alt.Scale(zero=False)),
        y2=alt.Y2("ci_high:Q"), color=alt.Color("b:N", scale=colours, legend=legend))
    line = alt.Chart(fit).mark_line(strokeWidth=2.5, point=True).encode(
        x=x, xOffset=offset, y=alt.Y("predicted:Q"),
        color=alt.Color("b:N", scale=colours, legend=legend),
        tooltip=[alt.Tooltip("a:N"), alt.Tooltip("b:N"),
                 alt.Tooltip("predicted:Q", format=".4g", title="model"),
                 alt.Tooltip("ci_low:Q", format=".4g", title="mean from"),
                 alt.Tooltip("ci_high:Q", format=".4g", title="mean to")])
    layers = [band, line]
    if not cells.empty:
        raw = cells.assign(a=[shown(v) for v in cells["a_level"]],
                           b=[shown(v) for v in cells["b_level"]])
        layers.append(alt.Chart(raw).mark_point(size=80, filled=False, strokeWidth=2).encode(
            x=x, xOffset=offset, y=alt.Y("mean:Q"),
            color=alt.Color("b:N", scale=colours, legend=legend),
            tooltip=[alt.Tooltip("a:N"), alt.Tooltip("b:N"),
                     alt.Tooltip("mean:Q", format=".4g", title="measured mean"),
                     alt.Tooltip("runs")]))
    chart = alt.layer(*layers).properties(height=height)
    return chart.properties(width=width) if width else chart


def arrhenius_picture(points: pd.DataFrame, *, title: str | None = None, columns: int = 5,
                      width: int = 150, height: int = 110):
    """ln k against 1000 / T, one small panel per run, with their bounds.

    ``points``: ``derive.derived.arrhenius_table`` (run, series, temperature,
    inv_temperature, ln_rate, rate, ln_low, ln_high). Dots with bars: each
    temperature's own straight-line rate and its interval; line and band: the
    one-step Arrhenius fit and its interval; diamond with a bar: the
    temperature asked for.
    """
    import altair as alt

    data = points.dropna(subset=["ln_rate"])
    if data.empty:
        return None
    x = alt.X("inv_temperature:Q", title="1000 / T (T in kelvin)", scale=alt.Scale(zero=False))
    y = alt.Y("ln_rate:Q", title="ln k", scale=alt.Scale(zero=False))
    low, high = alt.Y("ln_low:Q"), alt.Y2("ln_high:Q")
    tips = [alt.Tooltip("run:N"), alt.Tooltip("series:N"),
            alt.Tooltip("temperature:Q", title="degC", format=".3g"),
            alt.Tooltip("rate:Q", title="k", format=".4g"),
            alt.Tooltip("ln_low:Q", title="ln k from", format=".4g"),
            alt.Tooltip("ln_high:Q", title="ln k to", format=".4g")]

    def series(name):
        return alt.Chart().transform_filter(alt.datum.series == name)

    layers = [series("one-step fit").mark_area(opacity=0.2, color=LINE_COLOURS[1]).encode(
                  x=x, y=low, y2=high),
              series("one-step fit").mark_line(color=LINE_COLOURS[1], strokeWidth=2).encode(
                  x=x, y=y),
              series("own line").mark_rule(color=INK, strokeWidth=1.2).encode(
                  x=x, y=low, y2=high),
              series("own line").mark_circle(size=45, color=INK, opacity=1).encode(
                  x=x, y=y, tooltip=tips),
              series("asked").mark_rule(color=LINE_COLOURS[1], strokeWidth=1.5).encode(
                  x=x, y=low, y2=high),
              series("asked").mark_point(shape="diamond", size=100, filled=True,
                                         color=LINE_COLOURS[1], opacity=1).encode(
                  x=x, y=y, tooltip=tips)]
    facet = alt.Facet("run:N", title=None)
    chart = alt.layer(*layers, data=data).properties(width=width, height=height)
    return (chart.facet(facet=facet, columns=columns, title=title) if title else
            chart.facet(facet=facet, columns=columns))
