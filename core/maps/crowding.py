"""Keeping a map readable: labels that never sit on each other, lines that do not bunch.

Two jobs, both worked out in the picture's own pixels (the text's size is in
pixels, the lines are in data units):

- ``place_labels`` puts one label on each line where its box touches no
  other label, no marked point and stays inside the frame; a label that finds
  no such place anywhere along its line becomes a small number, explained in
  a key under the picture.
- ``thin_lines`` drops the stretches of a family of lines (D's contour lines)
  that run closer than a gap to a line already kept, so where D climbs steeply
  the lines thin out instead of merging into a hatched bar.

Placement assumes the smallest plotting area the picture is drawn in
(``MIN_WIDTH`` by its height): a wider picture only moves labels further apart
across, never closer, and the height is fixed, so what is clear at the
smallest width stays clear at every larger one.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["MIN_WIDTH", "CHAR_PX", "LabelBoxes", "place_labels", "thin_lines",
           "boxes_overlap"]

MIN_WIDTH = 520  # px: the narrowest plotting area a map is drawn in (1280 px screens)
CHAR_PX = 7.0  # a bold 11 px sans-serif character is at most this wide (common practice)
_PAD = 3.0  # px of white around each label box
_NUMBER_PX = 16.0  # a numbered label's box (one or two digits with its halo)


class LabelBoxes:
    """Label boxes placed so far, in pixels: (left, top, right, bottom) rows."""

    def __init__(self):
        self.boxes = np.empty((0, 4))

    def free(self, box: np.ndarray) -> bool:
        return not boxes_overlap(self.boxes, box).any()

    def add(self, box: np.ndarray) -> None:
        self.boxes = np.vstack([self.boxes, box[None, :]])


def boxes_overlap(boxes: np.ndarray, box: np.ndarray) -> np.ndarray:
    """Which of ``boxes`` (n, 4) overlap ``box`` (4,): left, top, right, bottom."""
    if len(boxes) == 0:
        return np.zeros(0, dtype=bool)
    return ((boxes[:, 0] < box[2]) & (box[0] < boxes[:, 2])
            & (boxes[:, 1] < box[3]) & (box[1] < boxes[:, 3]))


def _to_px(x, y, frame, size):
    (x0, x1), (y0, y1) = frame
    w, h = size
    return ((np.asarray(x, float) - x0) / (x1 - x0) * w,
            (1.0 - (np.asarray(y, float) - y0) / (y1 - y0)) * h)


def _along(px: np.ndarray, py: np.ndarray, shares: np.ndarray) -> np.ndarray:
    """Points at the given shares of a polyline's length (pixels), shape (k, 2)."""
    seg = np.hypot(np.diff(px), np.diff(py))
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    if cum[-1] <= 0:
        return np.column_stack([np.full(len(shares), px[0]), np.full(len(shares), py[0])])
    at = shares * cum[-1]
    return np.column_stack([np.interp(at, cum, px), np.interp(at, cum, py)])


def _box(centre, width, height):
    return np.array([centre[0] - width / 2 - _PAD, centre[1] - height / 2 - _PAD,
                     centre[0] + width / 2 + _PAD, centre[1] + height / 2 + _PAD])


def place_labels(lines: pd.DataFrame, texts: dict, frame, *, height: float,
                 width: float = MIN_WIDTH, avoid: pd.DataFrame | None = None,
                 font_px: float = 11.0, per_text: int = 1) -> pd.DataFrame:
    """A place on its line for each label, clear of every other label.

    Parameters
    ----------
    lines : pandas.DataFrame
        Polylines: columns ``line``, ``x``, ``y`` (data units), vertices in order.
    texts : dict
        Line number -> the label's text. Lines with the same text share one
        label (on the longest of them, up to ``per_text`` lines).
    frame : ((x0, x1), (y0, y1))
        The picture's axes' spans, in data units.
    height, width : float
        The plotting area in pixels (the smallest it is drawn at).
    avoid : pandas.DataFrame, optional
        Points (columns ``x``, ``y``) no label may cover (marked solutions).
    font_px : float
        The labels' font size.

    Returns
    -------
    pandas.DataFrame
        One row per label: ``line``, ``x``, ``y`` (its centre, data units),
        ``text`` (what is written on the map: the label, or its number),
        ``label`` (the full label), ``number`` (0 when written in full, else
        its number in the key), and ``left``, ``top``, ``right``, ``bottom``
        (its box in pixels at ``width`` x ``height``).
    """
    columns = ["line", "x", "y", "text", "label", "number", "left", "top", "right",
               "bottom"]
    if lines.empty or not texts:
        return pd.DataFrame({c: [] for c in columns})
    (x0, x1), (y0, y1) = frame
    size = (float(width), float(height))
    taken = LabelBoxes()
    if avoid is not None and len(avoid):
        ax, ay = _to_px(avoid["x"], avoid["y"], frame, size)
        for cx, cy in zip(ax, ay):  # a marked point and its halo
            taken.add(np.array([cx - 9, cy - 9, cx + 9, cy + 9]))
    polys = {}
    for key, part in lines.groupby("line", sort=False):
        if key not in texts:
            continue
        px, py = _to_px(part["x"].to_numpy(), part["y"].to_numpy(), frame, size)
        polys[key] = (px, py, float(np.hypot(np.diff(px), np.diff(py)).sum()))
    # one label per text, on its longest lines; the longest lines choose first
    chosen, seen = [], {}
    for key in sorted(polys, key=lambda k: -polys[k][2]):
        if seen.get(texts[key], 0) < per_text:
            seen[texts[key]] = seen.get(texts[key], 0) + 1
            chosen.append(key)
    # candidate places from the middle outwards, each line starting a little
    # elsewhere so neighbouring lines do not all try their middles first
    shares = np.linspace(0.08, 0.92, 29)
    rows, pending = [], []
    for order, key in enumerate(chosen):
        px, py, _ = polys[key]
        text = texts[key]
        w, h = len(text) * CHAR_PX, font_px
        start = 0.5 + 0.12 * ((order % 3) - 1)
        cands = _along(px, py, shares[np.argsort(np.abs(shares - start), kind="stable")])
        placed = _first_free(cands, w, h, size, taken)
        if placed is None:
            pending.append((key, cands))
            continue
        rows.append((key, placed, text, text, 0))
    # labels with no room in full: a number on the line, the text in the key
    for number, (key, cands) in enumerate(pending, start=1):
        tag = str(number)
        placed = _first_free(cands, _NUMBER_PX - 2 * _PAD, _NUMBER_PX - 2 * _PAD, size,
                             taken)
        if placed is None:  # nowhere clear even for a number: its line's middle
            c = np.asarray(cands[0], dtype=float)
            placed = (c, _box(c, _NUMBER_PX - 2 * _PAD, _NUMBER_PX - 2 * _PAD))
            taken.add(placed[1])
        rows.append((key, placed, tag, texts[key], number))
    out = []
    for key, (centre, box), shown, label, number in rows:
        out.append({"line": key,
                    "x": x0 + centre[0] / size[0] * (x1 - x0),
                    "y": y0 + (1.0 - centre[1] / size[1]) * (y1 - y0),
                    "text": shown, "label": label, "number": number,
                    "left": box[0], "top": box[1], "right": box[2], "bottom": box[3]})
    return pd.DataFrame(out, columns=columns)


def _first_free(cands: np.ndarray, w: float, h: float, size, taken: LabelBoxes):
    """The first candidate whose box fits the frame and is free; it is then taken.

    Each point on the line is tried with the label centred on it, then beside
    it (its near end at the point, left or right), then just above or below:
    a label near the frame's edge or a crowded line still finds its line.
    """
    gap = 5.0
    offsets = [(0.0, 0.0), (-(w / 2 + gap), 0.0), (w / 2 + gap, 0.0),
               (0.0, -(h / 2 + gap)), (0.0, h / 2 + gap)]
    for dx, dy in offsets:
        for c in cands:
            centre = np.array([c[0] + dx, c[1] + dy])
            box = _box(centre, w, h)
            inside = (box[0] >= 0 and box[1] >= 0 and box[2] <= size[0]
                      and box[3] <= size[1])
            if inside and taken.free(box):
                taken.add(box)
                return centre, box
    return None


def _dense(px: np.ndarray, py: np.ndarray, step: float) -> np.ndarray:
    """A polyline resampled every ``step`` pixels (vertices kept), shape (k, 2)."""
    seg = np.hypot(np.diff(px), np.diff(py))
    cum = np.concatenate([[0.0], np.cumsum(seg)])
    at = np.union1d(np.arange(0.0, cum[-1], step), cum)
    return np.column_stack([np.interp(at, cum, px), np.interp(at, cum, py)])


def thin_lines(lines: pd.DataFrame, frame, *, height: float, width: float = MIN_WIDTH,
               gap: float = 7.0) -> pd.DataFrame:
    """Contour lines with the stretches that crowd an already kept line left out.

    Lines are kept level by level, every other level first (so the lines left
    stay evenly spread: 0.1, 0.3, 0.5 ... before 0.2, 0.4 ...). A vertex of a
    later line closer than ``gap`` pixels to a kept line of another level is
    dropped; what remains of the line is split into stretches of two or more
    vertices, each a line of its own.

    Parameters
    ----------
    lines : pandas.DataFrame
        Columns ``level``, ``line``, ``x``, ``y`` (``contour_lines``).
    frame, height, width
        As for ``place_labels``.
    gap : float
        The least distance, in pixels, between two drawn lines of different levels.

    Returns
    -------
    pandas.DataFrame
        The same columns; ``line`` numbers each stretch anew.
    """
    from scipy.spatial import cKDTree

    if lines.empty:
        return lines
    size = (float(width), float(height))
    levels = np.unique(lines["level"].to_numpy(float))
    order = list(levels[::2]) + list(levels[1::2])
    kept_px: dict[float, list] = {}
    out, number = [], 0
    for level in order:
        others = [p for lv, ps in kept_px.items() if lv != level for p in ps]
        tree = cKDTree(np.vstack(others)) if others else None
        for _, part in lines[lines["level"] == level].groupby("line", sort=False):
            px, py = _to_px(part["x"].to_numpy(), part["y"].to_numpy(), frame, size)
            dense = _dense(px, py, 1.5)
            if tree is not None:
                free = tree.query(dense, k=1)[0] >= gap
            else:
                free = np.ones(len(dense), dtype=bool)
            # stretches of consecutive free points
            edges = np.flatnonzero(np.diff(np.concatenate([[0], free.astype(int), [0]])))
            for a, b in zip(edges[::2], edges[1::2]):
                if b - a < 2:
                    continue
                pts = dense[a:b]
                kept_px.setdefault(level, []).append(pts)
                # drawn through every third point (4.5 px apart): the same line, lighter
                pts = np.vstack([pts[:-1:3], pts[-1:]])
                (x0, x1), (y0, y1) = frame
                out.append(pd.DataFrame({
                    "level": level, "line": number,
                    "x": x0 + pts[:, 0] / size[0] * (x1 - x0),
                    "y": y0 + (1.0 - pts[:, 1] / size[1]) * (y1 - y0)}))
                number += 1
    if not out:
        return lines.iloc[0:0]
    return pd.concat(out, ignore_index=True)[["level", "line", "x", "y"]]
