"""The study: its factors, responses, goals and runs, checked once when built.

A study file (TOML) names a data table and describes each factor and response.
``load_study`` reads both, checks everything a lab user could get wrong, and
returns a frozen ``Study``. Later steps (coding, models, search) trust it.
"""
from __future__ import annotations

import math
import tomllib
import unicodedata
from dataclasses import dataclass, field, replace
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd

from .errors import DataError, StudyError, did_you_mean, where
from .intake import RawTable, cell_text, parse_number, read_table

__all__ = [
    "GOALS", "MODELS", "TRANSFORMS", "Goal", "Factor", "Response", "Study",
    "load_study", "parse_study_text", "study_from_dict", "study_to_dict", "attach_runs",
    "SECTION_KEYS", "read_study_table", "check_keys", "MAX_STUDY_BYTES",
]

GOALS = ("maximize", "minimize", "target", "range", "none")
# A study file is a page of text; anything this large is the wrong file.
MAX_STUDY_BYTES = 1024 * 1024
MODELS = ("main", "interactions", "full", "quadratic")
TRANSFORMS = ("none", "log", "sqrt")

_GOAL_KEYS = {"goal", "lower", "upper", "target", "shape", "shape_below",
              "shape_above", "weight"}

# Every key the study file accepts, by section. A module that adds keys adds
# them here, so the "did you mean" check knows them.
SECTION_KEYS: dict[str, set[str]] = {
    "top": {"study", "factors", "responses", "constraints", "confirmations",
            "storage", "panel"},
    "study": {"name", "data", "model", "terms", "sheet", "description",
              "confidence", "seed",
              # the runs' block column when not named 'block' (core/models.py)
              "blocks"},
    "factors": {"name", "label", "unit", "low", "high", "levels", "search"} | _GOAL_KEYS,
    "responses": {"name", "label", "unit", "model", "terms", "transform"} | _GOAL_KEYS
    # terms pinned in or out of a response's model (core/models.py)
    | {"keep_terms", "drop_terms"}
    # derived responses (core/derived.py): computed from [storage] or [panel]
    | {"derive", "property", "attribute", "at", "from", "relative", "order", "limit",
       "direction", "min_points", "extrapolate"},
    "constraints": {"rule", "label"},
    # confirmation runs (core/confirm.py): one run per table, or data = "file"
    "confirmations": {"run", "settings", "measured", "note", "data", "sheet"},
    # long-form tables for derived responses (core/storage.py, core/panel.py)
    "storage": {"data", "sheet", "time", "time_unit"},
    "panel": {"data", "sheet", "scale", "min_agreement"},
}
# The sections study_to_dict writes itself; any other top-level section
# (confirmations, for example) travels unchanged.
_BASE_TOP = {"study", "factors", "responses", "constraints"}


@dataclass(frozen=True)
class Goal:
    """What the user wants of a response (or factor), in its natural units.

    ``kind`` is one of GOALS. maximize: 0 at or below ``lower``, 1 at or above
    ``upper``. minimize: 1 at or below ``lower``, 0 at or above ``upper``.
    target: 0 outside lower..upper, 1 at ``target``. range: 1 within
    lower..upper, 0 outside. ``shape`` bends one-sided curves; a target uses
    ``shape_below`` and ``shape_above``. ``weight`` is the relative importance
    in the overall desirability.
    """

    kind: str = "none"
    lower: float | None = None
    upper: float | None = None
    target: float | None = None
    shape: float = 1.0
    shape_below: float = 1.0
    shape_above: float = 1.0
    weight: float = 1.0

    @property
    def active(self) -> bool:
        return self.kind != "none"


@dataclass(frozen=True)
class Factor:
    """A factor: numeric (``low``..``high``) or two-level categorical (``levels``)."""

    name: str
    label: str
    unit: str = ""
    low: float | None = None
    high: float | None = None
    levels: tuple[str, ...] | None = None
    search: tuple[float, float] | None = None
    goal: Goal = field(default_factory=Goal)

    @property
    def is_categorical(self) -> bool:
        return self.levels is not None

    @property
    def centre(self) -> float:
        return (self.low + self.high) / 2.0

    @property
    def half_range(self) -> float:
        return (self.high - self.low) / 2.0

    @property
    def search_range(self) -> tuple[float, float] | None:
        """The natural range searched (numeric factors): ``search`` or low..high."""
        if self.is_categorical:
            return None
        return self.search if self.search is not None else (self.low, self.high)

    def display(self) -> str:
        return f"{self.label} ({self.unit})" if self.unit else self.label


@dataclass(frozen=True)
class Response:
    """A measured (or derived) response, its goal and its model choice."""

    name: str
    label: str
    unit: str = ""
    goal: Goal = field(default_factory=Goal)
    model: str | None = None
    terms: tuple[str, ...] | None = None
    transform: str = "none"
    extra: dict = field(default_factory=dict, compare=False)

    def display(self) -> str:
        return f"{self.label} ({self.unit})" if self.unit else self.label

    @property
    def is_derived(self) -> bool:
        """True when computed from a storage or panel table, not read from the runs."""
        return bool(self.extra.get("derive"))


@dataclass(frozen=True)
class Study:
    """A validated study. ``runs`` is indexed by the spreadsheet row number.

    ``runs`` has a ``run`` column (run ids as text), one column per factor
    (numbers, or level names for categorical factors), one per response
    (float, NaN where blank) and any other columns of the data file.
    """

    name: str
    factors: tuple[Factor, ...]
    responses: tuple[Response, ...]
    model: str = "interactions"
    terms: tuple[str, ...] | None = None
    constraints: tuple[dict, ...] = ()
    confidence: float = 0.95
    seed: int = 0
    source: Path | None = None
    data_path: Path | None = None
    sheet: str | int | None = None
    description: str = ""
    runs: pd.DataFrame | None = field(default=None, compare=False, repr=False)
    # Files given with the study rather than read from its folder (uploads):
    # base file name -> content. Every table the study names is looked up here first.
    uploads: dict = field(default_factory=dict, compare=False, repr=False)
    notes: tuple[str, ...] = ()
    spec: dict = field(default_factory=dict, compare=False, repr=False)
    blocks: str | None = None

    @property
    def block_column(self) -> str | None:
        """The runs' column giving each run's block: ``[study] blocks``, else a
        column named ``block`` (unless a factor or response has that name), else None."""
        if self.blocks is not None:
            return self.blocks
        if (self.runs is not None and "block" in self.runs.columns
                and "block" not in self.factor_names + self.response_names):
            return "block"
        return None

    def block_labels(self) -> np.ndarray | None:
        """Each run's block as text when the runs fall in two or more blocks, else None."""
        name = self.block_column
        if name is None or self.runs is None or name not in self.runs.columns:
            return None
        labels = np.asarray([str(v) for v in self.runs[name]], dtype=object)
        return labels if len(set(labels.tolist())) > 1 else None

    @property
    def factor_names(self) -> list[str]:
        return [f.name for f in self.factors]

    @property
    def response_names(self) -> list[str]:
        return [r.name for r in self.responses]

    def factor(self, name: str) -> Factor:
        for f in self.factors:
            if f.name == name:
                return f
        raise StudyError(f"no factor named '{name}'{did_you_mean(name, self.factor_names)}")

    def response(self, name: str) -> Response:
        for r in self.responses:
            if r.name == name:
                return r
        raise StudyError(f"no response named '{name}'"
                         f"{did_you_mean(name, self.response_names)}")

    def model_for(self, response: Response) -> str | tuple[str, ...]:
        """The model (name or explicit terms) a response is fitted with."""
        if response.terms is not None:
            return response.terms
        if response.model is not None:
            return response.model
        return self.terms if self.terms is not None else self.model

    def coded(self) -> pd.DataFrame:
        """The runs' factor settings in coded units, one column per factor."""
        from .coding import to_coded

        if self.runs is None:
            raise StudyError(f"study '{self.name}' has no runs loaded yet")
        return pd.DataFrame(to_coded(self.factors, self.runs), index=self.runs.index,
                            columns=self.factor_names)

    def with_goal(self, name: str, goal: Goal) -> "Study":
        """A copy with one response's (or factor's) goal replaced."""
        if name in self.response_names:
            responses = tuple(replace(r, goal=goal) if r.name == name else r
                              for r in self.responses)
            return replace(self, responses=responses)
        factors = tuple(replace(f, goal=goal) if f.name == name else f
                        for f in self.factors)
        self.factor(name)
        return replace(self, factors=factors)


# --------------------------------------------------------------------------
# Building a study from its file


def load_study(path: str | Path, *, with_data: bool = True) -> Study:
    """Read and check a study file and its data table.

    With ``with_data=False`` the data file is not read (planning a study whose
    runs have not been made yet).
    """
    path = Path(path)
    if not path.exists():
        raise StudyError(f"{path}: study file not found: check the name and folder")
    if not path.is_file():
        raise StudyError(f"{path}: that is a folder, not a study file: name the .toml "
                         "file itself")
    if path.stat().st_size > MAX_STUDY_BYTES:
        raise StudyError(f"{path.name}: the file is larger than "
                         f"{MAX_STUDY_BYTES // 2**20} MB, far more than a study file "
                         "holds: is it the right file?")
    try:
        data = path.read_bytes()
    except OSError as exc:
        raise StudyError(f"{path}: cannot read the study file ({exc.strerror or exc}): "
                         "is it yours to read?") from None
    return study_from_dict(parse_study_text(data, path.name), source=path,
                           with_data=with_data)


def parse_study_text(data: bytes, name: str) -> dict:
    """A study file's bytes -> its TOML document, with one-line errors naming ``name``."""
    try:
        return tomllib.loads(data.decode("utf-8-sig"))
    except UnicodeDecodeError:
        raise StudyError(f"{name}: the study file is not UTF-8 text: save it "
                         "as UTF-8 in a text editor") from None
    except tomllib.TOMLDecodeError as exc:
        raise StudyError(f"{name}: not a valid study file ({exc}): check quotes, "
                         "brackets and '=' signs on that line") from None


def study_from_dict(spec: dict, *, source: str | Path | None = None,
                    with_data: bool = True, data_bytes: bytes | None = None,
                    uploads: dict[str, bytes] | None = None) -> Study:
    """Build a study from an already parsed specification (a TOML document).

    ``source`` names the study file; a relative ``data`` path is taken from its
    folder. ``data_bytes`` may carry the data file's content (an upload);
    ``uploads`` (file name -> content) may carry every table the study names
    (runs, storage, panel, confirmations), which are then not read from disk.
    """
    source = Path(source) if source is not None else None
    fname = source.name if source is not None else "study"
    check_keys(spec, SECTION_KEYS["top"], fname, "the top level")
    head = spec.get("study", {})
    if not isinstance(head, dict):
        raise StudyError(f"{fname}: [study] must be a table of keys")
    check_keys(head, SECTION_KEYS["study"], fname, "[study]")

    factors = tuple(_factor(f, fname, i) for i, f in
                    enumerate(_list_of_tables(spec, "factors", fname), start=1))
    if not factors:
        raise StudyError(f"{fname}: no factors: add at least one [[factors]] table "
                         "with a name and low/high or levels")
    responses = tuple(_response(r, fname, i) for i, r in
                      enumerate(_list_of_tables(spec, "responses", fname), start=1))
    _check_unique([f.name for f in factors] + [r.name for r in responses], fname)

    model = head.get("model", "interactions")
    if model not in MODELS:
        raise StudyError(f"{fname}: [study] model = '{model}' is not a model I know: "
                         f"use one of {', '.join(MODELS)}{did_you_mean(model, MODELS)}")
    terms = head.get("terms")
    if terms is not None:
        terms = _string_list(terms, fname, "[study] terms")
    constraints = tuple(_constraint(c, fname, i) for i, c in
                        enumerate(_list_of_tables(spec, "constraints", fname), start=1))
    from .constraints import check_rules  # late: constraints reads Factor from here

    check_rules(factors, constraints, fname)
    confidence = _number(head.get("confidence", 0.95), fname, "[study] confidence")
    if not 0.5 <= confidence < 1:
        raise StudyError(f"{fname}: [study] confidence = {confidence} must be a "
                         "fraction such as 0.95")
    seed = head.get("seed", 0)
    if not isinstance(seed, int) or isinstance(seed, bool) or seed < 0:
        raise StudyError(f"{fname}: [study] seed must be a whole number, 0 or more, "
                         f"found {seed!r}")

    data_path = None
    if head.get("data") is not None:
        if not isinstance(head["data"], str):
            raise StudyError(f"{fname}: [study] data must be a file name in quotes")
        data_path = Path(head["data"])
        if source is not None and not data_path.is_absolute():
            data_path = source.parent / data_path
    sheet = head.get("sheet")
    blocks = head.get("blocks")
    if blocks is not None:
        if not isinstance(blocks, str) or not blocks.strip():
            raise StudyError(f"{fname}: [study] blocks must be the name of the data "
                             "column that gives each run's block, in quotes, for "
                             "example blocks = \"day\"")
        blocks = unicodedata.normalize("NFC", blocks.strip())
        if blocks in [f.name for f in factors] + [r.name for r in responses]:
            raise StudyError(f"{fname}: [study] blocks = '{blocks}' is a factor or "
                             "response of the study: name the column of days or "
                             "batches instead")

    study = Study(
        name=str(head.get("name", source.stem if source else "study")),
        factors=factors, responses=responses, model=model, terms=terms,
        constraints=constraints, confidence=confidence, seed=seed, source=source,
        data_path=data_path, sheet=sheet, description=str(head.get("description", "")),
        spec=spec, uploads=dict(uploads or {}), blocks=blocks,
    )
    if "confirmations" in spec:
        from .confirm import confirmation_runs  # late: confirm reads Study from here

        confirmation_runs(study, read_files=with_data and source is not None)
    from .derived import add_derived_responses, check_derived  # late: reads Study

    check_derived(study)
    if not with_data:
        return study
    if data_path is None and data_bytes is None:
        raise StudyError(f"{fname}: [study] has no data file: add data = \"runs.csv\"")
    if data_bytes is not None:
        table = read_table(data_path if data_path is not None else Path("data.csv"),
                           sheet=sheet, data=data_bytes)
    else:
        table = read_study_table(study, data_path, sheet=sheet)
    return add_derived_responses(attach_runs(study, table))


def read_study_table(study: Study, path: str | Path, *, sheet=None) -> RawTable:
    """A table the study names: from the study's uploads if given there, else from disk."""
    path = Path(path)
    if study.uploads and path.name not in study.uploads:
        # An uploaded study's tables come with it; never read a stray file
        # that happens to sit in the server's working folder.
        raise DataError(f"{path.name}: the study names this table but it was not "
                        f"uploaded (uploaded: {', '.join(sorted(study.uploads))}): "
                        "upload it together with the study file")
    return read_table(path, sheet=sheet, data=study.uploads.get(path.name))


def attach_runs(study: Study, table: RawTable) -> Study:
    """Check a raw data table against the study and attach it as ``runs``."""
    fname = table.source.name
    header = table.header
    if not table.rows:
        raise DataError(f"{fname}: the table has a header but no runs: add one row "
                        "per run below the header")
    _refuse_title_rows(study, table)
    width = len(header)
    for row_number, cells in table.rows:
        extra = [c for c in cells[width:] if c is not None]
        if extra:
            raise DataError(f"{where(fname, row_number)}the row has more cells than "
                            f"the header has names ({width}): check for a stray "
                            "separator or a missing column name")
    columns = {name: i for i, name in enumerate(header) if name}

    def column_index(name: str, what: str) -> int:
        if name not in columns:
            raise DataError(f"{fname}: no column '{name}' for {what}: the header has "
                            f"{[h for h in header if h]}"
                            f"{did_you_mean(name, list(columns))}")
        return columns[name]

    def cells_of(index: int) -> list:
        return [cells[index] if index < len(cells) else None for _, cells in table.rows]

    row_numbers = [r for r, _ in table.rows]
    data: dict[str, Any] = {}
    if "run" in columns:
        ids = ["" if c is None else cell_text(c) for c in cells_of(columns["run"])]
        for row, run in zip(row_numbers, ids):
            if run == "":
                raise DataError(f"{where(fname, row, 'run')}blank run id: give every "
                                "run an id, or delete the 'run' column to number runs "
                                "automatically")
        seen: dict[str, int] = {}
        for row, run in zip(row_numbers, ids):
            if run in seen:
                raise DataError(f"{where(fname, row, 'run')}run id '{run}' is used "
                                f"again (first at row {seen[run]}): give each run its "
                                "own id")
            seen[run] = row
    else:
        ids = [str(i) for i in range(1, len(row_numbers) + 1)]
    data["run"] = ids

    notes: list[str] = []
    for f in study.factors:
        raw = cells_of(column_index(f.name, f"factor '{f.name}'"))
        if f.is_categorical:
            values = []
            for row, cell in zip(row_numbers, raw):
                text = None if cell is None else cell_text(cell)
                if text not in f.levels:
                    found = "a blank cell" if text is None else f"'{text}'"
                    raise DataError(f"{where(fname, row, f.name)}found {found}, "
                                    f"expected one of the levels {list(f.levels)}: fix "
                                    "the cell or add the level to the study file")
                values.append(text)
            data[f.name] = values
            if len(set(values)) < 2:
                notes.append(f"factor '{f.name}' is '{values[0]}' in every run: its "
                             "effect cannot be estimated")
        else:
            values = []
            for row, cell in zip(row_numbers, raw):
                if cell is None:
                    raise DataError(f"{where(fname, row, f.name)}blank factor setting: "
                                    "every run needs a setting for every factor")
                values.append(parse_number(cell, decimal_comma=table.decimal_comma,
                                           location=where(fname, row, f.name)))
            values = np.array(values)
            data[f.name] = values
            tol = 1e-9 * max(1.0, abs(f.high - f.low))
            outside = [row for row, v in zip(row_numbers, values)
                       if v < f.low - tol or v > f.high + tol]
            if outside:
                notes.append(f"factor '{f.name}': {len(outside)} run(s) lie outside "
                             f"{_fmt(f.low)}..{_fmt(f.high)} (rows "
                             f"{_rows(outside)}), e.g. axial points: allowed")
            if np.ptp(values) == 0:
                notes.append(f"factor '{f.name}' is {_fmt(values[0])} in every run: "
                             "its effect cannot be estimated")
    for r in study.responses:
        if r.is_derived:
            continue  # computed from a storage or panel table, not read here
        raw = cells_of(column_index(r.name, f"response '{r.name}'"))
        values = np.array([parse_number(c, decimal_comma=table.decimal_comma,
                                        location=where(fname, row, r.name))
                           for row, c in zip(row_numbers, raw)])
        data[r.name] = values
        blank = [ids[i] for i in np.flatnonzero(np.isnan(values))]
        if len(blank) == len(values):
            raise DataError(f"{fname}, column '{r.name}': every cell is blank: enter "
                            "the measurements, or remove the response from the study")
        if blank:
            notes.append(f"response '{r.name}': run(s) {', '.join(blank)} blank, "
                         "left out of its model only")
        if r.transform in ("log", "sqrt"):
            bad = values[~np.isnan(values)]
            if (r.transform == "log" and (bad <= 0).any()) or (bad < 0).any():
                raise DataError(f"{fname}, column '{r.name}': transform = "
                                f"'{r.transform}' needs positive values: remove the "
                                "transform or check the data")
    modelled = {f.name for f in study.factors} | {r.name for r in study.responses} | {"run"}
    for name, index in columns.items():
        if name not in modelled:
            data[name] = cells_of(index)
    block = study.blocks or ("block" if "block" in columns and "block" not in modelled
                             else None)
    if block is not None:
        # Blocks enter every model (core/models.py): each run needs one.
        index = column_index(block, "the blocks ([study] blocks)")
        labels = []
        for row, cell in zip(row_numbers, cells_of(index)):
            text = None if cell is None else cell_text(cell)
            if not text:
                raise DataError(f"{where(fname, row, block)}blank block: every run "
                                "needs its block (day, batch) when the table has a block "
                                "column: fill it in, or delete the column if the runs "
                                "were not made in blocks")
            labels.append(text)
        data[block] = labels
    runs = pd.DataFrame(data, index=pd.Index(row_numbers, name="row"))
    return replace(study, runs=runs, notes=tuple(notes))


def _refuse_title_rows(study: Study, table: RawTable) -> None:
    # A title or a merged "Factors | Responses" row above the column names is
    # read as the header; say so instead of "no column 'protein'".
    wanted = [f.name for f in study.factors] + [r.name for r in study.responses
                                                if not r.is_derived]
    if all(name in table.header for name in wanted):
        return
    for row_number, cells in table.rows[:10]:
        words = {str(c).strip() for c in cells if c is not None}
        if all(name in words for name in wanted):
            raise DataError(f"{where(table.source.name, row_number)}the column names "
                            "seem to be in this row, not in the first row of the "
                            "table: delete the title rows above them (one header row "
                            "only, no merged cells)")


# --------------------------------------------------------------------------
# Pieces of the study file


def _goal(table: dict, fname: str, what: str) -> Goal:
    kind = table.get("goal", "none")
    if kind not in GOALS:
        raise StudyError(f"{fname}: {what}: goal = '{kind}' is not a goal I know: use "
                         f"one of {', '.join(GOALS)}{did_you_mean(str(kind), GOALS)}")
    nums = {k: _number(table[k], fname, f"{what} {k}") if k in table else None
            for k in ("lower", "upper", "target")}
    shape = _positive(table.get("shape", 1.0), fname, f"{what} shape")
    goal = Goal(kind=kind, lower=nums["lower"], upper=nums["upper"],
                target=nums["target"], shape=shape,
                shape_below=_positive(table.get("shape_below", shape), fname,
                                      f"{what} shape_below"),
                shape_above=_positive(table.get("shape_above", shape), fname,
                                      f"{what} shape_above"),
                weight=_positive(table.get("weight", 1.0), fname, f"{what} weight"))
    if kind == "none":
        return goal
    for key in ("lower", "upper") + (("target",) if kind == "target" else ()):
        if nums[key] is None:
            raise StudyError(f"{fname}: {what}: goal = '{kind}' needs {key} = <number>")
    if goal.lower >= goal.upper:
        raise StudyError(f"{fname}: {what}: lower ({_fmt(goal.lower)}) is not below "
                         f"upper ({_fmt(goal.upper)}): did you swap them?")
    if kind == "target" and not goal.lower < goal.target < goal.upper:
        raise StudyError(f"{fname}: {what}: target ({_fmt(goal.target)}) must lie "
                         f"strictly between lower ({_fmt(goal.lower)}) and upper "
                         f"({_fmt(goal.upper)})")
    if kind != "target" and nums["target"] is not None:
        raise StudyError(f"{fname}: {what}: target is only used with goal = 'target': "
                         "remove it or change the goal")
    return goal


def _factor(table: dict, fname: str, index: int) -> Factor:
    what = _what("factors", table, index)
    check_keys(table, SECTION_KEYS["factors"], fname, what)
    name = _name(table, fname, what)
    label = str(table.get("label", name))
    unit = str(table.get("unit", ""))
    has_range = "low" in table or "high" in table
    if "levels" in table:
        if has_range:
            raise StudyError(f"{fname}: {what}: give either low/high (numeric) or "
                             "levels (categorical), not both")
        levels = tuple(_string_list(table["levels"], fname, f"{what} levels"))
        if len(levels) != 2 or levels[0] == levels[1]:
            raise StudyError(f"{fname}: {what}: a categorical factor needs exactly two "
                             f"different levels, found {list(levels)}")
        if "search" in table:
            raise StudyError(f"{fname}: {what}: search = [min, max] is for numeric "
                             "factors; categorical factors are searched over their levels")
        if table.get("goal", "none") != "none":
            raise StudyError(f"{fname}: {what}: goals apply to numeric factors only")
        return Factor(name=name, label=label, unit=unit, levels=levels)
    for key in ("low", "high"):
        if key not in table:
            raise StudyError(f"{fname}: {what}: needs low = <number> and high = <number> "
                             "(or levels = [\"a\", \"b\"] for a categorical factor)")
    low = _number(table["low"], fname, f"{what} low")
    high = _number(table["high"], fname, f"{what} high")
    if low >= high:
        raise StudyError(f"{fname}: {what}: low ({_fmt(low)}) is not below high "
                         f"({_fmt(high)}): did you swap them?")
    search = None
    if "search" in table:
        pair = table["search"]
        if not isinstance(pair, list) or len(pair) != 2:
            raise StudyError(f"{fname}: {what}: search must be [min, max] in natural units")
        search = (_number(pair[0], fname, f"{what} search"),
                  _number(pair[1], fname, f"{what} search"))
        if search[0] >= search[1]:
            raise StudyError(f"{fname}: {what}: search min ({_fmt(search[0])}) is not "
                             f"below max ({_fmt(search[1])}): did you swap them?")
    return Factor(name=name, label=label, unit=unit, low=low, high=high, search=search,
                  goal=_goal(table, fname, what))


def _response(table: dict, fname: str, index: int) -> Response:
    what = _what("responses", table, index)
    check_keys(table, SECTION_KEYS["responses"], fname, what)
    name = _name(table, fname, what)
    model = table.get("model")
    if model is not None and model not in MODELS:
        raise StudyError(f"{fname}: {what}: model = '{model}' is not a model I know: "
                         f"use one of {', '.join(MODELS)}{did_you_mean(str(model), MODELS)}")
    terms = table.get("terms")
    if terms is not None:
        terms = tuple(_string_list(terms, fname, f"{what} terms"))
    transform = table.get("transform", "none")
    if transform not in TRANSFORMS:
        raise StudyError(f"{fname}: {what}: transform = '{transform}' is not one I know: "
                         f"use one of {', '.join(TRANSFORMS)}")
    # Keys that other modules registered (derived responses, for example).
    extra = {k: v for k, v in table.items() if k not in _BASE_RESPONSE_KEYS}
    return Response(name=name, label=str(table.get("label", name)),
                    unit=str(table.get("unit", "")), goal=_goal(table, fname, what),
                    model=model, terms=terms, transform=transform, extra=extra)


_BASE_RESPONSE_KEYS = {"name", "label", "unit", "model", "terms", "transform"} | _GOAL_KEYS


def _constraint(table: dict, fname: str, index: int) -> dict:
    what = f"[[constraints]] number {index}"
    check_keys(table, SECTION_KEYS["constraints"], fname, what)
    if not isinstance(table.get("rule"), str) or not table["rule"].strip():
        raise StudyError(f"{fname}: {what}: needs rule = \"...\", for example "
                         "rule = \"protein + 2*glycerol <= 36\"")
    return {"rule": table["rule"].strip(), "label": str(table.get("label", table["rule"]))}


def _list_of_tables(spec: dict, key: str, fname: str) -> list[dict]:
    value = spec.get(key, [])
    if not isinstance(value, list) or not all(isinstance(t, dict) for t in value):
        raise StudyError(f"{fname}: '{key}' must be written as [[{key}]] tables")
    return value


def check_keys(table: dict, allowed: set[str], fname: str, what: str) -> None:
    """Refuse a key not in ``allowed``: one line naming the file, the place and the key."""
    for key in table:
        if key not in allowed:
            raise StudyError(f"{fname}: {what}: unknown key '{key}'"
                             f"{did_you_mean(key, sorted(allowed))}")


def _check_unique(names: list[str], fname: str) -> None:
    seen = set()
    for name in names:
        if name in seen:
            raise StudyError(f"{fname}: the name '{name}' is used twice among factors "
                             "and responses: each needs its own name")
        seen.add(name)


def _name(table: dict, fname: str, what: str) -> str:
    name = table.get("name")
    if not isinstance(name, str) or not name.strip():
        raise StudyError(f"{fname}: {what}: needs name = \"<column name in the data>\"")
    # NFC, as the data file's header: an accented name matches however it was typed
    name = unicodedata.normalize("NFC", name)
    if name != name.strip():
        raise StudyError(f"{fname}: {what}: name '{name}' starts or ends with a space: "
                         "remove it")
    if any(ch in name for ch in ":^*+/<>=()"):
        raise StudyError(f"{fname}: {what}: name '{name}' contains one of : ^ * + / < > "
                         "= ( ), which are kept for model terms and rules: use letters, "
                         "digits and _")
    return name


def _what(section: str, table: dict, index: int) -> str:
    name = table.get("name")
    return f"[[{section}]] '{name}'" if isinstance(name, str) else \
        f"[[{section}]] number {index}"


def _number(value, fname: str, what: str) -> float:
    if isinstance(value, bool) or not isinstance(value, (int, float)):
        raise StudyError(f"{fname}: {what} must be a number, found {value!r}")
    if not math.isfinite(value):
        raise StudyError(f"{fname}: {what} must be a finite number, found {value!r}")
    return float(value)


def _positive(value, fname: str, what: str) -> float:
    value = _number(value, fname, what)
    if value <= 0:
        raise StudyError(f"{fname}: {what} must be above 0, found {_fmt(value)}")
    return value


def _string_list(value, fname: str, what: str) -> list[str]:
    if not isinstance(value, list) or not all(isinstance(v, str) for v in value):
        raise StudyError(f"{fname}: {what} must be a list of names in quotes, "
                         "for example [\"a\", \"b\"]")
    return [v.strip() for v in value]


def _fmt(x: float) -> str:
    return f"{x:g}"


def _rows(rows: list[int]) -> str:
    shown = ", ".join(str(r) for r in rows[:8])
    return shown + (", ..." if len(rows) > 8 else "")


# --------------------------------------------------------------------------
# Writing a study back (downloads, saved targets)


def study_to_dict(study: Study) -> dict:
    """The study as a TOML-ready dict, with its current goals and settings."""
    head: dict[str, Any] = {"name": study.name}
    if study.data_path is not None:
        head["data"] = (study.data_path.name if study.source is not None and
                        study.data_path.parent == study.source.parent
                        else str(study.data_path))
    if study.sheet is not None:
        head["sheet"] = study.sheet
    head["model"] = study.model
    if study.terms is not None:
        head["terms"] = list(study.terms)
    for key in ("description",):
        if getattr(study, key):
            head[key] = getattr(study, key)
    if study.confidence != 0.95:
        head["confidence"] = study.confidence
    if study.seed:
        head["seed"] = study.seed
    if study.blocks is not None:
        head["blocks"] = study.blocks
    out: dict[str, Any] = {"study": head}
    for key, value in study.spec.items():
        if key not in _BASE_TOP:
            out[key] = value  # sections added by other modules travel unchanged
    out["factors"] = [_factor_dict(f) for f in study.factors]
    out["responses"] = [_response_dict(r) for r in study.responses]
    if study.constraints:
        out["constraints"] = [dict(c) for c in study.constraints]
    return out


def _goal_dict(goal: Goal) -> dict:
    if not goal.active:
        return {}
    out: dict[str, Any] = {"goal": goal.kind, "lower": goal.lower, "upper": goal.upper}
    if goal.kind == "target":
        out["target"] = goal.target
        out["shape_below"] = goal.shape_below
        out["shape_above"] = goal.shape_above
    elif goal.kind in ("maximize", "minimize"):
        out["shape"] = goal.shape
    out["weight"] = goal.weight
    return out


def _factor_dict(f: Factor) -> dict:
    out: dict[str, Any] = {"name": f.name}
    if f.label != f.name:
        out["label"] = f.label
    if f.unit:
        out["unit"] = f.unit
    if f.is_categorical:
        out["levels"] = list(f.levels)
        return out
    out["low"], out["high"] = f.low, f.high
    if f.search is not None:
        out["search"] = list(f.search)
    out.update(_goal_dict(f.goal))
    return out


def _response_dict(r: Response) -> dict:
    out: dict[str, Any] = {"name": r.name}
    if r.label != r.name:
        out["label"] = r.label
    if r.unit:
        out["unit"] = r.unit
    out.update(_goal_dict(r.goal))
    if r.model is not None:
        out["model"] = r.model
    if r.terms is not None:
        out["terms"] = list(r.terms)
    if r.transform != "none":
        out["transform"] = r.transform
    out.update(r.extra)
    return out
