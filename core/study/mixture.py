"""Mixture studies: components that add up to a whole, read and checked once.

A study with ``[[components]]`` tables and a ``[mixture]`` section describes a
blend: the components' amounts add up to ``total`` (100 %, 1, a batch mass) in
every run, so raising one lowers the others. Each component becomes a
``Component``, a numeric ``Factor`` whose coded value is its
L-pseudo-component proportion

    z_i = (x_i - L_i) / (total - sum L)

(``L_i`` the component's low after tightening), 0 at its low. With every low
at 0 this is simply the proportion of the total. The components come first
among the study's factors; ordinary ``[[factors]]`` are then process variables
(bake temperature, mixing time).

Checks made here (Cornell (2002), Experiments with Mixtures, 3rd ed., sec. 6.2
on implied bounds, "common practice" for the rest):

* the lows add up to no more than the total, the highs to no less;
* a bound that can never be reached is tightened to the one the others imply
  (a high above ``total - sum of the other lows``, a low below ``total - sum
  of the other highs``), and a note says so;
* every run adds up to the total within 0.5 % of it.
"""
from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from ..errors import DataError, StudyError, where
from .spec import Factor

__all__ = ["Component", "Mixture", "MIXTURE_MODELS", "PROCESS_MODES", "ROW_TOLERANCE",
           "build_components", "implied_bounds", "check_blend_rows", "components_of", "process_factors_of",
           "is_component"]

MIXTURE_MODELS = ("linear", "quadratic", "special_cubic", "cubic")
PROCESS_MODES = ("none", "linear", "full")
# A run's components must add up to the total within this share of it.
ROW_TOLERANCE = 0.005


@dataclass(frozen=True)
class Component(Factor):
    """One ingredient of the blend, in the study's amount units.

    ``low``/``high`` are the bounds after tightening; ``given_low`` and
    ``given_high`` as written in the study file. Coded units are
    L-pseudo-component proportions: ``centre`` is the low (coded 0) and
    ``half_range`` is ``total - sum of the lows`` (one coded unit), so the
    library's ordinary coding (coded = (x - centre) / half_range) gives them.
    """

    total: float = 1.0
    origin: float = 0.0
    scale: float = 1.0
    given_low: float | None = None
    given_high: float | None = None

    @property
    def centre(self) -> float:  # coded 0: the (tightened) low
        return self.origin

    @property
    def half_range(self) -> float:  # one coded unit: total minus every low
        return self.scale

    @property
    def is_component(self) -> bool:
        return True

    def proportion(self, amount):
        """Amount(s) -> proportion(s) of the total."""
        return np.asarray(amount, dtype=float) / self.total


@dataclass(frozen=True)
class Mixture:
    """The ``[mixture]`` section: total, Scheffe model and how process factors enter.

    ``notes`` records the bounds that were tightened (``tradeoff check`` prints them).
    """

    total: float
    model: str = "quadratic"
    process: str = "none"
    components: tuple[str, ...] = ()
    notes: tuple[str, ...] = ()
    # "proportion": coefficients are for proportions of the total (every low 0);
    # "pseudo": for L-pseudo-components (some low above 0)
    scale: str = "proportion"


def is_component(factor) -> bool:
    """True for a mixture component (a ``Component``), False for any other factor."""
    return isinstance(factor, Component)


def components_of(study) -> list:
    """The study's components, in study order (empty for an ordinary study)."""
    return [f for f in study.factors if isinstance(f, Component)]


def process_factors_of(study) -> list:
    """The study's factors that are not components (process variables)."""
    return [f for f in study.factors if not isinstance(f, Component)]


def build_components(raw: list, total: float, model: str, process: str, fname: str):
    """Checked components and their Mixture from the parsed ``[[components]]``.

    ``raw``: one (name, label, unit, low, high, step) per component, each already
    checked on its own (study/reader.py). Here the bounds are checked
    together and tightened to the ones the others imply.
    """
    names = [r[0] for r in raw]
    lows = np.array([r[3] for r in raw])
    highs = np.array([r[4] for r in raw])
    tol = 1e-9 * total
    if lows.sum() > total + tol:
        raise StudyError(f"{fname}: the components' lows add up to {_g(lows.sum())}, "
                         f"more than the total {_g(total)}: no blend can meet them: "
                         "lower some lows")
    if highs.sum() < total - tol:
        raise StudyError(f"{fname}: the components' highs add up to {_g(highs.sum())}, "
                         f"less than the total {_g(total)}: no blend can reach it: raise "
                         "some highs")
    new_lows, new_highs = implied_bounds(lows, highs, total)
    notes = []
    for name, lo, hi, lo2, hi2 in zip(names, lows, highs, new_lows, new_highs):
        if hi2 < hi - tol:
            notes.append(f"component '{name}': high {_g(hi)} can never be reached (the "
                         f"other components' lows leave {_g(hi2)}): tightened to {_g(hi2)}")
        if lo2 > lo + tol:
            notes.append(f"component '{name}': low {_g(lo)} can never be reached (the "
                         f"other components' highs need at least {_g(lo2)}): tightened "
                         f"to {_g(lo2)}")
    scale = total - float(new_lows.sum())
    if scale <= tol:
        raise StudyError(f"{fname}: the components' lows add up to the total "
                         f"{_g(total)}: only one blend is possible, nothing to study: "
                         "lower some lows")
    components = tuple(
        Component(name=name, label=label, unit=unit, low=float(lo2), high=float(hi2),
                  total=total, origin=float(lo2), scale=scale, given_low=float(lo),
                  given_high=float(hi), step=step)
        for (name, label, unit, lo, hi, step), lo2, hi2 in zip(raw, new_lows, new_highs))
    mixture = Mixture(total=total, model=model, process=process,
                      components=tuple(names), notes=tuple(notes),
                      scale="pseudo" if np.any(new_lows > tol) else "proportion")
    return components, mixture


def implied_bounds(lows, highs, total) -> tuple[np.ndarray, np.ndarray]:
    """The bounds the others imply: low_i >= total - sum of the other highs,
    high_i <= total - sum of the other lows (Cornell (2002), sec. 6.2)."""
    lows = np.asarray(lows, dtype=float)
    highs = np.asarray(highs, dtype=float)
    new_lows = np.maximum(lows, total - (highs.sum() - highs))
    new_highs = np.minimum(highs, total - (lows.sum() - lows))
    return new_lows, new_highs


def check_blend_rows(study, fname: str) -> None:
    """Every run's components add up to the total within ROW_TOLERANCE of it."""
    comps = components_of(study)
    if not comps or study.runs is None:
        return
    total = comps[0].total
    sums = study.runs[[c.name for c in comps]].to_numpy(float).sum(axis=1)
    bad = np.flatnonzero(np.abs(sums - total) > ROW_TOLERANCE * total)
    if len(bad):
        i = int(bad[0])
        row = int(study.runs.index[i])
        raise DataError(f"{where(fname, row)}the components "
                        f"({', '.join(c.name for c in comps)}) add up to {_g(sums[i])}, "
                        f"not the total {_g(total)} (allowed: within "
                        f"{ROW_TOLERANCE:.1%} of it): check the amounts in this row")


def _g(x: float) -> str:
    x = float(x)
    return f"{x:.6g}" if math.isfinite(x) else str(x)
