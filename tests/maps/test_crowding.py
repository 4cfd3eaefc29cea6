"""Labels that never sit on each other and lines that do not bunch, checked by
geometry written out here (box overlap tests, nearest distances by brute force)."""
from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from tradeoff import load_study
from tradeoff.maps.crowding import CHAR_PX, place_labels, thin_lines

from conftest import DEMO


def _overlaps(a, b) -> bool:
    # two boxes (left, top, right, bottom) overlap when they overlap on both axes
    return a[0] < b[2] and b[0] < a[2] and a[1] < b[3] and b[1] < a[3]


def _fan(n: int = 8, spread: float = 0.02) -> pd.DataFrame:
    """n nearly parallel straight lines across a unit map, ``spread`` apart."""
    x = np.linspace(0.0, 1.0, 30)
    return pd.concat([pd.DataFrame({"line": k, "x": x, "y": 0.3 + spread * k + 0.2 * x})
                      for k in range(n)], ignore_index=True)


def test_labels_on_crowded_lines_never_overlap_and_stay_in_the_frame():
    lines = _fan()
    texts = {k: f"response number {k} <= {k}.5" for k in range(8)}
    placed = place_labels(lines, texts, ((0, 1), (0, 1)), height=300, width=400)
    assert len(placed) == 8
    boxes = placed[["left", "top", "right", "bottom"]].to_numpy()
    for i in range(len(boxes)):
        for j in range(i + 1, len(boxes)):
            assert not _overlaps(boxes[i], boxes[j]), (placed.iloc[i].text, placed.iloc[j].text)
    assert (boxes[:, 0] >= 0).all() and (boxes[:, 2] <= 400).all()
    assert (boxes[:, 1] >= 0).all() and (boxes[:, 3] <= 300).all()
    # a label written in full is as wide as its text; the others are numbers with a key
    full = placed[placed["number"] == 0]
    assert ((full["right"] - full["left"]) >= full["text"].str.len() * CHAR_PX).all()
    keyed = placed[placed["number"] > 0]
    assert list(keyed["number"]) == list(range(1, len(keyed) + 1))
    assert (keyed["text"] == keyed["number"].astype(str)).all()
    assert set(placed["label"]) == set(texts.values())


def test_label_sits_on_or_beside_its_own_line():
    lines = _fan(n=3, spread=0.3)
    texts = {k: f"limit {k}" for k in range(3)}
    placed = place_labels(lines, texts, ((0, 1), (0, 1)), height=300, width=400)
    for _, row in placed.iterrows():
        part = lines[lines["line"] == row["line"]]
        # the line's height at the label's x, in pixels: within half the label's
        # height plus the gap beside it (5 px) and its padding (3 px)
        y_line = np.interp(row["x"], part["x"], part["y"])
        assert abs(y_line - row["y"]) * 300 <= 11 / 2 + 5 + 3 + 1e-9


def test_marked_points_stay_uncovered():
    lines = _fan(n=1)
    middle = pd.DataFrame({"x": [0.5], "y": [0.4]})  # on the line, at its middle
    placed = place_labels(lines, {0: "a long label of a limit"}, ((0, 1), (0, 1)),
                          height=300, width=400, avoid=middle)
    row = placed.iloc[0]
    px, py = 0.5 * 400, (1 - 0.4) * 300
    assert not (row["left"] < px < row["right"] and row["top"] < py < row["bottom"])


def test_thinned_lines_keep_their_distance():
    # twenty upright lines of a surface that climbs steeply on the right (x = 0.5 +
    # 0.5 level^(1/4)): the lines of the higher levels crowd there
    x = np.linspace(0, 1, 200)
    rows = [pd.DataFrame({"level": lv, "line": k,
                          "x": np.full_like(x, 0.5 + 0.5 * lv ** 0.25), "y": x})
            for k, lv in enumerate(np.linspace(0.05, 1.0, 20))]
    lines = pd.concat(rows, ignore_index=True)
    thin = thin_lines(lines, ((0, 1), (0, 1)), height=300, width=400, gap=7.0)
    assert 0 < thin["level"].nunique() < 20  # some levels left out where they crowd
    px = np.column_stack([thin["x"] * 400, (1 - thin["y"]) * 300])
    lv = thin["level"].to_numpy()
    # brute force: every drawn vertex is at least the gap from any vertex of another level
    for level in np.unique(lv):
        a, b = px[lv == level], px[lv != level]
        if len(b):
            d = np.sqrt(((a[:, None, :] - b[None, :, :]) ** 2).sum(-1)).min()
            assert d >= 7.0 - 1e-9
    # far-apart lines are all kept, whole
    apart = pd.concat([pd.DataFrame({"level": lv, "line": k, "x": np.full_like(x, lv),
                                     "y": x}) for k, lv in enumerate([0.2, 0.5, 0.8])],
                      ignore_index=True)
    kept = thin_lines(apart, ((0, 1), (0, 1)), height=300, width=400)
    assert sorted(kept["level"].unique()) == [0.2, 0.5, 0.8]
    for level in (0.2, 0.5, 0.8):
        ys = kept.loc[kept["level"] == level, "y"]
        assert ys.min() == pytest.approx(0) and ys.max() == pytest.approx(1)


def test_demo_limits_map_labels_do_not_overlap():
    from tradeoff import fit_study, optimize
    from tradeoff.maps.contours import limits_map
    from tradeoff.maps.pictures import limits_labels

    study = load_study(DEMO)
    fit = fit_study(study)
    best = optimize(study, top=1, seed=study.seed).solutions[0]
    for x, y in (("protein", "glycerol"), ("protein", "mix_temp"), ("glycerol", "mix_temp")):
        held = {k: v for k, v in best.settings.items() if k not in (x, y)}
        lmap = limits_map(study, x, y, fixed=held, fit=fit)
        marks = pd.DataFrame({"what": ["S1"], "x": [best.settings[x]],
                              "y": [best.settings[y]]})
        placed = limits_labels(lmap, {r.name: (r.label, r.unit) for r in study.responses},
                               marks)
        # one label per limit drawn on the map
        drawn = lmap.lines.drop_duplicates(["name", "limit"])
        assert len(placed) == len(drawn)
        boxes = placed[["left", "top", "right", "bottom"]].to_numpy()
        for i in range(len(boxes)):
            for j in range(i + 1, len(boxes)):
                assert not _overlaps(boxes[i], boxes[j]), (x, y, i, j)
