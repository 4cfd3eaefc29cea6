"""What a user hands over in the front end, turned into checked library objects.

Uploaded files arrive as bytes, not paths; goals typed into widgets need the
same checks as goals written in a study file (a bare data table is drafted into
a study by ``study.draft``). Each function here returns the library's own
objects (``Study``, ``Goal``) or raises a one-line ``TradeoffError``.
"""
from __future__ import annotations

from dataclasses import replace
from pathlib import Path

from .errors import StudyError
from .study.intake import MAX_TABLE_BYTES
from .study.spec import MAX_STUDY_BYTES, MODELS, Goal, Study
from .study.reader import _goal, check_production_sd, parse_study_text
from .derive.load import study_from_dict

__all__ = ["DATA_SUFFIXES", "study_from_files", "checked_goal", "with_response_model",
           "with_production_sd"]

DATA_SUFFIXES = (".csv", ".txt", ".tsv", ".xlsx", ".xlsm")


def study_from_files(files: dict[str, bytes]) -> Study:
    """Build a study from an uploaded study file (.toml) and its data file.

    Parameters
    ----------
    files : dict
        File name -> content. Exactly one ``.toml`` file, plus the data file it
        names (matched by file name). When the study file names no data file,
        the single uploaded data file is used.

    Raises
    ------
    StudyError
        No study file, several study files, or the named data file missing.
    """
    for fname, content in files.items():
        limit = MAX_STUDY_BYTES if Path(fname).suffix.lower() == ".toml" else MAX_TABLE_BYTES
        if len(content) > limit:
            raise StudyError(f"{fname}: the file is {len(content) / 2**20:.1f} MB, more "
                             f"than the {limit / 2**20:g} MB allowed for "
                             f"{'a study file' if limit == MAX_STUDY_BYTES else 'a data file'}"
                             ": is it the right file?")
    tomls = sorted(n for n in files if Path(n).suffix.lower() == ".toml")
    data = sorted(n for n in files if Path(n).suffix.lower() in DATA_SUFFIXES)
    other = sorted(set(files) - set(tomls) - set(data))
    if other:
        raise StudyError(f"cannot use {other}: upload a study file (.toml) and its data "
                         "(.csv or .xlsx)")
    if len(tomls) != 1:
        found = "none" if not tomls else ", ".join(tomls)
        raise StudyError(f"expected one study file (.toml), found {found}: upload one "
                         "study file with its data file, or a data file on its own")
    name = tomls[0]
    spec = parse_study_text(files[name], name)
    head = spec.get("study", {})
    wanted = head.get("data") if isinstance(head, dict) else None
    if isinstance(wanted, str):
        match = [n for n in data if Path(n).name == Path(wanted).name]
        if not match:
            raise StudyError(f"{name}: the study file names its data '{wanted}': upload "
                             f"that file together with the study file (uploaded: "
                             f"{', '.join(data) if data else 'no data file'})")
        data_name = match[0]
    elif len(data) == 1:
        data_name = data[0]
        spec = {**spec, "study": {**(head if isinstance(head, dict) else {}),
                                  "data": data_name}}
    else:
        raise StudyError(f"{name}: [study] names no data file: add data = \"runs.csv\" "
                         "or upload exactly one data file with it")
    return study_from_dict(spec, source=Path(name), data_bytes=files[data_name],
                           uploads=files)


def checked_goal(name: str, *, kind: str, lower: float | None = None,
                 upper: float | None = None, target: float | None = None,
                 shape: float = 1.0, shape_below: float = 1.0,
                 shape_above: float = 1.0, weight: float = 1.0) -> Goal:
    """A goal typed into the front end, checked as a study file's goal would be.

    Keys that the goal kind does not use are dropped before the check (a
    widget may still hold a target after the user switched to ``maximize``).
    """
    table: dict = {"goal": kind, "shape": shape, "shape_below": shape_below,
                   "shape_above": shape_above, "weight": weight}
    if kind != "none":
        table.update({"lower": lower, "upper": upper})
        if kind == "target":
            table["target"] = target
    table = {k: v for k, v in table.items() if v is not None}
    return _goal(table, "targets", f"'{name}'")


def with_production_sd(study: Study, name: str, value) -> Study:
    """A copy of the study with one factor's production SD typed in the front end.

    Checked as the study file's ``production_sd`` is (a number, 0 or more, at
    most half the factor's range); ``None`` removes it.
    """
    factor = study.factor(name)
    if value is not None:
        if factor.is_categorical:
            raise StudyError(f"factor '{name}': a production SD is for numeric factors: a "
                             "categorical factor is made at one level or the other")
        value = check_production_sd(value, factor.low, factor.high, f"factor '{name}'")
    factors = tuple(replace(f, production_sd=value) if f.name == name else f
                    for f in study.factors)
    return replace(study, factors=factors)


def with_response_model(study: Study, name: str, model: str | tuple[str, ...]) -> Study:
    """A copy of the study with one response's model (a name or a list of terms)."""
    response = study.response(name)
    if isinstance(model, str):
        if model not in MODELS:
            raise StudyError(f"response '{name}': model '{model}' is not one I know: use "
                             f"one of {', '.join(MODELS)}")
        new = replace(response, model=model, terms=None)
    else:
        terms = tuple(str(t).strip() for t in model)
        if not terms:
            raise StudyError(f"response '{name}': the model needs at least one term")
        new = replace(response, model=None, terms=terms)
    return replace(study, responses=tuple(new if r.name == name else r
                                          for r in study.responses))
