"""How a lab's panel table is laid out, and its reading into one score a row.

The ``[panel]`` section may say

- ``columns = {run = "bottle", assessor = "judge", attribute = "attribute",
  score = "score", session = "session"}``: the lab's own column names (any
  left out keep their usual name);
- ``layout = "wide"``: one column per attribute, one row per run, assessor
  (and session), as spreadsheets and panel software usually export;
- ``[[panel.attributes]]`` tables with ``name``, ``scale = [min, max]``,
  ``kind = "line" | "category"``, optional ``labels`` (one per category
  point) and ``direction`` (``"up"``: more is better, ``"down"``: less is);
  attributes without a table use ``[panel] scale`` as a line scale.

A category score must be a whole point of its scale: categories are ordered
labels, not lengths, and the cumulative-logit model
(``model/panel_category.py``) treats them as such.
"""
from __future__ import annotations

from collections.abc import Iterable

import numpy as np
import pandas as pd

from ..errors import DataError, StudyError, where
from ..study.intake import RawTable, cell_text, parse_number

__all__ = ["ROLES", "KINDS", "LAYOUTS", "panel_layout", "read_scores", "attribute_info",
           "describe_category"]

ROLES = ("run", "assessor", "attribute", "score", "session")
KINDS = ("line", "category")
LAYOUTS = ("long", "wide")
_ATTRIBUTE_KEYS = {"name", "scale", "kind", "labels", "direction"}


def _scale(value, fname, what) -> tuple[float, float]:
    ok = (isinstance(value, list) and len(value) == 2
          and all(isinstance(v, (int, float)) and not isinstance(v, bool)
                  and np.isfinite(v) for v in value))
    if not ok:
        raise StudyError(f"{fname}: {what} needs scale = [low, high], the lowest and "
                         "highest score allowed, for example scale = [1, 9]")
    lo, hi = float(value[0]), float(value[1])
    if lo >= hi:
        raise StudyError(f"{fname}: {what} scale = [{lo:g}, {hi:g}]: the low end must "
                         "come first and be below the high end")
    return lo, hi


def panel_layout(sec: dict, fname: str, default_scale: tuple[float, float] | None) -> dict:
    """The checked layout keys of ``[panel]``: ``columns`` (role -> column name),
    ``layout``, ``attributes`` (name -> {scale, kind, labels, direction})."""
    cols = sec.get("columns", {})
    if not isinstance(cols, dict):
        raise StudyError(f"{fname}: [panel] columns must be a table such as columns = "
                         "{run = \"bottle\", assessor = \"judge\"}")
    for role, name in cols.items():
        if role not in ROLES:
            raise StudyError(f"{fname}: [panel] columns: '{role}' is not a column role I "
                             f"know: use {', '.join(ROLES)}")
        if not isinstance(name, str) or not name.strip():
            raise StudyError(f"{fname}: [panel] columns: {role} must be a column name in "
                             "quotes")
    columns = {role: cols.get(role, role).strip() for role in ROLES}
    layout = sec.get("layout", "long")
    if layout not in LAYOUTS:
        raise StudyError(f"{fname}: [panel] layout = {layout!r} is not one I know: use "
                         "\"long\" (one score a row) or \"wide\" (one column per attribute)")
    if layout == "wide":
        for role in ("attribute", "score"):
            if role in cols:
                raise StudyError(f"{fname}: [panel] columns: {role} is not used with "
                                 "layout = \"wide\" (each attribute is its own column): "
                                 "remove it")
    attrs = {}
    listed = sec.get("attributes", [])
    if not isinstance(listed, list):
        raise StudyError(f"{fname}: [panel] attributes must be written as "
                         "[[panel.attributes]] tables")
    for i, a in enumerate(listed, 1):
        what = f"[[panel.attributes]] number {i}"
        if not isinstance(a, dict) or not isinstance(a.get("name"), str) \
                or not a["name"].strip():
            raise StudyError(f"{fname}: {what} needs name = \"<attribute>\"")
        name = a["name"].strip()
        what = f"[[panel.attributes]] '{name}'"
        extra = sorted(set(a) - _ATTRIBUTE_KEYS)
        if extra:
            raise StudyError(f"{fname}: {what}: '{extra[0]}' is not a key I know: use "
                             f"{', '.join(sorted(_ATTRIBUTE_KEYS))}")
        if name in attrs:
            raise StudyError(f"{fname}: {what} is described twice: keep one table")
        kind = a.get("kind", "line")
        if kind not in KINDS:
            raise StudyError(f"{fname}: {what}: kind = {kind!r} is not one I know: use "
                             "\"line\" (a line or numeric scale) or \"category\" (ordered "
                             "points such as 1 to 5)")
        if "scale" in a:
            scale = _scale(a["scale"], fname, what)
        elif default_scale is not None:
            scale = default_scale
        else:
            raise StudyError(f"{fname}: {what} needs scale = [low, high] (or give "
                             "[panel] scale for every attribute)")
        info = {"scale": scale, "kind": kind, "labels": None, "direction": None}
        if kind == "category":
            if any(v != int(v) for v in scale):
                raise StudyError(f"{fname}: {what}: a category scale runs between whole "
                                 f"points, found [{scale[0]:g}, {scale[1]:g}]")
            n = int(scale[1] - scale[0]) + 1
            if n > 15:
                raise StudyError(f"{fname}: {what}: {n} category points are too many for "
                                 "a category model: use kind = \"line\"")
        if "labels" in a:
            labels = a["labels"]
            n = int(scale[1] - scale[0]) + 1
            if kind != "category" or not isinstance(labels, list) or len(labels) != n \
                    or not all(isinstance(x, str) for x in labels):
                raise StudyError(f"{fname}: {what}: labels are for a category scale, one "
                                 f"quoted label per point ({n} for this scale)")
            info["labels"] = [x.strip() for x in labels]
        if "direction" in a:
            if a["direction"] not in ("up", "down"):
                raise StudyError(f"{fname}: {what}: direction = {a['direction']!r}: use "
                                 "\"up\" (more is better) or \"down\" (less is better)")
            info["direction"] = a["direction"]
        attrs[name] = info
    return {"columns": columns, "layout": layout, "attributes": attrs,
            "mapped": set(cols)}


def attribute_info(sec: dict, name: str) -> dict:
    """Scale, kind, labels and direction of one attribute (``[panel] scale`` as a
    line scale when the attribute has no table of its own)."""
    info = sec.get("attributes", {}).get(name)
    if info is not None:
        return info
    if sec.get("scale") is None:
        raise DataError(f"attribute '{name}' has no [[panel.attributes]] table and "
                        "[panel] has no scale: add one or the other")
    return {"scale": sec["scale"], "kind": "line", "labels": None, "direction": None}


def describe_category(opts: dict, attr: str, src: str, lo: float, hi: float) -> str:
    """One sentence saying how a ``panel_category`` response is computed and modelled."""
    summary = opts["summary"]
    n = opts.get("boxes", 0)
    what = ("the expected category" if summary == "expected" else
            f"the percent of scores in the {'top' if summary == 'top_box' else 'bottom'} "
            f"{n} categor{'y' if n == 1 else 'ies'}")
    by = (", each assessor's use of the scale as fixed effects"
          if opts.get("assessor") == "fixed" else "")
    return (f"{what} of the {attr} scores (category scale {lo:g} to {hi:g}) from {src}: "
            "each run's observed value, modelled by a cumulative-logit (proportional-odds) "
            f"model of the scores on the study's model terms{by}")


def _column_index(table: RawTable, sec: dict, role: str, needed: bool) -> int | None:
    name = sec["columns"][role]
    if name in table.header:
        return table.header.index(name)
    if needed or role in sec.get("mapped", ()):
        how = (f"columns = {{{role} = \"{name}\"}} in [panel]" if role in sec.get("mapped", ())
               else f"the {role} of each score")
        found = [h for h in table.header if h]
        raise DataError(f"{table.source.name}: no column '{name}' in the panel table "
                        f"({how}): found {found}; name the column or map it with "
                        "[panel] columns = {...}")
    return None


def read_scores(table: RawTable, sec: dict,
                run_ids: Iterable[str] | None = None) -> pd.DataFrame:
    """Check a panel table as the lab laid it out and return one score a row.

    Returns
    -------
    DataFrame
        Columns ``row``, ``run``, ``assessor``, ``attribute``, ``session``
        ("" without a session column), ``score`` (NaN where blank) and
        ``column`` (the table column the score was read from).
    """
    fname = table.source.name
    cols = sec["columns"]
    wide = sec.get("layout", "long") == "wide"
    idx = {role: _column_index(table, sec, role, role in ("run", "assessor"))
           for role in ("run", "assessor", "session")}
    if wide:
        skip = {cols["run"], cols["assessor"], cols["session"], ""}
        score_cols = [(h, i, h) for i, h in enumerate(table.header) if h not in skip]
        if not score_cols:
            raise DataError(f"{fname}: the wide panel table has no attribute columns "
                            f"besides {cols['run']} and {cols['assessor']}")
    else:
        idx["attribute"] = _column_index(table, sec, "attribute", True)
        score_cols = [(None, _column_index(table, sec, "score", True), cols["score"])]
    known = set(run_ids) if run_ids is not None else None
    out = {k: [] for k in ("row", "run", "assessor", "attribute", "session", "score",
                           "column")}
    first_seen: dict[tuple, int] = {}
    for row, cells in table.rows:
        def cell(i):
            return cells[i] if i is not None and i < len(cells) else None

        ids = {}
        for role in ("run", "assessor") + (() if wide else ("attribute",)):
            value = cell(idx[role])
            if value is None or not cell_text(value):
                raise DataError(f"{where(fname, row, cols[role])}blank {role}: every score "
                                "needs its run, assessor and attribute")
            ids[role] = cell_text(value)
        if known is not None and ids["run"] not in known:
            raise DataError(f"{where(fname, row, cols['run'])}run '{ids['run']}' is not in "
                            "the runs table: check the id, or add the run to the runs table")
        session = "" if cell(idx["session"]) is None else cell_text(cell(idx["session"]))
        for attr, i, colname in score_cols:
            attribute = attr if wide else ids["attribute"]
            score = parse_number(cell(i), decimal_comma=table.decimal_comma,
                                 location=where(fname, row, colname))
            info = attribute_info(sec, attribute)
            lo, hi = info["scale"]
            if not np.isnan(score) and not lo <= score <= hi:
                raise DataError(f"{where(fname, row, colname)}{attribute} score {score:g} "
                                f"is outside its scale {lo:g} to {hi:g}: correct the "
                                "score, or the scale in [panel]")
            if info["kind"] == "category" and not np.isnan(score) and score != int(score):
                raise DataError(f"{where(fname, row, colname)}{attribute} score {score:g} "
                                f"is not a point of its category scale ({lo:g}, "
                                f"{lo + 1:g}, ... {hi:g}): categories are whole numbers")
            key = (ids["run"], ids["assessor"], attribute, session)
            if key in first_seen:
                also = " and session" if idx["session"] is not None else ""
                raise DataError(f"{where(fname, row, cols['assessor'])}assessor "
                                f"'{ids['assessor']}' scored '{attribute}' of run "
                                f"'{ids['run']}' again (first at row {first_seen[key]}): "
                                f"keep one score per run, assessor, attribute{also}, or "
                                f"add a '{cols['session']}' column for repeat tastings")
            first_seen[key] = row
            for k, v in (("row", row), ("run", ids["run"]), ("assessor", ids["assessor"]),
                         ("attribute", attribute), ("session", session), ("score", score),
                         ("column", colname)):
                out[k].append(v)
    if idx["session"] is not None and len(set(out["session"])) < 2 and out["row"]:
        raise DataError(f"{fname}: column '{cols['session']}' holds one session only "
                        f"('{out['session'][0]}'): remove the column, or give repeat "
                        "tastings their own session")
    frame = pd.DataFrame(out)
    frame["row"] = frame["row"].astype(int)
    frame["score"] = frame["score"].astype(float)
    return frame
