"""The study: its factors, responses, goals and runs, as frozen objects.

A study file (TOML) names a data table and describes each factor and response.
``tradeoff.load_study`` reads both (study/reader.py, study/runs.py, then the
derived responses in derive/), checks everything a lab user could get wrong,
and returns a frozen ``Study``. Later steps (coding, models, search) trust it.
"""
from __future__ import annotations

from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
import pandas as pd

from ..errors import StudyError, did_you_mean

__all__ = [
    "GOALS", "GOAL_WORDS", "LIMIT_WORDS", "MODELS", "TRANSFORMS", "Goal", "Factor", "Response", "Study",
    "SECTION_KEYS", "MAX_STUDY_BYTES", "MAX_LEVELS", "NOTHING_TO_MODEL", "default_step",
    "with_unit",
]

GOALS = ("maximize", "minimize", "target", "range", "none")
# Each goal in a reader's words, and what its limits mean (the workbench's goal
# boxes and the report say it so): key -> its words for that goal.
GOAL_WORDS = {"maximize": "higher is better", "minimize": "lower is better",
              "target": "aim at a target", "range": "anywhere within limits",
              "none": "no goal"}
LIMIT_WORDS = {
    "maximize": {"lower": "Unacceptable below", "upper": "Fully met at or above"},
    "minimize": {"lower": "Fully met at or below", "upper": "Unacceptable above"},
    "target": {"lower": "Unacceptable below", "target": "Best at",
               "upper": "Unacceptable above"},
    "range": {"lower": "Unacceptable below", "upper": "Unacceptable above"},
}
# A study file is a page of text; anything this large is the wrong file.
MAX_STUDY_BYTES = 1024 * 1024
# "smooth" is a Gaussian process (core/model/smooth.py), the others polynomials.
MODELS = ("main", "interactions", "full", "quadratic", "smooth")
TRANSFORMS = ("none", "log", "sqrt")
# A categorical factor has 2 to this many levels (each level beyond two costs a
# model column, and so runs).
MAX_LEVELS = 12

# Why a study without factors (a product stored or tasted, nothing varied) has
# no models and no search: the fit, the search and the report all say it so.
NOTHING_TO_MODEL = ("nothing to model or search: the study has no factors (nothing is "
                    "varied between its products), so no response can depend on a "
                    "setting; 'tradeoff check' and 'tradeoff report' give each "
                    "product's derived values")

_GOAL_KEYS = {"goal", "lower", "upper", "target", "shape", "shape_below",
              "shape_above", "weight"}

# Every key the study file accepts, by section. A module that adds keys adds
# them here, so the "did you mean" check knows them.
SECTION_KEYS: dict[str, set[str]] = {
    "top": {"study", "factors", "responses", "constraints", "confirmations",
            "storage", "panel",
            # blends (core/study/mixture.py)
            "components", "mixture"},
    "study": {"name", "data", "model", "terms", "sheet", "description",
              "confidence", "seed",
              # the runs' block column when not named 'block' (core/models.py)
              "blocks",
              # the column naming the batch each run shares (study/whole_plots.py)
              "whole_plot"},
    "factors": {"name", "label", "unit", "low", "high", "levels", "search",
                "production_sd",
                # the smallest amount a lab weighs or sets (core/search/rounding.py)
                "step",
                # the level the search holds when the data cannot judge the factor
                # (core/search/informed.py)
                "hold",
                # set once per whole plot (study/whole_plots.py)
                "hard_to_change"} | _GOAL_KEYS,
    "responses": {"name", "label", "unit", "model", "terms", "transform"} | _GOAL_KEYS
    # terms pinned in or out of a response's model (core/models.py)
    | {"keep_terms", "drop_terms"}
    # several columns of one row holding pieces of one batch (study/pieces.py)
    | {"columns"}
    # derived responses (core/derived.py): computed from [storage] or [panel]
    | {"derive", "property", "attribute", "at", "from", "relative", "order", "limit",
       "direction", "min_points", "extrapolate",
       # storage at several temperatures (core/derive/shelf.py)
       "at_temperature", "estimate",
       # a panel response modelled on its scores (core/model/panel_scores.py)
       "fit_on",
       # a category attribute's cumulative-logit response (core/model/category_model.py)
       "assessor", "summary", "top", "bottom"},
    "constraints": {"rule", "label"},
    # confirmation runs (core/confirm.py): one run per table, or data = "file"
    "confirmations": {"run", "settings", "measured", "note", "data", "sheet"},
    # long-form tables for derived responses (core/storage.py, core/panel.py)
    "storage": {"data", "sheet", "time", "time_unit", "temperature"},
    "panel": {"data", "sheet", "scale", "min_agreement",
              # the lab's own layout (core/derive/panel_input.py)
              "columns", "layout", "attributes"},
    # blends (core/study/mixture.py)
    "components": {"name", "label", "unit", "low", "high", "step"},
    "mixture": {"total", "model", "process"},
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

    def keys(self, *, defaults: bool = True) -> dict:
        """The goal as a study file's keys (``{}`` for no goal); ``defaults=False``
        leaves out shapes and a weight of 1, as a user writes them."""
        if not self.active:
            return {}
        out = {"goal": self.kind, "lower": self.lower, "upper": self.upper}
        if self.kind == "target":
            out.update(target=self.target, shape_below=self.shape_below,
                       shape_above=self.shape_above)
        elif self.kind in ("maximize", "minimize"):
            out["shape"] = self.shape
        out["weight"] = self.weight
        return {k: v for k, v in out.items() if v is not None and (
            defaults or k in ("goal", "lower", "upper", "target") or v != 1.0)}


@dataclass(frozen=True)
class Factor:
    """A factor: numeric (``low``..``high``) or categorical (``levels``, 2 to 12).

    A two-level categorical factor is coded -1/+1; one with three or more
    levels is coded by its level's position 0, 1, ... and enters models as
    sum-to-zero columns (``tradeoff.model.terms``).
    """

    name: str
    label: str
    unit: str = ""
    low: float | None = None
    high: float | None = None
    levels: tuple[str, ...] | None = None
    search: tuple[float, float] | None = None
    goal: Goal = field(default_factory=Goal)
    # SD of the actual setting around the intended one in production (factor's units)
    production_sd: float | None = None
    # categorical: the level to hold when the runs cannot tell the levels apart
    hold: str | None = None
    # set once per whole plot (batch, oven load, day): study/whole_plots.py
    hard_to_change: bool = False
    # numeric: the smallest amount a lab weighs or sets (None: from the range, ``lab_step``)
    step: float | None = None

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

    @property
    def lab_step(self) -> float | None:
        """The step recommended settings are rounded to (numeric factors).

        ``step`` when the study file gives one; else the power of ten that cuts
        the range low..high into 20 to 200 steps (a 10 % range: 0.1 %; 40 to
        60 degC: 1 degC), fine enough that rounding moves a setting by at most
        a fortieth of its range, coarse enough to weigh or dial in.
        """
        if self.is_categorical:
            return None
        if self.step is not None:
            return self.step
        return default_step(self.high - self.low)

    def display(self) -> str:
        return with_unit(self.label, self.unit)


def with_unit(label: str, unit: str = "") -> str:
    """A label with its unit, in one pair of brackets.

    "Hardness" and "N" give "Hardness (N)"; a label that already ends in
    brackets takes the unit inside them ("Liking (9-point hedonic)" and
    "points" give "Liking (9-point hedonic, points)"), never two pairs.
    """
    if not unit:
        return label
    text = label.rstrip()
    if text.endswith(")") and "(" in text:
        return f"{text[:-1]}, {unit})"
    return f"{text} ({unit})"


def default_step(span: float) -> float:
    """The power of ten that cuts ``span`` into 20 to 200 steps."""
    import math

    return 10.0 ** math.floor(math.log10(span / 20.0)) if span > 0 else 1.0


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
        return with_unit(self.label, self.unit)

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
    # Pieces of a batch (study/pieces.py): one row per measured piece, columns
    # run, response, row, column, value; None when every run has one value.
    pieces: pd.DataFrame | None = field(default=None, compare=False, repr=False)
    # the [mixture] section (study/mixture.py) when the study has components
    mixture: object | None = None
    # the runs' column naming the whole plot (batch) each run shares, or None
    whole_plot: str | None = None
    # response name -> derive.reach.StorageReach, for each time derived from storage
    # (how far past the last storage time it may be stated)
    reach: dict = field(default_factory=dict, compare=False, repr=False)

    def whole_plot_labels(self) -> np.ndarray | None:
        """Each run's whole plot as text when the study names a whole-plot column."""
        if self.whole_plot is None or self.runs is None or \
                self.whole_plot not in self.runs.columns:
            return None
        return np.asarray([str(v) for v in self.runs[self.whole_plot]], dtype=object)

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
