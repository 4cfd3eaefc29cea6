"""Judging a design before (or after) the runs: what a model can estimate,
which terms are aliased, variance inflation factors, and the power to detect
an effect of a given size.

Works from the model matrix of any set of coded runs, planned or loaded, so
it also covers designs that are not regular fractions (centre and axial runs,
lost runs). Term labels follow :mod:`tradeoff.terms`.
"""
from __future__ import annotations

from dataclasses import dataclass, field
from typing import Sequence

import numpy as np
import pandas as pd

from ..errors import PlanError

__all__ = ["DesignEvaluation", "evaluate_design", "evaluate_plan", "evaluate_study",
           "effect_power"]


@dataclass(frozen=True, eq=False)
class DesignEvaluation:
    """What a design supports for one model.

    ``table`` has one row per model term (intercept and block columns left
    out) with columns ``term``, ``estimable`` (bool), ``aliased_with`` (text),
    ``vif`` (float, NaN when not estimable), ``std_error`` (of the coded
    coefficient, in units of the run-to-run SD), ``power`` (NaN unless an effect
    size and SD were given, or when no degrees of freedom are left for error).
    """

    model: str
    runs: int
    parameters: int
    error_df: int
    table: pd.DataFrame
    effect: float | None = None
    sd: float | None = None
    alpha: float = 0.05
    notes: tuple[str, ...] = field(default=())

    @property
    def estimable(self) -> list[str]:
        return self.table.loc[self.table["estimable"], "term"].tolist()

    @property
    def aliased(self) -> dict[str, list[str]]:
        t = self.table[~self.table["estimable"]]
        return {row.term: [x for x in row.aliased_with.split(", ") if x]
                for row in t.itertuples()}

    def summary(self) -> dict:
        vif = {r.term: round(float(r.vif), 4) for r in self.table.itertuples()
               if r.estimable}
        out = {"model": self.model, "runs": self.runs, "parameters": self.parameters,
               "error_df": self.error_df, "estimable": self.estimable,
               "not_estimable": self.aliased, "vif": vif, "notes": list(self.notes)}
        if self.effect is not None:
            out["power"] = {"effect": self.effect, "sd": self.sd, "alpha": self.alpha,
                            "by_term": {r.term: (None if np.isnan(r.power)
                                                 else round(float(r.power), 4))
                                        for r in self.table.itertuples() if r.estimable}}
        return out


def effect_power(std_error: np.ndarray, error_df: int, *, effect: float, sd: float,
                 alpha: float = 0.05) -> np.ndarray:
    """Power of the two-sided t test of a coded coefficient.

    The effect is the change in the response from a term's -1 to its +1 setting,
    so the coefficient is ``effect / 2``. ``std_error`` is the coefficient's
    standard error in units of the run-to-run SD, sqrt of the diagonal of
    (X'X)^-1. Noncentral t with ``error_df`` degrees of freedom (scipy.stats.nct).
    """
    from scipy import stats

    std_error = np.asarray(std_error, dtype=float)
    if error_df < 1:
        return np.full(std_error.shape, np.nan)
    delta = (effect / 2.0) / (sd * std_error)
    tcrit = stats.t.ppf(1.0 - alpha / 2.0, error_df)
    return stats.nct.sf(tcrit, error_df, delta) + stats.nct.cdf(-tcrit, error_df, delta)


def evaluate_design(factors: Sequence, coded, model: str | Sequence[str] = "interactions",
                    *, block=None, effect: float | None = None, sd: float | None = None,
                    alpha: float = 0.05) -> DesignEvaluation:
    """Evaluate coded runs (n, k) for a model.

    Parameters
    ----------
    factors : the study's factors (for names).
    coded : (n, k) coded settings.
    model : a model name (main, interactions, full, quadratic) or term labels.
    block : optional (n,) block labels; block differences enter the model as
        extra columns before the terms, so a term confounded with blocks shows
        as aliased with them.
    effect, sd : effect size (response units, low-to-high change) and expected
        run-to-run standard deviation, for power; give both or neither.
    alpha : significance level of the tests (1 - the study's confidence).
    """
    from ..errors import ModelError
    from ..model.levels import factor_levels
    from ..model.dependence import find_aliases
    from ..model.terms import Term, model_matrix, model_terms

    names = [f.name for f in factors]
    X = np.asarray(coded, dtype=float)
    if X.ndim != 2 or X.shape[1] != len(names):
        raise PlanError(f"the runs need one coded column per factor ({len(names)}), "
                        f"found shape {X.shape}")
    if (effect is None) != (sd is None):
        raise PlanError("power needs both the effect size to detect and the run-to-run "
                        "standard deviation: give both (--effect and --sd)")
    if sd is not None and not 0 < sd < np.inf:
        raise PlanError(f"the run-to-run standard deviation must be above 0 and finite, "
                        f"found {sd}")
    if effect is not None and not 0 < effect < np.inf:
        raise PlanError(f"the effect size to detect must be above 0 and finite, found "
                        f"{effect}")
    n_settings = [len(np.unique(np.round(X[:, j], 6))) for j in range(X.shape[1])]
    try:
        terms, notes = model_terms(model if isinstance(model, str) else list(model),
                                   names, n_settings=n_settings,
                                   levels=factor_levels(factors))
    except ModelError as exc:
        raise PlanError(str(exc)) from None
    M = model_matrix(X, terms)
    extra: list = []
    cols = [M[:, :1]]
    if block is not None:
        block = np.asarray(block)
        levels = list(pd.unique(block))
        zero = tuple([0] * len(names))
        for b in levels[1:]:
            cols.append((block == b).astype(float)[:, None])
            extra.append(Term(f"block {b}", zero))
    full = np.hstack(cols + [M[:, 1:]])
    all_terms = [terms[0]] + extra + list(terms[1:])
    keep, aliases = find_aliases(full, all_terms)
    n = X.shape[0]
    Xk = full[:, keep]
    rank = int(keep.sum())
    error_df = n - rank
    XtX_inv = np.linalg.inv(Xk.T @ Xk)
    se_all = np.sqrt(np.diag(XtX_inv))
    # VIF: from the centred columns (intercept out), 1 for an orthogonal design.
    Xc = Xk[:, 1:] - Xk[:, 1:].mean(axis=0)
    ss = (Xc ** 2).sum(axis=0)
    with np.errstate(divide="ignore", invalid="ignore"):
        vif_all = np.diag(np.linalg.pinv(Xc.T @ Xc)) * ss
    kept_idx = np.flatnonzero(keep)
    position = {j: i for i, j in enumerate(kept_idx)}
    rows = []
    start = 1 + len(extra)
    for j in range(start, len(all_terms)):
        t = all_terms[j]
        if keep[j]:
            i = position[j]
            rows.append((t.label, True, "", float(vif_all[i - 1]), float(se_all[i])))
        else:
            rows.append((t.label, False, ", ".join(aliases.get(t.label, [])), np.nan,
                         np.nan))
    table = pd.DataFrame(rows, columns=["term", "estimable", "aliased_with", "vif",
                                        "std_error"])
    power = np.full(len(table), np.nan)
    if effect is not None:
        est = table["estimable"].to_numpy()
        power[est] = effect_power(table.loc[est, "std_error"].to_numpy(), error_df,
                                  effect=effect, sd=sd, alpha=alpha)
        if error_df < 1:
            notes = list(notes) + ["no runs are left over to estimate the run-to-run "
                                   "variation, so no test (and no power) is possible: "
                                   "add centre points or replicates"]
    table["power"] = power
    dropped = (~table["estimable"]).sum()
    if dropped:
        notes = list(notes) + [f"{dropped} term(s) of the model cannot be estimated "
                               "from these runs (aliased with earlier terms)"]
    from ..model.terms import model_label

    label = model_label(model)
    return DesignEvaluation(model=label, runs=n, parameters=rank, error_df=error_df,
                            table=table, effect=effect, sd=sd, alpha=alpha,
                            notes=tuple(notes))


def evaluate_plan(plan, model: str | Sequence[str] = "interactions", *,
                  effect: float | None = None, sd: float | None = None,
                  alpha: float = 0.05) -> DesignEvaluation:
    """Evaluate a :class:`~tradeoff.designs.Plan` (blocks included when it has several)."""
    block = plan.runs["block"].to_numpy()
    return evaluate_design(plan.factors, plan.coded.to_numpy(float), model,
                           block=block if len(np.unique(block)) > 1 else None,
                           effect=effect, sd=sd, alpha=alpha)


def evaluate_study(study, model: str | Sequence[str] | None = None, *,
                   effect: float | None = None, sd: float | None = None) -> DesignEvaluation:
    """Evaluate a loaded study's runs (its blocks are used when it has two or more).

    ``model`` defaults to the study's model; the significance level is
    1 - the study's confidence.
    """
    if study.runs is None:
        raise PlanError(f"study '{study.name}' has no runs loaded: load it with its data")
    if model is None:
        model = study.terms if study.terms is not None else study.model
    if model == "smooth":  # a smooth model has no terms: judge the runs for main effects and pairs
        model = "interactions"
    block = study.block_labels()  # the block column or [study] blocks, as the models use
    return evaluate_design(study.factors, study.coded().to_numpy(float), model,
                           block=block, effect=effect, sd=sd, alpha=1 - study.confidence)
