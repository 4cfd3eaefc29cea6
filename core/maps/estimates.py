"""Each effect as an estimate with its margins: the table behind the effects figure.

An effect (the change from a factor's low to its high setting, or a level's
deviation from the average over levels) is drawn as a dot with two bars: the
margin when the term is looked at alone, and the wider margin when every term
of the model is looked at together (so that one of many noise terms does not
stand out by luck). A term whose bar stays clear of zero stands out from the
noise.

Where the margins come from:

- with residual degrees of freedom, from each effect's standard error and
  Student's t: alone ``t(1 - alpha/2, df) se``; together the Sidak quantile
  ``t((1 + level ** (1/m)) / 2, df) se`` over the m effects shown;
- without them (every run used by a term), from the smaller effects
  themselves, Lenth (1989): ``t(1 - alpha/2, m/3) PSE`` alone and
  ``t((1 + level ** (1/m)) / 2, m/3) PSE`` together (his ME and SME).

The wording is ours and written once here (``effects_note``), so the
workbench, the report and ``tradeoff fit`` say the same thing.
"""
from __future__ import annotations

import numpy as np
import pandas as pd

__all__ = ["ESTIMATE_COLUMNS", "VERDICTS", "effect_estimates", "effects_note",
           "margin_words", "term_df"]

ESTIMATE_COLUMNS = ["term", "effect", "alone_low", "alone_high", "together_low",
                    "together_high", "verdict", "basis"]
# what a term's bars say, strongest first
VERDICTS = ("stands out among all terms", "stands out alone", "could be noise",
            "no error estimate")


def effect_estimates(model, *, level: float | None = None,
                     leave_out=frozenset()) -> pd.DataFrame:
    """A fitted model's effects with their margins, largest size first.

    Parameters
    ----------
    model : ResponseModel
        A fitted model with terms (``effect_table`` lists its effects).
    level : float, optional
        Confidence of the margins (default the model's).
    leave_out : set of str
        Terms not to show (a blend component's own blending term, which is
        not an effect).

    Returns
    -------
    pandas.DataFrame
        Columns ``term``, ``effect``; ``alone_low``, ``alone_high`` (effect
        minus and plus the margin for the term alone); ``together_low``,
        ``together_high`` (the margin allowing for all terms together);
        ``verdict`` (one of ``VERDICTS``); ``basis`` (``"t"``, ``"lenth"`` or
        ``"none"``: where the margins come from). The margins are NaN without
        an error estimate.
    """
    from scipy import stats

    from .tables import effect_table

    level = model.confidence if level is None else float(level)
    table = effect_table(model)
    table = table[~table["term"].isin(set(leave_out))].reset_index(drop=True)
    m = len(table)
    effect = table["effect"].to_numpy(float)
    alone = together = np.full(m, np.nan)
    basis = "none"
    together_q = (1 + level ** (1.0 / m)) / 2 if m else np.nan
    se = table["std_error"].to_numpy(float)
    if m and model.residual_df_ > 0 and np.isfinite(se).any():
        df = float(model.residual_df_)
        if getattr(model, "whole_plot_name", None) is not None:
            # runs sharing batches: each term has its own (Satterthwaite) df, the
            # one its p-value was worked out on
            df = np.array([term_df(t, p, df) for t, p in zip(
                _t_of(model, table), table["p_value"].to_numpy(float))])
        alone = stats.t.ppf(0.5 + level / 2, df) * se
        together = stats.t.ppf(together_q, df) * se
        basis = "t"
    elif m and getattr(model, "lenth_", None) is not None and np.isfinite(model.lenth_.me):
        # Lenth's margins were worked out over all the model's effects; they are
        # kept as published even when a few terms are left out of the picture
        alone = np.full(m, model.lenth_.me)
        together = np.full(m, model.lenth_.sme)
        basis = "lenth"
    size = np.abs(effect)
    verdict = np.where(~np.isfinite(alone), VERDICTS[3],
                       np.where(size > together, VERDICTS[0],
                                np.where(size > alone, VERDICTS[1], VERDICTS[2])))
    return pd.DataFrame({"term": table["term"].to_numpy(object), "effect": effect,
                         "alone_low": effect - alone, "alone_high": effect + alone,
                         "together_low": effect - together,
                         "together_high": effect + together,
                         "verdict": verdict, "basis": basis})[ESTIMATE_COLUMNS]


def _t_of(model, table: pd.DataFrame) -> np.ndarray:
    """Each shown effect's t value (its coefficient's), NaN where none is known."""
    t_values = dict(zip(model.terms_, model.t_values_)) if model.t_values_ is not None \
        else {}
    return np.array([t_values.get(term, np.nan) for term in table["term"]], dtype=float)


def term_df(t: float, p: float, fallback: float) -> float:
    """The degrees of freedom on which a two-sided t test of ``t`` gives ``p``
    (p = 2 P(T > |t|)); ``fallback`` when they cannot be recovered."""
    from scipy import optimize, stats

    if not (np.isfinite(t) and np.isfinite(p)) or not 0 < p < 1 or t == 0:
        return fallback

    def gap(log_df):
        return 2 * stats.t.sf(abs(t), np.exp(log_df)) - p

    lo, hi = np.log(0.5), np.log(1e6)
    if gap(lo) * gap(hi) > 0:
        return fallback
    return float(np.exp(optimize.brentq(gap, lo, hi, xtol=1e-10)))


def margin_words(estimates: pd.DataFrame) -> str:
    """Where the margins come from, in a few words (empty without margins)."""
    if estimates.empty:
        return ""
    basis = estimates["basis"].iloc[0]
    if basis == "t":
        return "from the scatter of the runs around the model"
    if basis == "lenth":
        return ("from the smaller effects themselves, as no run is left over to "
                "measure the scatter (Lenth's 1989 method)")
    return ""


def effects_note(estimates: pd.DataFrame, level: float) -> str:
    """The sentence under the effects figure, the same on every page.

    Says what a dot and each bar mean, where the margins come from, and which
    terms stand out, by name.
    """
    if estimates.empty:
        return ("No effects to show: every term of this model is a square or a blend's "
                "own term, which have no low-to-high change of their own.")
    m = len(estimates)
    pct = f"{level:.0%}"
    words = margin_words(estimates)
    if not words:
        return ("Each dot is a term's effect: the change from the low to the high "
                "setting. There is no error estimate, so no margins are drawn: every "
                "effect could be noise.")
    out = [f"Each dot is a term's effect: the change from the low to the high setting. "
           f"The thick bar is its {pct} margin when the term is looked at alone; the "
           f"thin line reaches the wider margin that allows for looking at all {m} terms "
           f"together. Margins come {words}."]
    strong = list(estimates.loc[estimates["verdict"] == VERDICTS[0], "term"])
    alone = list(estimates.loc[estimates["verdict"] == VERDICTS[1], "term"])
    if strong:
        out.append(f"Clear of zero even counting all terms: {', '.join(strong)}.")
    if alone:
        out.append(f"Clear of zero only when looked at alone: {', '.join(alone)}.")
    if not strong and not alone:
        out.append("Every bar crosses zero: no term stands out from the noise.")
    return " ".join(out)
