"""A study file being drafted: each data column's role, written out as study-file TOML.

The workbench's "new study" form holds a ``Draft``: the data table's columns,
each declared as a factor, a blend component, a response, the run id, the batch
(whole plot), the block, or notes. ``draft_spec`` turns it into the study-file
document the reader accepts (the keys of ``spec.SECTION_KEYS`` only, nothing
parallel), ``draft_text`` into its TOML text, and ``draft_problems`` lists what
stops it from loading: first what is missing, in a lab user's words, then the
reader's own one-line message (the same as the command line's).

``guess_draft`` proposes roles from the table. Numbers that add up to the same
total in every row are the components of a blend, not responses.
"""
from __future__ import annotations

import itertools
import re
from dataclasses import asdict, dataclass, field, replace
from pathlib import Path

import numpy as np

from ..errors import TradeoffError
from .intake import RawTable, cell_text, parse_number, read_table
from .mixture import MIXTURE_MODELS, PROCESS_MODES
from .reader import build_study
from .runs import attach_runs
from .spec import GOALS, MAX_LEVELS, MODELS

__all__ = ["ROLES", "DraftColumn", "Draft", "guess_draft", "draft_spec", "draft_text",
           "draft_problems", "draft_to_dict", "draft_from_dict", "with_column"]

# role -> what it means, in the form's words
ROLES = {
    "factor": "factor",
    "component": "blend component",
    "response": "response",
    "run": "run id",
    "batch": "batch (whole plot)",
    "block": "block (day, lot)",
    "notes": "notes",
}
# Column names labs give to things that are not settings or results (common practice).
_RUN_NAMES = {"run", "run_id", "runid", "id", "sample", "sample_id"}
_NOTE_NAMES = {"std_order", "run_order", "order", "point", "type", "note", "notes",
               "comment", "comments", "remark", "remarks", "description"}
_BATCH_NAMES = {"batch", "whole_plot", "wholeplot", "dough", "oven_load"}
_BLOCK_NAMES = {"block", "day", "lot"}
# The reader accepts a blend whose rows add up to within 0.5 % of the total.
_SUM_TOLERANCE = 0.005
# Subsets of at most this many number columns are searched for a blend.
_MAX_BLEND_SEARCH = 14


@dataclass
class DraftColumn:
    """One data column and what it is in the study (a plain record the form edits)."""

    column: str
    role: str = "notes"
    label: str = ""
    unit: str = ""
    low: float | None = None
    high: float | None = None
    levels: list[str] | None = None
    hard_to_change: bool = False
    goal: str = "none"
    lower: float | None = None
    upper: float | None = None
    target: float | None = None
    weight: float = 1.0


@dataclass
class Draft:
    """A whole study being drafted: its name, data file, columns and blend total."""

    name: str
    data: str | None = None
    description: str = ""
    model: str = "interactions"
    columns: list[DraftColumn] = field(default_factory=list)
    total: float | None = None
    mixture_model: str = "quadratic"
    process: str = "linear"

    def of_role(self, role: str) -> list[DraftColumn]:
        return [c for c in self.columns if c.role == role]

    def column(self, name: str) -> DraftColumn:
        for c in self.columns:
            if c.column == name:
                return c
        raise KeyError(name)


def draft_to_dict(draft: Draft) -> dict:
    """The draft as plain JSON-ready data (the session file keeps it)."""
    return asdict(draft)


def draft_from_dict(data: dict) -> Draft:
    """The inverse of ``draft_to_dict``; unknown keys are ignored (an older session file)."""
    known = set(DraftColumn.__dataclass_fields__)
    columns = [DraftColumn(**{k: v for k, v in c.items() if k in known})
               for c in data.get("columns", [])]
    head = {k: v for k, v in data.items()
            if k in Draft.__dataclass_fields__ and k != "columns"}
    return Draft(**head, columns=columns)


# -- guessing ---------------------------------------------------------------------

def _cells(table: RawTable, j: int) -> list:
    return [cells[j] if j < len(cells) else None for _, cells in table.rows]


def _numbers(table: RawTable, j: int) -> np.ndarray | None:
    """Column j as numbers (NaN for blanks), or None when a cell holds text."""
    try:
        return np.array([np.nan if c is None else
                         parse_number(c, decimal_comma=table.decimal_comma, location="")
                         for c in _cells(table, j)], dtype=float)
    except TradeoffError:
        return None


def _blend(numbers: dict[str, np.ndarray]) -> tuple[list[str], float] | None:
    """The largest set of complete, varied number columns with the same sum in every row."""
    names = [n for n, v in numbers.items()
             if len(v) >= 3 and not np.isnan(v).any() and v.min() >= 0 and np.ptp(v) > 0]
    names = names[:_MAX_BLEND_SEARCH]
    for size in range(len(names), 1, -1):
        for subset in itertools.combinations(names, size):
            sums = np.sum([numbers[n] for n in subset], axis=0)
            total = float(np.median(sums))
            # the sum must stay put while every part moves: a small measured value
            # whose spread hides inside the tolerance is not a part of the blend
            steady = np.ptp(sums) <= 0.05 * min(np.ptp(numbers[n]) for n in subset)
            if (total > 0 and steady
                    and np.all(np.abs(sums - total) <= _SUM_TOLERANCE * total)):
                return list(subset), float(np.round(total, 6))
    return None


def _key(column: str) -> str:
    return re.sub(r"[^a-z0-9]+", "_", column.lower()).strip("_")


def guess_draft(file_name: str, data: bytes, *, sheet: str | None = None) -> Draft:
    """A first draft of a study from a data table: each column's role guessed.

    Run ids, orders and notes are told by their names; number columns that add
    up to one total in every row are blend components (with that total); number
    columns with at most five settings, repeated across runs, and text columns with 2 to 12 levels
    repeated across runs, are factors; the other number columns (blank ones
    too, as in a run sheet still to fill in) are responses. Ranges and levels
    are those tested.
    """
    table = read_table(Path(file_name), sheet=sheet, data=data)
    numbers, texts = {}, {}
    for j, column in enumerate(table.header):
        if not column:
            continue
        values = _numbers(table, j)
        if values is not None:
            numbers[column] = values
        else:
            texts[column] = [cell_text(c) for c in _cells(table, j) if c is not None]
    named = {c: _key(c) for c in [*numbers, *texts]}
    by_name = {c for c, k in named.items()
               if k in _RUN_NAMES | _NOTE_NAMES | _BATCH_NAMES | _BLOCK_NAMES}
    blend = _blend({c: v for c, v in numbers.items() if c not in by_name})
    parts, total = blend if blend else ([], None)
    columns = []
    for column in [h for h in table.header if h]:
        key, col = named[column], DraftColumn(column=column)
        values = numbers.get(column)
        if key in _RUN_NAMES:
            col.role = "run"
        elif key in _NOTE_NAMES:
            col.role = "notes"
        elif key in _BATCH_NAMES:
            col.role = "batch"
        elif key in _BLOCK_NAMES:
            col.role = "block"
        elif column in parts:
            col.role = "component"
        elif values is not None:
            settings = np.unique(values[~np.isnan(values)])
            varied = len(settings) >= 2 and not np.isnan(values).any()
            # settings repeat from run to run; measured values seldom do
            repeated = len(settings) < len(values)
            col.role = ("factor" if varied and repeated and len(settings) <= 5
                        else "response")
        else:
            levels = sorted(set(texts[column]))
            repeated = len(levels) < len(texts[column])
            col.role = ("factor" if 2 <= len(levels) <= MAX_LEVELS and repeated
                        else "notes")
        if values is not None and not np.isnan(values).all():
            col.low, col.high = float(np.nanmin(values)), float(np.nanmax(values))
        elif column in texts:
            col.levels = sorted(set(texts[column]), key=texts[column].index)
        columns.append(col)
    return Draft(name=Path(file_name).stem.replace("_", " "), data=Path(file_name).name,
                 columns=columns, total=total)


# -- writing ----------------------------------------------------------------------

def _described(col: DraftColumn) -> dict:
    out: dict = {"name": col.column}
    if col.label and col.label != col.column:
        out["label"] = col.label
    if col.unit:
        out["unit"] = col.unit
    return out


def _goal(col: DraftColumn) -> dict:
    if col.goal == "none":
        return {}
    out: dict = {"goal": col.goal}
    for key in ("lower", "target", "upper") if col.goal == "target" else ("lower", "upper"):
        if getattr(col, key) is not None:
            out[key] = getattr(col, key)
    if col.weight != 1.0:
        out["weight"] = col.weight
    return out


def draft_spec(draft: Draft) -> dict:
    """The draft as a study-file document (the reader's keys, in the file's usual order).

    Blanks are left out rather than guessed, so the reader names what is missing.
    """
    head: dict = {"name": draft.name or "new study"}
    if draft.data:
        head["data"] = draft.data
    if draft.description:
        head["description"] = draft.description
    head["model"] = draft.model
    for role, key in (("batch", "whole_plot"), ("block", "blocks")):
        chosen = draft.of_role(role)
        if chosen:
            head[key] = chosen[0].column
    spec: dict = {"study": head}
    components = draft.of_role("component")
    factors = draft.of_role("factor")
    if components:
        mixture: dict = {}
        if draft.total is not None:
            mixture["total"] = draft.total
        mixture["model"] = draft.mixture_model
        mixture["process"] = draft.process if factors else "none"
        spec["mixture"] = mixture
        spec["components"] = []
        for col in components:
            table = _described(col)
            for key in ("low", "high"):
                if getattr(col, key) is not None:
                    table[key] = getattr(col, key)
            spec["components"].append(table)
    if factors:
        spec["factors"] = []
        for col in factors:
            table = _described(col)
            if col.levels:
                table["levels"] = list(col.levels)
            else:
                for key in ("low", "high"):
                    if getattr(col, key) is not None:
                        table[key] = getattr(col, key)
            if col.hard_to_change:
                table["hard_to_change"] = True
            spec["factors"].append(table)
    responses = draft.of_role("response")
    if responses:
        spec["responses"] = [{**_described(col), **_goal(col)} for col in responses]
    return spec


def _number(x) -> str:
    if isinstance(x, bool):
        return "true" if x else "false"
    if isinstance(x, int) or (isinstance(x, float) and x.is_integer() and abs(x) < 1e15):
        return str(int(x))
    return repr(float(x))


def _string(s: str) -> str:
    escaped = (s.replace("\\", "\\\\").replace('"', '\\"').replace("\n", "\\n")
               .replace("\r", "\\r").replace("\t", "\\t"))
    escaped = "".join(ch if ord(ch) >= 0x20 and ord(ch) != 0x7F else f"\\u{ord(ch):04x}"
                      for ch in escaped)
    return f'"{escaped}"'


def _value(v) -> str:
    if isinstance(v, str):
        return _string(v)
    if isinstance(v, (list, tuple)):
        return "[" + ", ".join(_value(x) for x in v) + "]"
    return _number(v)


def draft_text(draft: Draft) -> str:
    """The draft as study-file text (TOML), with a line saying where it came from.

    Whole numbers are written without a decimal point (``low = 40``), as a lab
    user would type them.
    """
    spec = draft_spec(draft)
    lines = ["# Study file drafted in the tradeoff workbench; edit freely.", ""]
    for section, body in spec.items():
        if isinstance(body, dict):
            lines.append(f"[{section}]")
            lines += [f"{k} = {_value(v)}" for k, v in body.items()]
            lines.append("")
        else:
            for table in body:
                lines.append(f"[[{section}]]")
                lines += [f"{k} = {_value(v)}" for k, v in table.items()]
                lines.append("")
    return "\n".join(lines).rstrip("\n") + "\n"


def _missing(draft: Draft) -> list[str]:
    """What the draft lacks, all at once and in the form's words."""
    out = []
    components, factors = draft.of_role("component"), draft.of_role("factor")
    if not components and not factors:
        out.append("no factor or component: mark at least one column as what you set")
    if len(components) == 1:
        out.append(f"only one component ('{components[0].column}'): a blend needs two or "
                   "more parts that add up")
    if components and draft.total is None:
        out.append("the components' total is blank: type what they add up to in every "
                   "run (100 for %)")
    if not draft.of_role("response"):
        out.append("no response: mark at least one column as what you measured")
    for role in ("run", "batch", "block"):
        if len(draft.of_role(role)) > 1:
            out.append(f"{len(draft.of_role(role))} columns marked as {ROLES[role]}: "
                       "choose one")
    if draft.of_role("batch") and not any(c.hard_to_change for c in factors):
        out.append("a batch column is marked but no factor is hard to change: tick the "
                   "factors set once per batch")
    for col in [*components, *factors]:
        if not col.levels and (col.low is None or col.high is None):
            out.append(f"'{col.column}': type its lowest and highest setting")
        elif not col.levels and col.low == col.high:
            # a column held at one setting in every run: the reader's "did you swap
            # them?" would mislead, the column was never varied
            out.append(f"'{col.column}': its lowest and highest setting are both "
                       f"{col.low:g}: a factor must be varied to be studied (type the "
                       "range tested, or mark the column as notes)")
    for col in draft.of_role("response"):
        if col.goal not in GOALS:
            out.append(f"'{col.column}': goal '{col.goal}' is not one of {', '.join(GOALS)}")
        elif col.goal != "none" and (col.lower is None or col.upper is None or
                                     (col.goal == "target" and col.target is None)):
            out.append(f"'{col.column}': the goal '{col.goal}' needs its limits")
    if draft.model not in MODELS:
        out.append(f"model '{draft.model}' is not one of {', '.join(MODELS)}")
    if draft.mixture_model not in MIXTURE_MODELS or draft.process not in PROCESS_MODES:
        out.append("the blend's model choices are not ones the study file knows")
    return out


def draft_problems(draft: Draft, data: bytes | None, *, study_file: str = "study.toml",
                   sheet: str | None = None) -> list[str]:
    """Everything that stops the drafted study from loading; empty when it loads.

    What is missing comes first (all of it); when nothing is, the draft is read
    as the command line reads a study file (``build_study``, then the runs from
    ``data``), and its one-line message, if any, is the problem listed.
    """
    missing = _missing(draft)
    if missing:
        return missing
    spec = draft_spec(draft)
    try:
        study = build_study(spec, source=Path(study_file))
        if data is not None:
            table = read_table(Path(draft.data or "data.csv"), sheet=sheet, data=data)
            attach_runs(study, table)
    except TradeoffError as exc:
        return [str(exc)]
    return []


def with_column(draft: Draft, name: str, **changes) -> Draft:
    """A copy of the draft with one column's record changed."""
    return replace(draft, columns=[replace(c, **changes) if c.column == name else c
                                   for c in draft.columns])
