"""The workbench's session file: what a user chose, kept across reloads and restarts.

A plain JSON text of our own design (README, "The workbench keeps your work"):

```
{"kind": "tradeoff workbench session", "version": 1,
 "study": {"kind": "path", "path": "/lab/bread.toml"}
          | {"kind": "files", "files": ["bread.toml", "runs.csv"], "label": "..."},
 "draft": null | {"data": "runs.csv", "draft": {...}},
 "goals": {"crumb_hardness": {"goal": "minimize", "lower": 4, "upper": 8, "weight": 2}},
 "models": {"crumb_hardness": "quadratic", "volume": ["A", "B", "A:B"]},
 "reduce": ["volume"], "top": 5, "rank_by": "desirability", "aim": "balance",
 "spread": {"bake_temp": 1.5}, "chosen": 0,
 "pins": {"best balance": {"bake_temp": 182.5, "flour": "rice"}},
 "typed": {"confirm": {"columns": ["run", "bake_temp", "volume"],
                       "rows": [["C1", 182.5, null]]}},
 "batch": {"size_g": 750, "step_g": 1, "batches": 2, "seed": 11,
           "left_out": [], "percent": [], "rest": "rest of the recipe"}}
```

``study`` says where the open study is: a file on disk, or files kept in the
workbench's own folder (uploads, and studies drafted in the workbench).
``draft`` is a study being drafted on the "new study" view (study/draft.py).
``pins`` are the recipes pinned to compare, ``typed`` the tables typed in the
workbench and not saved yet (confirmation runs, corrected runs: blank cells are
``null``), ``batch`` the choices of the batch sheet; all three may be absent.
Goals are written with the study file's own goal keys and read back through
the study reader's goal check, so a session file can never hold a goal the
study file could not. Nothing here touches the user's study or data files.
"""
from __future__ import annotations

import json
import math
import numbers

import numpy as np
import pandas as pd

from ..errors import StudyError
from .reader import _goal
from .spec import MODELS, Goal

__all__ = ["SESSION_KIND", "SESSION_SUFFIX", "session_text", "read_session", "table_json",
           "BATCH_KEYS"]

SESSION_KIND = "tradeoff workbench session"
SESSION_SUFFIX = ".session.json"
_RANKS = ("desirability", "chance", "production")
_AIMS = ("balance", "production")
# the batch sheet's choices: key -> the type its value must have
BATCH_KEYS = {"size_g": float, "step_g": float, "batches": int, "seed": int,
              "left_out": list, "percent": list, "rest": str}


def _cell(value):
    """A table cell as JSON holds it: blanks (None, NaN, pandas' NA) become null."""
    if value is None or isinstance(value, (str, bool)):
        return value
    if isinstance(value, np.bool_):
        return bool(value)
    if value is pd.NA or value is pd.NaT:
        return None
    if isinstance(value, numbers.Integral):
        return int(value)
    try:
        number = float(value)
    except (TypeError, ValueError):
        return str(value)
    # a float stays a float (191.0 reads back as 191.0, not 191): a recipe kept
    # across a reload must give the same sheets as before it
    return None if math.isnan(number) else number


def table_json(frame) -> dict:
    """A typed table (a DataFrame) as ``{"columns": [...], "rows": [[...], ...]}``."""
    return {"columns": [str(c) for c in frame.columns],
            "rows": [[_cell(v) for v in row] for row in frame.itertuples(index=False)]}


def session_text(*, study: dict, goals: dict[str, Goal], models: dict, reduce=(),
                 top: int = 5, rank_by: str = "desirability", aim: str = "balance",
                 spread: dict | None = None, chosen: int = 0,
                 draft: dict | None = None, pins: dict | None = None,
                 typed: dict | None = None, batch: dict | None = None,
                 plan: dict | None = None, whatif: dict | None = None,
                 asked: dict | None = None) -> str:
    """The session as JSON text (keys sorted, so an unchanged session writes the same bytes).

    ``pins`` maps a recipe's label to its settings, ``typed`` a table's name to
    the table (a DataFrame, or None for none), ``batch`` the batch sheet's choices,
    ``plan`` the plan view's (widget name -> value), ``whatif`` the what-if panel's
    settings and the solution they started from (``{"from": label, "settings": {...}}``),
    ``asked`` what the user asked to see (``next_runs``: how many runs "Make next"
    suggests, 0 none; ``compare_shown``: responses whose model comparison is open;
    ``report``: the report prepared; ``frontier``: the two goals the frontier is
    drawn between, or none yet).
    """
    doc = {"kind": SESSION_KIND, "version": 1, "study": study,
           "goals": {n: g.keys() or {"goal": "none", "weight": g.weight}
                     for n, g in goals.items()},
           "models": {n: m if isinstance(m, str) else list(m) for n, m in models.items()},
           "reduce": sorted(reduce), "top": int(top), "rank_by": rank_by, "aim": aim,
           "spread": dict(spread or {}), "chosen": int(chosen), "draft": draft,
           "pins": {label: {n: _cell(v) for n, v in settings.items()}
                    for label, settings in (pins or {}).items()},
           "typed": {n: table_json(t) for n, t in (typed or {}).items() if t is not None},
           "batch": dict(batch or {}),
           "plan": {n: [_cell(x) for x in v] if isinstance(v, (list, tuple)) else _cell(v)
                    for n, v in (plan or {}).items()},
           "asked": {"next_runs": int((asked or {}).get("next_runs") or 0),
                     "compare_shown": sorted((asked or {}).get("compare_shown") or ()),
                     "report": bool((asked or {}).get("report")),
                     "frontier": list((asked or {}).get("frontier") or ())},
           "whatif": {"from": (whatif or {}).get("from"),
                      "settings": {n: _cell(v) for n, v
                                   in ((whatif or {}).get("settings") or {}).items()}}}
    return json.dumps(doc, indent=1, sort_keys=True, ensure_ascii=False) + "\n"


def read_session(text: str | bytes, name: str) -> dict:
    """A session file's text -> its checked content (goals as ``Goal``, models as given).

    Raises
    ------
    StudyError
        Not a session file, or a goal, model or choice it could not have held.
    """
    try:
        doc = json.loads(text)
    except (ValueError, UnicodeDecodeError) as exc:
        raise StudyError(f"{name}: not a workbench session file ({exc}): delete it to "
                         "start afresh") from None
    if not isinstance(doc, dict) or doc.get("kind") != SESSION_KIND:
        raise StudyError(f"{name}: not a workbench session file (no \"kind\": "
                         f"\"{SESSION_KIND}\"): delete it to start afresh")
    if doc.get("version") != 1:
        raise StudyError(f"{name}: session file version {doc.get('version')!r}; this "
                         "workbench reads version 1: delete it to start afresh")
    study = doc.get("study")
    if not isinstance(study, dict) or study.get("kind") not in ("path", "files"):
        raise StudyError(f"{name}: \"study\" must say where the study is (a path or "
                         "kept files)")
    draft = doc.get("draft")
    if draft is not None and not (isinstance(draft, dict) and isinstance(
            draft.get("draft"), dict)):
        raise StudyError(f"{name}: \"draft\" must hold the study being drafted")
    goals = {}
    for gname, table in (doc.get("goals") or {}).items():
        if not isinstance(table, dict):
            raise StudyError(f"{name}: the goal of '{gname}' must be a table of keys")
        goals[gname] = _goal(table, name, f"goal of '{gname}'")
    models = {}
    for rname, model in (doc.get("models") or {}).items():
        if isinstance(model, str) and model in MODELS:
            models[rname] = model
        elif isinstance(model, list) and model and all(isinstance(t, str) for t in model):
            models[rname] = tuple(model)
        else:
            raise StudyError(f"{name}: the model of '{rname}' must be one of "
                             f"{', '.join(MODELS)} or a list of terms, found {model!r}")
    top = doc.get("top", 5)
    chosen = doc.get("chosen", 0)
    for key, value in (("top", top), ("chosen", chosen)):
        if not isinstance(value, int) or isinstance(value, bool) or value < 0:
            raise StudyError(f"{name}: \"{key}\" must be a whole number, 0 or more, "
                             f"found {value!r}")
    rank_by, aim = doc.get("rank_by", "desirability"), doc.get("aim", "balance")
    if rank_by not in _RANKS or aim not in _AIMS:
        raise StudyError(f"{name}: \"rank_by\" must be one of {', '.join(_RANKS)} and "
                         f"\"aim\" one of {', '.join(_AIMS)}")
    spread = doc.get("spread") or {}
    if not isinstance(spread, dict) or not all(
            v is None or (isinstance(v, (int, float)) and not isinstance(v, bool) and v >= 0)
            for v in spread.values()):
        raise StudyError(f"{name}: \"spread\" must give each factor's production SD as a "
                         "number, 0 or more")
    reduce = doc.get("reduce") or []
    if not isinstance(reduce, list) or not all(isinstance(r, str) for r in reduce):
        raise StudyError(f"{name}: \"reduce\" must be a list of response names")
    return {"study": study, "goals": goals, "models": models, "reduce": set(reduce),
            "top": max(1, top), "rank_by": rank_by, "aim": aim, "spread": spread,
            "chosen": chosen, "draft": draft, "pins": _pins(doc.get("pins"), name),
            "typed": _typed(doc.get("typed"), name), "batch": _batch(doc.get("batch"), name),
            "plan": _plan(doc.get("plan"), name), "whatif": _whatif(doc.get("whatif"), name),
            "asked": _asked(doc.get("asked"), name)}


def _scalar(value) -> bool:
    return value is None or isinstance(value, (int, float, str, bool))


def _pins(pins, name: str) -> dict:
    pins = pins or {}
    if not isinstance(pins, dict) or not all(
            isinstance(s, dict) and all(_scalar(v) and v is not None for v in s.values())
            for s in pins.values()):
        raise StudyError(f"{name}: \"pins\" must give each pinned recipe's settings as "
                         "numbers or levels")
    return {str(label): dict(settings) for label, settings in pins.items()}


def _typed(typed, name: str) -> dict:
    typed = typed or {}
    if not isinstance(typed, dict):
        raise StudyError(f"{name}: \"typed\" must hold the typed tables by name")
    for table_name, table in typed.items():
        columns = table.get("columns") if isinstance(table, dict) else None
        rows = table.get("rows") if isinstance(table, dict) else None
        if not (isinstance(columns, list) and all(isinstance(c, str) for c in columns)
                and isinstance(rows, list) and all(
                    isinstance(r, list) and len(r) == len(columns)
                    and all(_scalar(v) for v in r) for r in rows)):
            raise StudyError(f"{name}: the typed table '{table_name}' must have "
                             "\"columns\" and \"rows\" of as many cells")
    return {str(n): t for n, t in typed.items()}


def _batch(batch, name: str) -> dict:
    batch = batch or {}
    if not isinstance(batch, dict):
        raise StudyError(f"{name}: \"batch\" must hold the batch sheet's choices")
    for key, value in batch.items():
        kind = BATCH_KEYS.get(key)
        fits = kind is not None and not isinstance(value, bool) and (
            isinstance(value, (int, float)) if kind is float else isinstance(value, kind))
        if not fits:
            raise StudyError(f"{name}: the batch sheet's \"{key}\" cannot be {value!r}")
    return dict(batch)


def _plan(plan, name: str) -> dict:
    plan = plan or {}
    if not isinstance(plan, dict) or not all(
            _scalar(v) or (isinstance(v, list) and all(_scalar(x) for x in v))
            for v in plan.values()):
        raise StudyError(f"{name}: \"plan\" must hold the plan view's choices as numbers, "
                         "words or lists of them")
    return dict(plan)


def _whatif(whatif, name: str) -> dict:
    whatif = whatif or {}
    settings = whatif.get("settings") or {} if isinstance(whatif, dict) else None
    if not (isinstance(settings, dict) and all(_scalar(v) for v in settings.values())
            and (whatif.get("from") is None or isinstance(whatif.get("from"), str))):
        raise StudyError(f"{name}: \"whatif\" must hold the what-if settings and the "
                         "solution they started from")
    return {"from": whatif.get("from"), "settings": dict(settings)}


def _asked(asked, name: str) -> dict:
    asked = asked or {}
    runs, shown = asked.get("next_runs", 0), asked.get("compare_shown", [])
    pair = asked.get("frontier", [])
    if not (isinstance(asked, dict) and isinstance(runs, int) and not isinstance(runs, bool)
            and 0 <= runs <= 12 and isinstance(shown, list)
            and all(isinstance(n, str) for n in shown)
            and isinstance(asked.get("report", False), bool)
            and isinstance(pair, list) and len(pair) in (0, 2)
            and all(isinstance(n, str) for n in pair)):
        raise StudyError(f"{name}: \"asked\" must say how many next runs were asked for "
                         "(0 to 12), which model comparisons are open, whether the "
                         "report was prepared and which two goals the frontier shows")
    return {"next_runs": runs, "compare_shown": set(shown),
            "report": asked.get("report", False), "frontier": list(pair)}
