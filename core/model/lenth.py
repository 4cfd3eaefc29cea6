"""Lenth's (1989) method for unreplicated two-level designs.

When a model uses every run (no residual degrees of freedom) there is no
error estimate from the residuals. Lenth's pseudo standard error (PSE) takes
one from the effects themselves, assuming most of them are noise:

    s0  = 1.5 * median |effect|
    PSE = 1.5 * median of the |effect| below 2.5 * s0
    ME  = t(0.975, d) * PSE,          d = m / 3 (m effects)
    SME = t(gamma, d) * PSE,          gamma = (1 + 0.95 ** (1/m)) / 2

R. V. Lenth (1989), "Quick and easy analysis of unreplicated factorials",
Technometrics 31(4), 469-473. Effects beyond ME are likely real one at a
time; beyond SME, allowing for looking at all m of them together.
"""
from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd
from scipy import stats

__all__ = ["LenthResult", "lenth", "half_normal_points"]


@dataclass(frozen=True)
class LenthResult:
    """Lenth's pseudo standard error, margins of error and degrees of freedom."""

    pse: float
    me: float
    sme: float
    df: float
    m: int

    def as_dict(self) -> dict:
        return {"pse": self.pse, "me": self.me, "sme": self.sme, "df": self.df,
                "effects": self.m}


def lenth(effects, *, level: float = 0.95) -> LenthResult:
    """Lenth's PSE, ME and SME of a set of effects (or any contrasts).

    Parameters
    ----------
    effects : the m estimated effects (intercept excluded).
    level : the confidence level of the margins (0.95 in Lenth's paper).
    """
    c = np.abs(np.asarray(effects, dtype=float))
    m = int(c.size)
    if m == 0:
        return LenthResult(np.nan, np.nan, np.nan, np.nan, 0)
    s0 = 1.5 * np.median(c)
    trimmed = c[c < 2.5 * s0]
    pse = 1.5 * float(np.median(trimmed)) if trimmed.size else 0.0
    d = m / 3.0
    alpha = 1.0 - level
    me = float(stats.t.ppf(1 - alpha / 2, d) * pse)
    gamma = (1 + level ** (1.0 / m)) / 2
    sme = float(stats.t.ppf(gamma, d) * pse)
    return LenthResult(float(pse), me, sme, d, m)


def half_normal_points(labels, effects) -> pd.DataFrame:
    """Half-normal plot coordinates of effects.

    Returns a table sorted by |effect| with columns term, effect, abs_effect,
    quantile: the half-normal quantile Phi^-1(0.5 + 0.5 (i - 0.5) / m) of
    the i-th smallest |effect| (common practice for half-normal plots).
    """
    effects = np.asarray(effects, dtype=float)
    order = np.argsort(np.abs(effects), kind="stable")
    m = effects.size
    i = np.arange(1, m + 1)
    q = stats.norm.ppf(0.5 + 0.5 * (i - 0.5) / m) if m else np.empty(0)
    return pd.DataFrame({"term": [labels[j] for j in order], "effect": effects[order],
                         "abs_effect": np.abs(effects[order]), "quantile": q})
