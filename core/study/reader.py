"""Reading a study file: its text, its sections and keys, checked once.

Every message names the file and the table (``[[factors]]`` number 2, ...) and
says how to fix it.
"""
from __future__ import annotations

import math
import tomllib
import unicodedata
from pathlib import Path


from ..errors import StudyError, did_you_mean
from .constraints import check_rules
from .pieces import piece_columns
from .mixture import MIXTURE_MODELS, PROCESS_MODES, build_components
from .whole_plots import read_whole_plot_keys
from .spec import (GOALS, MAX_LEVELS, MAX_STUDY_BYTES, MODELS, SECTION_KEYS, TRANSFORMS,
                   Factor, Goal,
                   Response, Study, _GOAL_KEYS)

__all__ = ["read_study_bytes", "parse_study_text", "build_study", "check_keys",
           "check_production_sd"]

def read_study_bytes(path: str | Path) -> bytes:
    """The bytes of a study file, with one-line errors for a missing, huge or unreadable file."""
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
    return data


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
    except RecursionError:  # brackets nested thousands deep: no study looks like that
        raise StudyError(f"{name}: lists or tables are nested too deeply to be a study "
                         "file: is it the right file?") from None


def build_study(spec: dict, *, source: str | Path | None = None,
                uploads: dict[str, bytes] | None = None) -> Study:
    """A checked study from a parsed study file, without its runs.

    ``source`` names the study file; a relative ``data`` path is taken from its
    folder. ``uploads`` (file name -> content) may carry every table the study
    names. Confirmation tables, derived responses and the runs are added by
    ``tradeoff.load_study`` (derive/load.py).
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
    # blend components come first among the factors (study/mixture.py)
    components, mixture = _mixture(spec, fname, [f.name for f in factors])
    factors = components + factors
    # A product (or a few) stored or tasted without varying anything has no
    # factors: its values come from the [storage] or [panel] table alone.
    if not factors and not any(key in spec for key in ("storage", "panel")):
        raise StudyError(f"{fname}: no factors: add at least one [[factors]] table "
                         "with a name and low/high or levels (a study of one product "
                         "needs none, but then a [storage] or [panel] table to derive "
                         "its values from)")
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

    factors, whole_plot = read_whole_plot_keys(
        _list_of_tables(spec, "factors", fname), head, factors, responses, blocks, fname)
    study = Study(
        name=str(head.get("name", source.stem if source else "study")),
        factors=factors, responses=responses, model=model, terms=terms,
        constraints=constraints, confidence=confidence, seed=seed, source=source,
        data_path=data_path, sheet=sheet, description=str(head.get("description", "")),
        spec=spec, uploads=dict(uploads or {}), blocks=blocks, mixture=mixture,
        whole_plot=whole_plot,
    )
    return study


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
        twice = [v for i, v in enumerate(levels) if v in levels[:i]]
        if twice:
            raise StudyError(f"{fname}: {what}: level '{twice[0]}' is named twice in "
                             f"levels {list(levels)}: give each level once")
        if not 2 <= len(levels) <= MAX_LEVELS or not all(levels):
            raise StudyError(f"{fname}: {what}: a categorical factor needs 2 to "
                             f"{MAX_LEVELS} levels, each a non-blank name, found "
                             f"{list(levels)}")
        if "search" in table:
            raise StudyError(f"{fname}: {what}: search = [min, max] is for numeric "
                             "factors; categorical factors are searched over their levels")
        if table.get("goal", "none") != "none":
            raise StudyError(f"{fname}: {what}: goals apply to numeric factors only")
        if "step" in table:
            raise StudyError(f"{fname}: {what}: step is for numeric factors: a categorical "
                             "factor is set to one of its levels; remove the key")
        if "production_sd" in table:
            raise StudyError(f"{fname}: {what}: production_sd is for numeric factors: a "
                             "categorical factor is made at one level or the other, so it "
                             "has no spread around its setting; remove the key")
        hold = None
        if "hold" in table:
            hold = table["hold"]
            if not isinstance(hold, str) or hold not in levels:
                raise StudyError(f"{fname}: {what}: hold = {hold!r} is not one of the levels "
                                 f"{list(levels)}{did_you_mean(hold, levels)}: name the level "
                                 "to hold when the runs cannot tell the levels apart")
        return Factor(name=name, label=label, unit=unit, levels=levels, hold=hold)
    if "hold" in table:
        raise StudyError(f"{fname}: {what}: hold names a level of a categorical factor: a "
                         "numeric factor is searched over its range; remove the key")
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
    spread = None
    if "production_sd" in table:
        spread = check_production_sd(table["production_sd"], low, high,
                                     f"{fname}: {what}")
    return Factor(name=name, label=label, unit=unit, low=low, high=high, search=search,
                  goal=_goal(table, fname, what), production_sd=spread,
                  step=check_step(table, low, high, fname, what))


def check_step(table: dict, low: float, high: float, fname: str, what: str) -> float | None:
    """A factor's or component's ``step`` checked: above 0 and below its range."""
    if "step" not in table:
        return None
    step = _positive(table["step"], fname, f"{what} step")
    if step >= high - low:
        raise StudyError(f"{fname}: {what}: step ({_fmt(step)}) is not smaller than the "
                         f"range {_fmt(low)}..{_fmt(high)}: give the smallest amount you "
                         "can weigh or set, in the factor's units")
    return step


def check_production_sd(value, low: float, high: float, where: str) -> float:
    """A factor's ``production_sd`` checked: a number, 0 or more, at most half the range.

    ``where`` starts the message (file and factor). Used by the study file and
    by the workbench, so a typed value is checked like the file's.
    """
    if isinstance(value, bool) or not isinstance(value, (int, float)) or \
            not math.isfinite(value):
        raise StudyError(f"{where}: production_sd must be a number (the standard deviation "
                         f"of the actual setting in the factor's units), found {value!r}")
    value = float(value)
    if value < 0:
        raise StudyError(f"{where}: production_sd must be 0 or more (a standard "
                         f"deviation), found {_fmt(value)}")
    half = (high - low) / 2.0
    if value > half:
        raise StudyError(f"{where}: production_sd ({_fmt(value)}) is larger than half the "
                         f"factor's range ({_fmt(low)}..{_fmt(high)}, half {_fmt(half)}): the "
                         "region is too narrow for that spread; check the units, or widen "
                         "low and high")
    return value


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
    if "columns" in extra:
        extra["columns"] = piece_columns(table, fname, what)
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


def _mixture(spec: dict, fname: str, factor_names: list[str]):
    """``[[components]]`` and ``[mixture]`` -> (components, Mixture), or ((), None)."""
    tables = _list_of_tables(spec, "components", fname)
    head = spec.get("mixture")
    if not tables and head is None:
        return (), None
    if head is None:
        raise StudyError(f"{fname}: [[components]] are given but no [mixture] section: "
                         "add [mixture] with total = <what the components add up to>, "
                         "for example total = 100")
    if not isinstance(head, dict):
        raise StudyError(f"{fname}: [mixture] must be a table of keys")
    check_keys(head, SECTION_KEYS["mixture"], fname, "[mixture]")
    if len(tables) < 2:
        raise StudyError(f"{fname}: [mixture] needs at least two [[components]] "
                         f"tables, found {len(tables)}")
    if "total" not in head:
        raise StudyError(f"{fname}: [mixture] needs total = <number>: what the "
                         "components add up to in every run (100 for %, 1, or a batch "
                         "mass)")
    total = _positive(head["total"], fname, "[mixture] total")
    choices = {"model": (head.get("model", "quadratic"), MIXTURE_MODELS),
               "process": (head.get("process", "none"), PROCESS_MODES)}
    for key, (value, allowed) in choices.items():
        if value not in allowed:
            raise StudyError(f"{fname}: [mixture] {key} = '{value}' is not one I know: "
                             f"use one of {', '.join(allowed)}"
                             f"{did_you_mean(str(value), allowed)}")
    raw, seen = [], set()
    for i, table in enumerate(tables, start=1):
        what = _what("components", table, i)
        check_keys(table, SECTION_KEYS["components"], fname, what)
        name = _name(table, fname, what)
        if name in factor_names:
            raise StudyError(f"{fname}: {what}: '{name}' is also the name of a factor: "
                             "a component and a process factor need different names")
        if name in seen:
            raise StudyError(f"{fname}: the component name '{name}' is used twice: each "
                             "needs its own name")
        seen.add(name)
        if "low" not in table or "high" not in table:
            raise StudyError(f"{fname}: {what}: needs low = <amount> and high = <amount> "
                             f"(0 and {_fmt(total)} when it may take any share)")
        low = _number(table["low"], fname, f"{what} low")
        high = _number(table["high"], fname, f"{what} high")
        if low < 0:
            raise StudyError(f"{fname}: {what}: low ({_fmt(low)}) is below 0: an amount "
                             "cannot be negative")
        if low >= high:
            raise StudyError(f"{fname}: {what}: low ({_fmt(low)}) is not below high "
                             f"({_fmt(high)}): did you swap them?")
        raw.append((name, str(table.get("label", name)), str(table.get("unit", "")),
                    low, high, check_step(table, low, high, fname, what)))
    return build_components(raw, total, choices["model"][0], choices["process"][0], fname)


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
