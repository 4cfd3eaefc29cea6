"""A recipe turned into a batch sheet: grams of each ingredient for a chosen batch
size, the process settings, and the run order of the confirmation batches.

Amounts are rounded to the scale's resolution by the largest-remainder method
(Hamilton's apportionment; common practice): every amount is first rounded
down to a whole number of scale steps, then the steps still missing go one each
to the amounts that lost the most in rounding, so the amounts add up exactly to
the batch and none is more than one step from its exact share.

The ingredient shares come from the study's components (share = amount over the
blend's total) or, for a study without components, from the factors the user
names as percent of the batch, the rest of the batch making up the balance.
"""
from __future__ import annotations

import itertools

import math
from dataclasses import dataclass
from decimal import Decimal

import numpy as np
import pandas as pd

from ..cautions import BLEND_CAUTION, FOOD_CAUTIONS
from ..errors import StudyError

__all__ = ["BatchSheet", "batch_sheet", "largest_remainder", "recipe_shares", "taken_run_ids",
           "INGREDIENT_COLUMNS", "PROCESS_COLUMNS", "ORDER_COLUMNS"]

INGREDIENT_COLUMNS = ["recipe", "ingredient", "label", "share_percent", "exact_g", "grams"]
PROCESS_COLUMNS = ["recipe", "factor", "label", "setting", "unit"]
ORDER_COLUMNS = ["run_order", "run", "recipe"]


def largest_remainder(shares, total: float, step: float) -> np.ndarray:
    """Split ``total`` in proportion to ``shares`` in whole multiples of ``step``.

    The parts add up exactly to ``total`` (which must be a whole number of
    steps) and each lies within one step of ``total * share / sum(shares)``.
    Ties in the remainders go to the earlier share.
    """
    shares = np.asarray(shares, dtype=float)
    if step <= 0 or not math.isfinite(step):
        raise StudyError(f"the scale's resolution must be a positive number of grams, "
                         f"not {step:g}")
    if total <= 0 or not math.isfinite(total):
        raise StudyError(f"the batch size must be a positive number of grams, not {total:g}")
    if (shares < 0).any() or not np.isfinite(shares).all() or shares.sum() <= 0:
        raise StudyError("the ingredient shares must be zero or more and not all zero")
    d_total, d_step = Decimal(repr(float(total))), Decimal(repr(float(step)))
    units, rest = divmod(d_total, d_step)
    if rest != 0:
        raise StudyError(f"a batch of {total:g} g cannot be weighed in steps of {step:g} g: "
                         f"choose a batch size that is a multiple of {step:g}")
    units = int(units)
    exact = shares / shares.sum() * units
    base = np.floor(exact + 1e-9).astype(int)
    missing = units - int(base.sum())
    order = np.argsort(-(exact - base), kind="stable")
    base[order[:missing]] += 1
    # multiply back through Decimal so 0.1-g steps do not leave binary dust
    return np.array([float(Decimal(int(b)) * d_step) for b in base])


def recipe_shares(study, settings: dict, *, percent_factors=(), rest: str = "rest of the recipe"
                  ) -> tuple[dict[str, float], list[str]]:
    """The recipe's ingredients as percent of the batch, and the process factors.

    A study with components: each component's share of the blend's total. Else
    each factor in ``percent_factors`` (its setting read as percent of the
    batch) and ``rest`` for what they leave.
    """
    from ..study.mixture import components_of

    comps = components_of(study) if study.mixture is not None else []
    if comps:
        total = float(study.mixture.total)
        shares = {c.name: 100.0 * float(settings[c.name]) / total for c in comps}
        used = {c.name for c in comps}
    else:
        names = {f.name for f in study.factors if not f.is_categorical}
        unknown = [p for p in percent_factors if p not in names]
        if unknown:
            raise StudyError(f"'{unknown[0]}' is not a numeric factor of the study, so it "
                             "cannot be an ingredient share")
        shares = {p: float(settings[p]) for p in percent_factors}
        left = 100.0 - sum(shares.values())
        if left < -1e-9:
            raise StudyError(f"the ingredient shares add up to {100 - left:g} %, more than "
                             "the whole batch: pick only factors that are percent of the batch")
        if shares:
            shares[rest] = max(left, 0.0)
        used = set(percent_factors)
    process = [f.name for f in study.factors if f.name not in used]
    return shares, process


@dataclass(frozen=True)
class BatchSheet:
    """A batch sheet: what to weigh, how to set the process, in which order to make it.

    Attributes
    ----------
    ingredients : pandas.DataFrame
        ``INGREDIENT_COLUMNS``: per recipe and ingredient, the share (percent of
        the batch), the exact grams and the grams to weigh (rounded to the
        scale, adding up exactly to the batch).
    process : pandas.DataFrame
        ``PROCESS_COLUMNS``: per recipe, each process factor's setting.
    order : pandas.DataFrame
        ``ORDER_COLUMNS``: the confirmation batches in the order to make them.
    batch_g, step_g : float
        The batch size and the scale's resolution, in grams.
    cautions : tuple of str
        The food cautions printed with the sheet.
    """

    ingredients: pd.DataFrame
    process: pd.DataFrame
    order: pd.DataFrame
    batch_g: float
    step_g: float
    cautions: tuple[str, ...]

    def sheets(self) -> dict[str, pd.DataFrame]:
        """The sheet's tables by name, for a workbook."""
        return {"ingredients": self.ingredients, "process": self.process,
                "run order": self.order}

    def table(self) -> pd.DataFrame:
        """One table for a CSV file: the ingredients, then the process settings, then
        the run order, each row marked with its ``part``."""
        parts = []
        for part, frame in (("ingredient", self.ingredients), ("process", self.process),
                            ("run order", self.order)):
            parts.append(frame.assign(part=part))
        table = pd.concat(parts, ignore_index=True)
        return table[["part"] + [c for c in table.columns if c != "part"]]

    def html(self, title: str) -> str:
        """A printable page: the three tables and the cautions."""
        from html import escape

        def rows(frame: pd.DataFrame) -> str:
            head = "".join(f"<th>{escape(str(c))}</th>" for c in frame.columns)
            body = "".join("<tr>" + "".join(f"<td>{escape(_cell(v))}</td>" for v in r)
                           + "</tr>" for r in frame.itertuples(index=False))
            return f"<table><thead><tr>{head}</tr></thead><tbody>{body}</tbody></table>"

        cautions = "".join(f"<li>{escape(c)}</li>" for c in self.cautions)
        return ("<!DOCTYPE html><html><head><meta charset='utf-8'>"
                f"<title>{escape(title)}</title><style>"
                "body{font-family:sans-serif;margin:2em;max-width:60em}"
                "table{border-collapse:collapse;margin:0 0 1.5em}"
                "td,th{border:1px solid #999;padding:.3em .6em;text-align:left}"
                "td:nth-child(n+4){text-align:right}"
                "@media print{body{margin:0}}</style></head><body>"
                f"<h1>{escape(title)}</h1>"
                f"<p>Batch size {self.batch_g:g} g, weighed to {self.step_g:g} g. "
                "Tick each amount as it is weighed.</p>"
                f"<h2>Ingredients</h2>{rows(self.ingredients)}"
                f"<h2>Process settings</h2>{rows(self.process)}"
                f"<h2>Run order of the confirmation batches</h2>{rows(self.order)}"
                f"<h2>Before you rely on it</h2><ul>{cautions}</ul></body></html>")


def _cell(v) -> str:
    if isinstance(v, float):
        return f"{v:.6g}"
    return "" if v is None else str(v)


def batch_sheet(study, recipes: dict[str, dict], *, batch_g: float, step_g: float = 1.0,
                batches: int = 1, seed: int | None = None, percent_factors=(),
                rest: str = "rest of the recipe", taken=()) -> BatchSheet:
    """Turn recipes (label -> factor settings in natural units) into a batch sheet.

    ``batches`` confirmation batches are made of each recipe, in an order
    shuffled with ``seed`` (the study's seed when None) so time trends do not
    line up with the recipes. They are named C1, C2, ... skipping the run ids in
    ``taken`` (those of the study's confirmation runs: ``taken_run_ids``), since
    each confirmation run needs its own id.
    """
    if not recipes:
        raise StudyError("pin or choose a recipe first: the batch sheet needs one")
    if int(batches) != batches or batches < 1:
        raise StudyError(f"the number of confirmation batches must be a whole number of 1 "
                         f"or more, not {batches}")
    ing, proc = [], []
    for label, settings in recipes.items():
        missing = [f.name for f in study.factors if f.name not in settings]
        if missing:
            raise StudyError(f"recipe '{label}' has no setting for factor '{missing[0]}'")
        shares, process = recipe_shares(study, settings, percent_factors=percent_factors,
                                        rest=rest)
        if shares:
            names = list(shares)
            values = np.array([shares[n] for n in names])
            grams = largest_remainder(values, batch_g, step_g)
            exact = values / values.sum() * batch_g
            labels = {f.name: f.label for f in study.factors}
            for n, s, e, g in zip(names, values, exact, grams):
                ing.append({"recipe": label, "ingredient": n, "label": labels.get(n, n),
                            "share_percent": float(s), "exact_g": float(e), "grams": float(g)})
        for f in study.factors:
            if f.name in process:
                proc.append({"recipe": label, "factor": f.name, "label": f.label,
                             "setting": settings[f.name], "unit": f.unit or ""})
    rng = np.random.default_rng(study.seed if seed is None else seed)
    runs = [(label, k) for k in range(1, int(batches) + 1) for label in recipes]
    perm = rng.permutation(len(runs))
    taken = {str(t) for t in taken}
    ids = (f"C{n}" for n in itertools.count(1) if f"C{n}" not in taken)
    order = pd.DataFrame([{"run_order": i + 1, "run": next(ids), "recipe": runs[j][0]}
                          for i, j in enumerate(perm)], columns=ORDER_COLUMNS)
    cautions = FOOD_CAUTIONS + ((BLEND_CAUTION,) if study.mixture is not None else ())
    return BatchSheet(ingredients=pd.DataFrame(ing, columns=INGREDIENT_COLUMNS),
                      process=pd.DataFrame(proc, columns=PROCESS_COLUMNS), order=order,
                      batch_g=float(batch_g), step_g=float(step_g), cautions=cautions)


def taken_run_ids(study) -> set[str]:
    """The run ids the study's confirmation runs already use (none when a table
    cannot be read: its own check names the problem)."""
    from ..errors import TradeoffError
    from ..study.confirmations import confirmation_runs

    try:
        listed = confirmation_runs(study, read_files=True)
    except TradeoffError:
        return set()
    return {str(r) for r in listed["run"].dropna()}
